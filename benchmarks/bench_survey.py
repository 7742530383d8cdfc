"""Benchmark: `gnssrel survey` on a full day, GPS+Galileo, 30 s (issue 15: under 30 s of CPU).

Run: ``python benchmarks/bench_survey.py``.  Surveys ESBC 2020-06-25 (../shared/refdata/2020-177,
or $GNSSREL_REFDATA) with the GRG final orbits (two days) and 30-s clocks through the command
line's own entry point, in this process, with the jackknife of k over satellites, and reports the
CPU time (every thread and finished children, imports included) and the wall time.
Exit status 1 when the target is missed, 2 when the reference data is absent.
"""

from __future__ import annotations

import json
import resource
import sys
import tempfile
import time
from pathlib import Path

from _common import REFDATA

DAY = REFDATA / "2020-177"
OBS = DAY / "ESBC00DNK_R_20201770000_01D_30S_MO.crx.gz"
NAV = DAY / "ESBC00DNK_R_20201770000_01D_MN.rnx.gz"
PRECISE = [DAY / "GRG0MGXFIN_20201760000_01D_15M_ORB.SP3.gz", DAY / "GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz",
           DAY / "GRG0MGXFIN_20201770000_01D_30S_CLK.CLK.gz"]
TARGET_CPU_S = 30.0


def _cpu_s() -> float:
    children = resource.getrusage(resource.RUSAGE_CHILDREN)
    return time.process_time() + children.ru_utime + children.ru_stime


def main() -> int:
    if not all(p.exists() for p in (OBS, NAV, *PRECISE)):
        print(f"reference data not found under {DAY} (set GNSSREL_REFDATA): skipped")
        return 2
    cpu0, wall0 = _cpu_s(), time.perf_counter()
    from gnssrel import cli

    with tempfile.TemporaryDirectory() as tmp:
        summary_path = Path(tmp) / "summary.json"
        rc = cli.main(["survey", str(OBS), str(NAV), "--precise", *map(str, PRECISE), "--systems", "GE", "-q",
                       "--summary", str(summary_path)])
        summary = json.loads(summary_path.read_text()) if rc == 0 else {}
    cpu, wall = _cpu_s() - cpu0, time.perf_counter() - wall0
    if rc != 0:
        print(f"gnssrel survey exited with {rc}")
        return 1
    p = summary["position"]
    print(f"survey ESBC 2020-177 GPS+Galileo, {p['n_epochs']} epochs, {p['n_observations']} observations: "
          f"CPU {cpu:.1f} s (target < {TARGET_CPU_S:g} s), wall {wall:.1f} s")
    return 0 if cpu < TARGET_CPU_S else 1


if __name__ == "__main__":
    sys.exit(main())
