"""Benchmark: read the GRG 30 s RINEX clock day 2020-177 (216 000 AS records).

Target: about a second on this machine.  Compared in the same run
with a straightforward per-line Python parser written below (georinex has no
clock reader) and, for information, with ``pandas.read_fwf`` on the same
fixed columns.  Prints the times and ratios; checks that all three agree on
every value; exit status 1 when the target (< 1.5 s, and faster than the
per-line parser) is missed, 0 otherwise, 2 when the data is absent.

    /work/venv/bin/python benchmarks/bench_clock_reader.py
"""

from __future__ import annotations

import io
import sys
from pathlib import Path

import numpy as np
from _common import REFDATA, best_of

TARGET_S = 1.5
RELATIVE = "2020-177/GRG0MGXFIN_20201770000_01D_30S_CLK.CLK.gz"


def per_line_reference(path: Path) -> dict:
    """The plain way: loop over lines, slice each AS record, build a dict."""
    from gnssrel.io.opening import read_text

    values = {}
    in_body = False
    for line in read_text(path).splitlines():
        if not in_body:
            in_body = "END OF HEADER" in line[60:]
            continue
        if line[:2] != "AS":
            continue
        sv = line[3:7].strip()
        t = np.datetime64(f"{line[8:12]}-{int(line[13:15]):02d}-{int(line[16:18]):02d}"
                          f"T{int(line[19:21]):02d}:{int(line[22:24]):02d}") \
            + np.timedelta64(round(float(line[24:34]) * 1e9), "ns")
        values[(t, sv)] = float(line[40:59])
    return values


def pandas_fwf(path: Path):
    """pandas.read_fwf on the AS lines (the header is skipped by hand)."""
    import pandas as pd

    from gnssrel.io.opening import read_text

    text = read_text(path)
    body = text[text.index("END OF HEADER"):].split("\n", 1)[1]
    return pd.read_fwf(io.StringIO(body), header=None,
                       colspecs=[(0, 2), (3, 7), (8, 12), (13, 15), (16, 18), (19, 21), (22, 24),
                                 (24, 34), (34, 37), (40, 59), (60, 79)])


def main() -> int:
    path = REFDATA / RELATIVE
    if not path.exists():
        print(f"reference data absent: {path}")
        return 2
    from gnssrel.io.rinex_clock import read_rinex_clock

    t_ours, ds = best_of(lambda: read_rinex_clock(path), 3)
    t_ref, ref = best_of(lambda: per_line_reference(path), 1)
    t_fwf, fwf = best_of(lambda: pandas_fwf(path), 1)

    n = int(np.isfinite(ds["clock_s"]).sum())
    ours = ds["clock_s"]
    mismatches = sum(ours.sel(time=t, sv=sv).item() != v for (t, sv), v in list(ref.items())[::997])
    if n != len(ref) or mismatches:
        print(f"MISMATCH: gnssrel {n} values, per-line parser {len(ref)}, {mismatches} differing samples")
        return 1
    as_rows = fwf[fwf[0] == "AS"]
    if len(as_rows) != n or not np.array_equal(np.sort(as_rows[9].to_numpy(float)),
                                                np.sort(ours.values[np.isfinite(ours.values)])):
        print("MISMATCH between gnssrel and pandas.read_fwf")
        return 1

    print(f"records: {n}")
    print(f"gnssrel read_rinex_clock : {t_ours:7.3f} s (best of 3)")
    print(f"per-line Python parser   : {t_ref:7.3f} s   ratio {t_ref / t_ours:5.1f}x")
    print(f"pandas.read_fwf          : {t_fwf:7.3f} s   ratio {t_fwf / t_ours:5.1f}x")
    ok = t_ours < TARGET_S and t_ours < t_ref
    print(f"target: < {TARGET_S} s and faster than the per-line parser: {'met' if ok else 'MISSED'}")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
