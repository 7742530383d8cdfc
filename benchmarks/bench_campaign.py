"""Benchmark: ``gnssrel campaign`` on 1 worker against 2 workers, in the same run (issue 11, scale).

Run: ``python benchmarks/bench_campaign.py [--hours H] [--nya1]``.  Writes the invented campaign of
``gnssrel simulate --stations 3 --days 2 --hours H`` (6 station-days and 2 network days; default
H = 24: full station-days, a task takes several seconds) to a temporary folder, runs the command on it with
``--workers 1`` and then ``--workers 2`` (each in its own output folder, no HTML report, each a fresh
process: the local cluster's start-up and the workers' imports are counted), and prints

* the wall time of each run and their ratio, target <= 0.55;
* one station-day alone in a fresh process (imports done first, then the task timed): its wall and CPU
  time, and the peak resident memory of that process (``ru_maxrss``: what a worker holds for one task);
* with ``--nya1``: the same for the real NYA1 2024-05-03 full day, every system, with its GPS, Galileo
  and BeiDou navigation files (../shared/refdata, or $GNSSREL_REFDATA), and from it the time of
  1 000 such station-days on one 2-core machine and on 20 of them.

Exit status 1 when the ratio misses its target.
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from _common import REFDATA

TARGET_RATIO = 0.55
STATIONS, DAYS, DEFAULT_HOURS = 3, 2, 24.0
NYA1 = REFDATA / "2024-124"
ONE_TASK = r"""
import json, resource, sys, time
from dataclasses import asdict
from gnssrel.campaign.plan import plan_campaign
from gnssrel.campaign.task import content_hash, run_station_day
import gnssrel.pipeline.stages, gnssrel.io.rinex_obs, gnssrel.io.writers   # imports first, not timed
tasks, _ = plan_campaign(sys.argv[2:])
spec, options = asdict(tasks[0]), {"systems": None, "rule": "post", "step_s": None, "elevation_mask_deg": 10.0}
digest = content_hash(spec, options)
wall, cpu = time.perf_counter(), time.process_time()
summary = run_station_day(spec, options, sys.argv[1], digest)
wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
obs = summary.get("accounting", {}).get("observations", {})
print(json.dumps({"task": f"{spec['station']} {spec['date']}", "status": summary["status"],
                  "reason": summary.get("reason"), "wall_s": wall, "cpu_s": cpu,
                  "epochs": summary.get("observations", {}).get("n_epochs"),
                  "observations": sum(c.get("read", 0) for c in obs.values()),
                  "peak_rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}))
"""


def _campaign(manifest: Path, out: Path, workers: int) -> tuple[float, dict]:
    """(wall time of the whole command, its summary) for one run in a fresh process."""
    start = time.perf_counter()
    rc = subprocess.run([sys.executable, "-m", "gnssrel", "campaign", str(manifest), "--output", str(out),
                         "--workers", str(workers), "--no-report", "-q", "--summary", str(out) + ".json"],
                        check=False).returncode
    wall = time.perf_counter() - start
    if rc != 0:
        raise SystemExit(f"gnssrel campaign --workers {workers} exited with {rc}")
    return wall, json.loads(Path(str(out) + ".json").read_text())


def _one_task(inputs, folder: Path) -> dict:
    done = subprocess.run([sys.executable, "-c", ONE_TASK, str(folder), *map(str, inputs)], check=True,
                          capture_output=True, text=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def _print_task(label: str, task: dict) -> None:
    print(f"  one station-day alone ({label}: {task['task']}, {task['epochs']} epochs, {task['observations']} "
          f"observations read): wall {task['wall_s']:.2f} s, CPU {task['cpu_s']:.2f} s, "
          f"peak memory of the process {task['peak_rss_mb']:.0f} MB"
          + ("" if task["status"] == "ok" else f"  [task {task['status']}: {task['reason']}]"))


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    hours = float(argv[argv.index("--hours") + 1]) if "--hours" in argv else DEFAULT_HOURS
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        subprocess.run([sys.executable, "-m", "gnssrel", "simulate", "--output", str(tmp / "sim"), "--stations",
                        str(STATIONS), "--days", str(DAYS), "--hours", f"{hours:g}", "-q"], check=True)
        manifest = tmp / "sim" / "campaign.csv"
        one, s1 = _campaign(manifest, tmp / "w1", 1)
        two, s2 = _campaign(manifest, tmp / "w2", 2)
        n = s1["n_tasks"]
        print(f"invented campaign: {STATIONS} stations x {DAYS} days = {n} station-days (+{len(s1['network'])} "
              f"network days), {hours:g}-h logs at 30 s, every system; {s1['n_ok']}/{s2['n_ok']} ok")
        ratio = two / one
        print(f"  --workers 1: {one:6.2f} s wall (tasks {s1['wall_time_s']:.2f} s)   "
              f"--workers 2: {two:6.2f} s wall (tasks {s2['wall_time_s']:.2f} s)")
        print(f"  ratio 2 workers / 1 worker: {ratio:.3f} (tasks only {s2['wall_time_s'] / s1['wall_time_s']:.3f})"
              f"   target <= {TARGET_RATIO}")
        print(f"  per station-day on 1 worker, start-up included: {one / n:.2f} s")
        _print_task("invented", _one_task([manifest], tmp / "one"))
        if "--nya1" in argv:
            files = [NYA1 / "NYA100NOR_S_20241240000_01D_30S_MO.crx.gz",
                     *(NYA1 / f"NYA100NOR_S_20241240000_01D_{k}N.rnx.gz" for k in "GEC")]
            if all(p.exists() for p in files):
                task = _one_task(files, tmp / "nya1")
                _print_task("real, every system", task)
                per_machine = 1000 * task["wall_s"] / 2 / 3600
                print(f"  1 000 such station-days: {per_machine:.1f} h on one 2-core machine (2 workers), "
                      f"{per_machine / 20 * 60:.0f} min on 20 such machines (40 workers), at {task['wall_s']:.1f} s "
                      f"a task and {task['peak_rss_mb'] / 1024:.2f} GB a worker")
            else:
                print(f"  NYA1 2024-124 not found under {NYA1} (set GNSSREL_REFDATA): skipped")
    if ratio > TARGET_RATIO:
        print("  target missed: ratio")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
