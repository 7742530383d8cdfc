"""Run every benchmark in turn and print their figures: `python benchmarks/run.py [--quick] [--suite]`.

Each benchmark times gnssrel against a reference in the same run (the reference
reader georinex, or a plain Python implementation) and prints the ratio, since
these machines are too noisy for absolute times (the RINEX 4 navigation benchmark, which
georinex cannot read, also prints its CPU and wall seconds against the issue's "well under a
second"); the audit benchmark reports CPU seconds against the absolute targets its issue set; the campaign benchmark times
`gnssrel campaign` on 2 workers against 1 (about 3 min).  Exit status: the number of
benchmarks that missed their target (or failed).  --quick skips the slow
georinex reference of the observation benchmark; --suite adds the whole test
suite's wall and CPU time (minutes).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
BENCHMARKS = ("bench_navigation.py", "bench_rinex4_navigation.py", "bench_states.py", "bench_relativity.py",
              "bench_clock_reader.py", "bench_observations.py", "bench_audit.py", "bench_survey.py", "bench_campaign.py")
OPTIONAL = {"--suite": "bench_suite.py"}


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    failed = 0
    for name in BENCHMARKS + tuple(name for flag, name in OPTIONAL.items() if flag in argv):
        extra = ["--quick"] if "--quick" in argv and name == "bench_observations.py" else []
        print(f"=== {name}", flush=True)
        rc = subprocess.run([sys.executable, str(HERE / name), *extra], check=False).returncode
        if rc != 0:
            print(f"--- {name} exited with {rc}")
            failed += 1
    return failed


if __name__ == "__main__":
    sys.exit(main())
