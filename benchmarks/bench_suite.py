"""Benchmark: the whole test suite's wall and CPU time, and its slowest tests.

Run: ``python benchmarks/bench_suite.py [pytest arguments]`` (or ``python benchmarks/run.py --suite``).
Runs ``python -m pytest -q --durations=15`` in a subprocess from the project root and
prints the wall time, the CPU time of pytest and its children, the pass/skip counts and
the slowest tests.  Target: the whole suite under 150 s of wall time on a 2-core CI runner,
nothing skipped (with the reference data present).  Wall time depends on how busy the
machine is; the CPU time and the slowest-tests list tell a slow test from a busy machine.
Exit status 1 when the suite fails, skips a test, or misses the target.
"""

from __future__ import annotations

import re
import resource
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TARGET_WALL_S = 150.0
SLOWEST_SHOWN = 15


def main(argv=None) -> int:
    extra = sys.argv[1:] if argv is None else argv
    command = [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider",
               f"--durations={SLOWEST_SHOWN}", *extra]
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    done = subprocess.run(command, cwd=ROOT, capture_output=True, text=True, check=False)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    lines = done.stdout.splitlines()
    counts = {word: int(n) for n, word in re.findall(r"(\d+) (passed|failed|skipped|errors?)", lines[-1] if lines else "")}
    slowest = [line for line in lines if re.match(r"\s*\d+\.\d+s (call|setup|teardown) ", line)]
    print(f"test suite: {counts or lines[-1:] } in {wall:.1f} s wall, {cpu:.1f} s CPU "
          f"(target: < {TARGET_WALL_S:g} s wall on 2 cores, nothing skipped)")
    for line in slowest:
        print(f"  {line.strip()}")
    print(f"  sum of the {len(slowest)} slowest: {sum(float(line.split('s ')[0]) for line in slowest):.1f} s")
    ok = done.returncode == 0 and not counts.get("skipped") and wall <= TARGET_WALL_S
    if done.returncode != 0:
        print("\n".join(lines[-30:]))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
