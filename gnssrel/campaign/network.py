"""Once per day for the whole network: the relativity terms of every satellite and, with precise
products, the broadcast-vs-precise clock comparison (the stages of ``gnssrel relativity`` and
``gnssrel clocks``), on all the navigation files of that day merged.

:func:`run_network_day` is a Dask task like :func:`gnssrel.campaign.task.run_station_day`: it
writes ``relativity.parquet``, ``clocks.parquet`` (with precise clocks) and ``summary.json``
(last, with the content hash) into ``DIR/network/<date>/`` and returns the summary.
"""

from __future__ import annotations

from pathlib import Path

from gnssrel.campaign.task import guarded

__all__ = ["TERM_VARIABLES", "network_days", "run_network_day"]

TERM_VARIABLES = ("periodic_icd_s", "periodic_state_s", "j2_periodic_s", "rate_total")
"""The relativity terms kept in the day's table (s, and s/s for the rate)."""
DEFAULT_STEP_S = 30.0


def network_days(tasks) -> list[dict]:
    """One spec per date with a navigation file: every navigation and precise file of the day's tasks."""
    days: dict[str, dict] = {}
    for t in tasks:
        if t.date == "unknown" or not t.nav:
            continue
        day = days.setdefault(t.date, {"kind": "network-day", "station": "network", "date": t.date, "nav": [], "precise": [],
                                       "obs": None, "missing": []})
        day["nav"] = sorted(set(day["nav"]) | set(t.nav))
        day["precise"] = sorted(set(day["precise"]) | set(t.precise))
    return [days[d] for d in sorted(days)]


def run_network_day(spec: dict, options: dict, task_dir: str, digest: str) -> dict:
    """The network's relativity terms (and clock comparison) of one day; see the module docstring."""
    return guarded(_network_day, spec, options, task_dir, digest)


def _network_day(spec: dict, options: dict, task_dir: Path) -> dict:
    # deferred: the stages pull xarray and scipy; a worker imports them once, on its first task
    from gnssrel.io import writers
    from gnssrel.orbits.broadcast import broadcast_states
    from gnssrel.pipeline.analysis import default_window
    from gnssrel.pipeline.grid import epoch_grid
    from gnssrel.pipeline.inputs import check_files, read_navigation_files, read_precise
    from gnssrel.pipeline.stages import compare_clocks, relativity_summary, relativity_terms

    check_files([*spec["nav"], *spec["precise"]])
    nav, present = read_navigation_files(spec["nav"], options.get("systems"))
    letters = list(present)
    precise = read_precise(spec["precise"], letters) if spec["precise"] else None
    start, end = default_window(nav, letters, sp3=precise and precise["orbits"],
                                precise_clocks=precise and precise["clocks"])
    times = epoch_grid(start, end, options.get("step_s") or DEFAULT_STEP_S)
    terms = relativity_terms(broadcast_states(nav, times, systems=letters, rule=options["rule"]))
    task_dir.mkdir(parents=True, exist_ok=True)
    writers.write_table(terms[[v for v in TERM_VARIABLES if v in terms]].to_dataframe().reset_index()
                        .dropna(subset=["periodic_icd_s"]), task_dir / "relativity.parquet")
    summary = {"systems": present, "start": times[0], "end": times[-1], "time_scale": "GPST",
               "navigation": [Path(p).name for p in spec["nav"]], "relativity": relativity_summary(terms)}
    if precise is not None:
        compared = compare_clocks(nav, precise["clocks"][["clock_s"]], letters, start, end, rule=options["rule"])
        writers.write_table(compared.table, task_dir / "clocks.parquet")
        summary["clocks"] = compared.summary
    return summary
