"""One station-day of a campaign: the audit of one log by the library's stages, written to its folder.

:func:`run_station_day` runs on a Dask worker (or anywhere): it reads the files of one
:class:`~gnssrel.campaign.plan.StationDay`, calls :func:`gnssrel.pipeline.stages.audit_log`
(the same stage ``gnssrel audit`` calls), writes the corrections and positions as Parquet
and the summary as JSON into ``DIR/tasks/<station>_<date>/``, each file atomically and the
summary last (it carries the content hash: a rerun trusts a task folder only through it),
and returns the task's row of the campaign summary.  A bad input costs its task only: the
error's one line becomes the task's ``reason``.  With the ``survey`` option the same task also
runs the survey stage (:func:`survey_station_day`, the function of ``gnssrel survey``).
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

from gnssrel import __version__
from gnssrel.errors import GnssrelInputError

__all__ = ["BLAS_VARIABLES", "SUMMARY_NAME", "SURVEY_NAME", "TABLE_NAMES", "content_hash", "guarded",
           "read_task_summary", "run_station_day", "survey_station_day"]

BLAS_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
"""One BLAS thread per worker process: the matrices are small and a worker already has a core."""
SUMMARY_NAME = "summary.json"
TABLE_NAMES = ("corrections.parquet", "positions.parquet")
SURVEY_NAME = "survey.json"
"""The whole summary of the survey stage (``campaign --survey``), beside the audit's."""
SURVEY_NEEDS = "no precise orbits (SP3) and RINEX clock file for this station-day: the survey needs both"
HASH_CHUNK = 1 << 20


def content_hash(spec: dict, options: dict) -> str:
    """SHA-256 over every input file's bytes, the options and gnssrel's version."""
    h = hashlib.sha256()
    h.update(json.dumps({"options": options, "version": __version__}, sort_keys=True).encode())
    for key in ("obs", "nav", "precise", "fixes", "clocks"):
        value = spec.get(key)
        for p in (value if isinstance(value, list) else [value] if value else []):
            h.update(f"\n{key}:{Path(p).name}\n".encode())
            try:
                with open(p, "rb") as f:
                    while chunk := f.read(HASH_CHUNK):
                        h.update(chunk)
            except OSError as exc:
                h.update(f"unreadable: {exc.strerror}".encode())
    return h.hexdigest()


def read_task_summary(task_dir, tables=TABLE_NAMES) -> dict | None:
    """The finished summary of a task folder, or None (absent, unreadable or a table missing)."""
    path = Path(task_dir) / SUMMARY_NAME
    try:
        summary = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if summary.get("status") == "ok" and not all((Path(task_dir) / n).is_file() for n in tables):
        return None
    return summary


def _limit_blas_threads() -> None:
    for variable in BLAS_VARIABLES:
        os.environ.setdefault(variable, "1")
    try:
        from threadpoolctl import threadpool_limits  # deferred: optional, absent on a minimal install
    except ImportError:
        return
    threadpool_limits(1)


def run_station_day(spec: dict, options: dict, task_dir: str, digest: str) -> dict:
    """Audit one station-day; write its tables and summary under ``task_dir``; return its summary.

    ``spec``: a StationDay as a dict (station, date, obs, nav, precise, fixes, clocks, missing);
    ``options``: ``systems`` (letters or None), ``rule``, ``step_s`` (None keeps every epoch),
    ``elevation_mask_deg``, ``survey`` (True: also :func:`survey_station_day`); ``digest``: :func:`content_hash` of both, recorded with the result.
    """
    return guarded(_audit, spec, options, task_dir, digest)


def guarded(work, spec: dict, options: dict, task_dir: str, digest: str) -> dict:
    """Run ``work(spec, options, Path(task_dir)) -> summary`` as one task: its failure becomes the
    summary's one-line ``reason``; the summary (with ``status`` and the content hash) is written last."""
    _limit_blas_threads()
    base = {"kind": spec.get("kind", "station-day"), "station": spec["station"], "date": spec["date"],
            "obs": spec.get("obs"), "content_hash": digest}
    for stale in Path(task_dir).glob(".*.part"):     # left by a run killed mid-write: never read, removed
        stale.unlink(missing_ok=True)
    try:
        summary = work(spec, options, Path(task_dir))
        summary.update(base, status="ok", reason=None)
    except GnssrelInputError as exc:
        summary = {**base, "status": "failed", "reason": str(exc)}
    except Exception as exc:  # noqa: BLE001 -- anything else costs this task only, named in one line
        summary = {**base, "status": "failed", "reason": f"internal error: {type(exc).__name__}: {exc}"}
    from gnssrel.io import writers  # deferred: pulls numpy into the worker only when writing

    Path(task_dir).mkdir(parents=True, exist_ok=True)
    writers.write_json(summary, Path(task_dir) / SUMMARY_NAME)
    return json.loads(writers.to_json_text(summary))


def _audit(spec: dict, options: dict, task_dir: Path) -> dict:
    # deferred: the stages pull xarray and scipy; a worker imports them once, on its first task
    from gnssrel.io import writers
    from gnssrel.io.receiver_clocks import read_receiver_clocks
    from gnssrel.io.receiver_fixes import read_receiver_fixes
    from gnssrel.io.rinex_obs import read_observations
    from gnssrel.pipeline.grid import decimate_to_step
    from gnssrel.pipeline.inputs import (
        check_files,
        check_log_against_navigation,
        read_navigation_files,
        read_precise,
        receiver_rows_in_window,
    )
    from gnssrel.pipeline.stages import audit_log

    if spec.get("missing"):
        raise GnssrelInputError("missing " + "; ".join(spec["missing"]), spec["obs"])
    files = [spec["obs"], *spec["nav"], *spec.get("precise", [])] + [spec[k] for k in ("fixes", "clocks") if spec.get(k)]
    check_files(files)
    letters = options.get("systems")
    precise = read_precise(spec["precise"], list(letters) if letters else None) if spec.get("precise") else None
    nav, present = read_navigation_files(spec["nav"], letters)
    systems = list(present)
    obs = decimate_to_step(read_observations(spec["obs"], systems=systems), options.get("step_s"))
    if obs.sizes.get("time", 0) == 0:
        raise GnssrelInputError("no epoch in the log", spec["obs"])
    check_log_against_navigation(obs, nav, present, spec["obs"])
    fixes = read_receiver_fixes(spec["fixes"]) if spec.get("fixes") else None
    clocks = None
    if spec.get("clocks"):
        t = obs["time"].values
        clocks = receiver_rows_in_window(read_receiver_clocks(spec["clocks"]), spec["clocks"], t.min(), t.max(),
                                         systems, nav=nav, present=present)
    audited = audit_log(obs, nav, systems=systems, precise=precise, fixes=fixes, receiver_clocks=clocks,
                        elevation_mask_deg=options.get("elevation_mask_deg", 10.0), rule=options["rule"])
    summary = audited.summary
    position = summary["position"]
    determined = any(f.get("k") is not None and not str(f.get("status", "")).startswith("undetermined")
                     for f in summary["relativity_k"].values())
    if position.get("median_error_3d_m") is None and not determined:
        raise GnssrelInputError("no epoch could be solved for a position and no k determined", spec["obs"])
    times = obs["time"].values
    summary["observations"].update(start=times[0], end=times[-1], time_scale="GPST")
    task_dir.mkdir(parents=True, exist_ok=True)
    writers.write_table(audited.corrections, task_dir / TABLE_NAMES[0])
    writers.write_table(audited.position_errors(), task_dir / TABLE_NAMES[1])
    if options.get("survey"):
        summary["survey"] = survey_station_day(spec, options, task_dir, nav, precise)
    return summary


def survey_station_day(spec: dict, options: dict, task_dir: Path, nav, precise) -> dict:
    """The survey stage of one station-day (``campaign --survey``): :func:`gnssrel.survey.static.survey`,
    the function ``gnssrel survey`` calls, on the same files; its whole summary goes to
    ``task_dir/SURVEY_NAME``.  Returns the short record of the task summary: ``status`` "ok" with the
    marker position (ECEF and minus the header, m), its sigmas and the term effects (mm), or "refused"
    with the one-line ``reason`` (no precise SP3 + RINEX clock, no dual-frequency phase, arcs too short):
    a refusal costs the survey only, the audit of the station-day stays ok."""
    # deferred: as _audit (xarray, scipy), and only with --survey
    from gnssrel.accounting import Ledger
    from gnssrel.io import writers
    from gnssrel.io.rinex_obs import read_observations
    from gnssrel.pipeline.grid import decimate_to_step
    from gnssrel.survey.static import survey

    if not precise or not precise.get("clock_files"):
        return {"status": "refused", "reason": SURVEY_NEEDS}
    letters = "".join(s for s in (options.get("systems") or "GE") if s in "GE")
    if not letters:
        return {"status": "refused", "reason": "the survey uses GPS and Galileo only, neither is selected"}
    try:     # read again with the loss-of-lock flags (arcs); the audit's reading stays as without --survey
        obs = decimate_to_step(read_observations(spec["obs"], systems=list(letters), with_flags=True),
                               options.get("step_s"))
        result = survey(obs, nav, precise, systems=letters, ledger=Ledger.from_dict(obs.attrs.get("accounting")),
                        elevation_mask_deg=options.get("elevation_mask_deg", 10.0))
    except GnssrelInputError as exc:
        return {"status": "refused", "reason": str(exc)}
    except Exception as exc:  # noqa: BLE001 -- costs the survey of this station-day only, named in one line
        return {"status": "failed", "reason": f"internal error: {type(exc).__name__}: {exc}"}
    full = result["summary"]
    Path(task_dir).mkdir(parents=True, exist_ok=True)
    writers.write_json(full, Path(task_dir) / SURVEY_NAME)
    position = full["position"]
    return {"status": "ok", "reason": None,
            **{k: position[k] for k in ("x_m", "y_m", "z_m", "east_m", "north_m", "up_m")},
            "realistic_sigma_m": position.get("realistic_sigma_m"), "formal_sigma_m": position.get("formal_sigma_m"),
            "term_effects_mm": full.get("term_effects_mm"),
            "relativity_k_phase": {s: {"k": v.get("k"), "sigma": v.get("sigma")}
                                   for s, v in (full.get("relativity_k_phase") or {}).items()}}
