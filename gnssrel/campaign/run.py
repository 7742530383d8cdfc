"""Run a campaign's station-days on dask.distributed, resume an earlier run, gather the results.

The engine is Dask's: a :class:`distributed.LocalCluster` of worker processes (one thread
each, BLAS pinned to one thread) started and stopped here, or an existing scheduler's
address.  Each task is :func:`gnssrel.campaign.task.run_station_day`; its summary is written
by the worker, so a task finished is never lost when the run is interrupted, and a rerun
skips every task whose summary says ``ok`` with the same content hash.
"""

from __future__ import annotations

import logging
import os
import re
import sys
import time
from contextlib import contextmanager
from dataclasses import asdict
from pathlib import Path

from gnssrel import progress
from gnssrel.campaign.network import network_days, run_network_day
from gnssrel.campaign.task import BLAS_VARIABLES, content_hash, read_task_summary, run_station_day

__all__ = ["campaign_summary", "campaign_table", "execute", "prepare", "survey_repeatability"]

log = logging.getLogger(__name__)
TASKS_FOLDER = "tasks"
NETWORK_FOLDER = "network"
TABLE_NAME = "campaign"


def _task_dir(out_dir: Path, task) -> Path:
    return out_dir / TASKS_FOLDER / re.sub(r"[^A-Za-z0-9_.-]", "_", task.name)


def prepare(tasks, options: dict, out_dir: Path, resume: bool = True, network: bool = True):
    """(to_run, kept): ``to_run`` a list of (function, spec, task_dir, digest), the station-days and
    (``network``) one network task per day; ``kept`` the summaries of tasks finished earlier with the
    same content hash (only when ``resume``)."""
    work = [(run_station_day, asdict(t), _task_dir(out_dir, t), ("corrections.parquet", "positions.parquet"))
            for t in tasks]
    if network:
        work += [(run_network_day, spec, out_dir / NETWORK_FOLDER / spec["date"], ("relativity.parquet",))
                 for spec in network_days(tasks)]
    to_run, kept = [], []
    for function, spec, folder, tables in work:
        digest = content_hash(spec, options)
        earlier = read_task_summary(folder, tables) if resume else None
        if earlier and earlier.get("status") == "ok" and earlier.get("content_hash") == digest:
            kept.append(earlier)
        else:
            to_run.append((function, spec, folder, digest))
    return to_run, kept


class _SingleBlasThread:
    """A Dask worker plugin: one BLAS thread in every worker, also on a cluster started elsewhere."""

    name = "gnssrel-single-blas-thread"

    def setup(self, worker=None):
        for variable in BLAS_VARIABLES:
            os.environ[variable] = "1"
        try:
            from threadpoolctl import threadpool_limits  # deferred: optional
        except ImportError:
            return
        threadpool_limits(1)

    def teardown(self, worker=None):
        pass


@contextmanager
def _client(workers: int | None, scheduler: str | None, say):
    # deferred: dask and distributed are heavy; only a campaign run needs them
    from distributed import Client, LocalCluster

    quiet = logging.getLogger("distributed")
    if not log.isEnabledFor(logging.INFO):        # the scheduler of a local cluster logs in this process
        quiet.setLevel(logging.ERROR)
    if scheduler:
        client = Client(scheduler, timeout="30s")
        cluster = None
    else:
        n = workers or os.cpu_count() or 1
        try:
            import bokeh  # noqa: F401  # deferred: the dashboard needs it, nothing else does
            dashboard = ":0"
        except ImportError:
            dashboard = None
        cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, dashboard_address=dashboard,
                               silence_logs=logging.ERROR, env={v: "1" for v in BLAS_VARIABLES})
        client = Client(cluster)
    try:
        try:
            client.register_plugin(_plugin())
        except AttributeError:       # distributed before 2023.9
            client.register_worker_plugin(_plugin())
        link = client.dashboard_link if (cluster is None or cluster.dashboard_link) else None
        where = f"scheduler {scheduler}" if scheduler else f"local cluster of {len(client.scheduler_info()['workers'])} worker process(es)"
        say(f"running on {where}" + (f"; Dask dashboard: {link}" if link else ""))
        yield client
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def _plugin():
    from distributed import WorkerPlugin  # deferred: as _client

    class SingleBlasThread(_SingleBlasThread, WorkerPlugin):
        pass

    return SingleBlasThread()


def execute(to_run, options: dict, workers=None, scheduler=None, say=print) -> list[dict]:
    """Run the tasks on Dask; their summaries in completion order (a lost worker fails its task only)."""
    if not to_run:
        return []
    from distributed import as_completed  # deferred: as _client

    results = []
    with _client(workers, scheduler, say) as client:
        futures = {}
        for function, spec, folder, digest in to_run:
            f = client.submit(function, spec, options, str(folder), digest, pure=False,
                              key=f"gnssrel-{folder.name}-{digest[:12]}-{time.time_ns()}", retries=0)
            futures[f] = spec
        bar = _Bar(len(futures))
        for future in as_completed(futures):
            spec = futures[future]
            try:
                summary = future.result()
            except Exception as exc:  # noqa: BLE001 -- the worker died or the task could not be shipped: this task only
                summary = {"kind": spec.get("kind", "station-day"), "station": spec["station"],
                           "date": spec["date"], "obs": spec.get("obs"),
                           "status": "failed", "reason": f"task lost: {type(exc).__name__}: {exc}"}
            results.append(summary)
            bar.update(summary["status"] == "ok", sum(not f.done() for f in futures))
        bar.close()
    return results


class _Bar:
    """``tasks [=====    ] 3/8 done, 1 failed, 2 running`` on a terminal (stderr); nothing otherwise."""

    def __init__(self, total: int):
        self.total, self.ok, self.failed = total, 0, 0
        self.active = progress.active()

    def update(self, ok: bool, running: int):
        self.ok += ok
        self.failed += not ok
        if self.active:
            done = self.ok + self.failed
            filled = int(progress.BAR_WIDTH * done / max(self.total, 1))
            sys.stderr.write(f"\rtasks [{'=' * filled}{' ' * (progress.BAR_WIDTH - filled)}] {done}/{self.total} "
                             f"done, {self.failed} failed, {running} running ")
            sys.stderr.flush()

    def close(self):
        if self.active:
            sys.stderr.write("\n")
            sys.stderr.flush()


def _slug(text: str) -> str:
    return re.sub(r"[^a-z0-9]+", "_", text.lower()).strip("_")


def campaign_row(summary: dict) -> dict:
    """One row of the campaign table from a task summary."""
    row = {"station": summary["station"], "day": summary["date"], "status": summary["status"],
           "reason": summary.get("reason")}
    obs = summary.get("observations") or {}
    row["epochs"] = obs.get("n_epochs")
    counts = (summary.get("accounting") or {}).get("observations", {})
    used = [cell.get("used", 0) for cell in counts.values()]
    row["observations_read"] = sum(cell.get("read", 0) for cell in counts.values()) if counts else None
    row["observations_used"] = sum(used) if counts else None
    for cell in counts.values():
        for reason, n in cell.items():
            if reason not in ("read", "used"):
                key = f"dropped_{_slug(reason)}"
                row[key] = row.get(key, 0) + n
    for letter, fit in (summary.get("relativity_k") or {}).items():
        row[f"k_{letter}"] = fit.get("k")
        row[f"sigma_k_{letter}"] = fit.get("sigma")
        row[f"verdict_k_{letter}"] = fit.get("status")
    position = summary.get("position") or {}
    row["median_error_3d_m"] = position.get("median_error_3d_m")
    row["median_error_3d_m_without_periodic"] = position.get("median_error_3d_m_without_periodic")
    fixes = summary.get("receiver_fixes") or {}
    row["receiver_fixes_follow"] = fixes.get("closest")
    verdict = summary.get("receiver_verdict")
    row["receiver_verdict"] = verdict if verdict is None or isinstance(verdict, str) else str(verdict)
    survey = summary.get("survey")
    if survey is not None:               # campaign --survey only: the default table keeps its columns
        row["survey_status"], row["survey_reason"] = survey.get("status"), survey.get("reason")
        for c in ("east", "north", "up"):
            row[f"survey_{c}_m"] = survey.get(f"{c}_m")
    return row


def survey_repeatability(summaries) -> dict:
    """Per station, over its station-days with a survey: ``n_days`` and the standard deviation (ddof 1)
    of the daily east/north/up, mm, about the station's mean position (in the local frame at that mean;
    None with fewer than two days)."""
    import numpy as np  # deferred: as pandas in campaign_table

    from gnssrel.geodesy import ecef_to_enu, ecef_to_geodetic

    by_station: dict = {}
    for s in summaries:
        survey = s.get("survey") or {}
        if s.get("kind") != "network-day" and survey.get("status") == "ok":
            by_station.setdefault(s["station"], []).append([survey["x_m"], survey["y_m"], survey["z_m"]])
    out = {}
    for station, xyz in sorted(by_station.items()):
        xyz = np.asarray(xyz, float)
        mean = xyz.mean(axis=0)
        lat, lon, _ = ecef_to_geodetic(mean)
        enu = ecef_to_enu(xyz - mean, lat, lon) * 1000.0
        std = enu.std(axis=0, ddof=1) if len(xyz) > 1 else np.full(3, np.nan)
        out[station] = {"n_days": len(xyz), **{f"{c}_mm": (round(float(v), 2) if np.isfinite(v) else None)
                                               for c, v in zip(("east", "north", "up"), std)}}
    return out


def campaign_table(summaries):
    """The campaign table: one row per station-day, sorted by station and day."""
    import pandas as pd  # deferred: the plan and --help do not need pandas

    rows = [campaign_row(s) for s in summaries if s.get("kind") != "network-day"]
    table = pd.DataFrame(rows)
    if table.empty:
        return table
    from gnssrel.constants import SYSTEM_ORDER  # deferred: as pandas (the order of the k columns)

    per_system = [c for s in SYSTEM_ORDER for c in (f"k_{s}", f"sigma_k_{s}", f"verdict_k_{s}") if c in table]
    dropped = sorted(c for c in table if c.startswith("dropped_"))
    first = [c for c in table if c not in per_system and c not in dropped][:7]
    table = table[first + dropped + per_system + [c for c in table if c not in first + dropped + per_system]]
    return table.sort_values(["station", "day"], kind="stable").reset_index(drop=True)


def campaign_summary(summaries, n_skipped: int, extra: dict | None = None) -> dict:
    """The campaign summary (the keys the README documents), tasks sorted by station and date."""
    tasks, network = [], []
    for s in sorted(summaries, key=lambda s: (s["station"], s["date"])):
        if s.get("kind") == "network-day":
            clocks = (s.get("clocks") or {}).get("by_system", {})
            network.append({"date": s["date"], "status": s["status"], "reason": s.get("reason"),
                            "skipped": bool(s.get("_skipped")),
                            "clock_k": {letter: {"k": c.get("convention_k"), "sigma": c.get("convention_k_sigma"),
                                                 "convention": c.get("convention")} for letter, c in clocks.items()}})
            continue
        position = s.get("position") or {}
        tasks.append({
            "station": s["station"], "date": s["date"], "status": s["status"], "reason": s.get("reason"),
            "relativity_k": {letter: {"k": f.get("k"), "sigma": f.get("sigma"), "status": f.get("status")}
                             for letter, f in (s.get("relativity_k") or {}).items()},
            "position": {"median_error_3d_m": position.get("median_error_3d_m"),
                         "median_error_3d_m_without_periodic": position.get("median_error_3d_m_without_periodic")},
            "receiver_fixes_follow": (s.get("receiver_fixes") or {}).get("closest"),
            "receiver_verdict": campaign_row(s)["receiver_verdict"],
            "skipped": bool(s.get("_skipped")),
            "content_hash": s.get("content_hash"),
        })
        if s.get("survey") is not None:          # campaign --survey only
            tasks[-1]["survey"] = {k: v for k, v in s["survey"].items() if k != "term_effects_mm"}
    n_ok = sum(t["status"] == "ok" for t in tasks)
    out = {"n_tasks": len(tasks), "n_ok": n_ok, "n_failed": len(tasks) - n_ok, "n_skipped": n_skipped,
           "tasks": tasks, "network": network}
    if any("survey" in t for t in tasks):
        out["survey_repeatability"] = survey_repeatability(summaries)
    return {**out, **(extra or {})}
