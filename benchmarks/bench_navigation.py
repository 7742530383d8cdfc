"""Benchmark: read the mixed-nav day 2020-177 MOJN with gnssrel and with georinex.

Target: gnssrel at least 20x faster than ``georinex.load`` of the
same file in the same run.  Prints both times and the ratio; exit status 1
when the target is missed, 0 otherwise (2 when the data is absent).

    /work/venv/bin/python benchmarks/bench_navigation.py
"""

from __future__ import annotations

import logging
import sys
import time
import warnings

from _common import REFDATA

TARGET_RATIO = 20.0
RELATIVE = "2020-177/MOJN00DNK_R_20201770000_01D_MN.rnx.gz"


def main() -> int:
    path = REFDATA / RELATIVE
    if not path.exists():
        print(f"reference file {RELATIVE} not found under {REFDATA}")
        return 2
    import georinex

    from gnssrel.io.rinex_nav import read_navigation

    read_navigation(path)  # warm-up: imports, file cache
    repeats = 5
    t0 = time.perf_counter()
    for _ in range(repeats):
        nav = read_navigation(path)
    ours_s = (time.perf_counter() - t0) / repeats

    logging.disable(logging.CRITICAL)  # georinex logs every Galileo/BeiDou record it drops
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t0 = time.perf_counter()
        georinex.load(path)
        theirs_s = time.perf_counter() - t0
    ratio = theirs_s / ours_s
    records = sum(len(t) for t in nav.ephemerides.values())
    print(f"file: {RELATIVE} ({records} records tabulated, skipped {nav.header['skipped']})")
    print(f"gnssrel read_navigation: {ours_s:.3f} s (mean of {repeats})")
    print(f"georinex.load:           {theirs_s:.3f} s")
    print(f"ratio: {ratio:.1f}x (target >= {TARGET_RATIO:.0f}x): {'met' if ratio >= TARGET_RATIO else 'MISSED'}")
    return 0 if ratio >= TARGET_RATIO else 1


if __name__ == "__main__":
    sys.exit(main())
