"""The whole analysis of a set of files, as the report shows it: :func:`analyse`.

Reads the files, runs every stage the inputs allow (broadcast orbits, relativity
terms, broadcast vs precise orbits and clocks, the audit of each receiver log with
its fixes and clock table), counts every record read in one ledger, and returns a
:class:`~gnssrel.pipeline.results.ReportContent`.  ``gnssrel report`` and
``gnssrel demo`` call it and hand the result to :func:`gnssrel.report.builder.write_report`.
"""

from __future__ import annotations

import logging
from pathlib import Path

import numpy as np

from gnssrel.audit.positioning import position_errors_3d_m
from gnssrel.audit.summary import HEADER_POSITION_NOTE
from gnssrel.clocks.firmware import check_receiver_clocks
from gnssrel.clocks.receiver_series import check_receiver_clock_series
from gnssrel.errors import FileFormatError, GnssrelInputError
from gnssrel.io.receiver_clock_series import read_receiver_clock_series
from gnssrel.io.receiver_clocks import read_receiver_clocks
from gnssrel.io.receiver_fixes import read_receiver_fixes
from gnssrel.io.rinex_obs import read_observations
from gnssrel.io.sp3 import read_sp3
from gnssrel.orbits.broadcast import broadcast_states
from gnssrel.orbits.compare import compare_with_precise, per_epoch_differences
from gnssrel.orbits.precise import precise_states
from gnssrel.orbits.selection import DEFAULT_RULE
from gnssrel.orbits.sisre import sisre_by_system
from gnssrel.pipeline import accounting
from gnssrel.pipeline.grid import decimate_to_step
from gnssrel.pipeline.inputs import (
    check_files,
    check_log_against_navigation,
    read_navigation_files,
    read_precise_clocks,
    receiver_rows_in_window,
    split_precise,
)
from gnssrel.pipeline.results import ReceiverFindings, ReportContent
from gnssrel.pipeline.stages import audit_log, compare_clocks, relativity_summary, relativity_terms
from gnssrel.pipeline.titles import report_title
from gnssrel.pipeline.verdicts import receiver_verdict
from gnssrel.pipeline.window import aligned_grid, analysis_window, drop_excluded

__all__ = ["DEFAULT_STEP_S", "analyse", "combined_summary", "default_window"]

log = logging.getLogger(__name__)
DEFAULT_STEP_S = 30.0
"""Epoch interval of the relativity terms when neither a step nor an observation log gives one, s."""


def default_window(nav, systems, obs_list=(), sp3=None, precise_clocks=None):
    """The GPST window (start, end) of an analysis when none is given, datetime64[ns], inclusive.

    The one rule of every command (:func:`gnssrel.pipeline.window.analysis_window`): the logs'
    span when there are logs; else the period the navigation file names declare (else the
    GPST day holding most records), cut to every precise product's span.  ``systems`` does
    not change it.
    """
    window = analysis_window(nav, systems, obs_list, (sp3, precise_clocks))
    return window.start, window.end


def _time_grid(start, end, obs_list, step_s):
    """GPST epochs for the relativity terms, on the grid of ``step_s`` (else the logs' interval,
    else 30 s) counted from 00:00 GPST, inside [start, end]."""
    if step_s is None:
        step_s = min((float(o.attrs.get("interval") or DEFAULT_STEP_S) for o in obs_list),
                     default=DEFAULT_STEP_S)
    if end <= start:
        end = start + np.timedelta64(2, "h")
    return aligned_grid(start, end, step_s)


def _receiver_name(obs_ds, path) -> str:
    name = str(obs_ds.attrs.get("marker_name") or "").strip()
    return (name or Path(path).name[:4]).replace(" ", "_")


def analyse(nav_paths, precise_paths=(), obs_paths=(), fixes_paths=(), clocks_paths=(), title=None,
            description=None, progress=print, clock_fallback: bool = False, systems: str | None = None,
            start=None, end=None, step_s: float | None = None, rule: str = DEFAULT_RULE,
            clock_series_paths=(), code_options: dict | None = None) -> ReportContent:
    """Run every stage the inputs allow on files; returns a :class:`ReportContent`.

    ``nav_paths``: RINEX navigation files; ``precise_paths``: SP3 and/or RINEX clock files
    (told apart by content); ``obs_paths``: observation logs, with per log (same order) its
    receiver's fixes (``fixes_paths``) and satellite-clock table (``clocks_paths``).
    ``systems`` (letters, None = all), ``start``/``end`` (GPST datetime64, None = the default
    window of :func:`default_window`) and ``step_s`` (None = the logs' interval, else 30 s;
    when given, observation and precise-clock epochs are also decimated to it) apply to
    every stage: orbits, relativity, clocks and the audit.  ``rule``: the broadcast
    record-selection rule of every stage (gnssrel.orbits.selection).  ``progress``: called
    with a line of text per step.  ``clock_fallback``: compare the SP3 clocks when the RINEX
    clock file cannot be read.  ``code_options``: ``{"frequencies": "auto" | "single" | "dual",
    "smooth_code_s": window or None}``, the codes of every log's audit (issue 13).  The result's ``summary`` is summary.json (with "accounting").
    """
    nav_paths, precise_paths, obs_paths = ([str(p) for p in group] for group in (nav_paths, precise_paths, obs_paths))
    fixes_paths, clocks_paths = [str(p) for p in fixes_paths], [str(p) for p in clocks_paths]
    series_paths = [str(p) for p in clock_series_paths]
    for flag, given in (("--receiver-fixes", fixes_paths), ("--receiver-clocks", clocks_paths),
                        ("--receiver-clock-bias", series_paths)):
        if given and len(given) != len(obs_paths):
            raise GnssrelInputError(f"{flag}: give one file per --obs log ({len(obs_paths)}), "
                                    f"in the same order; got {len(given)}")
    if start is not None and end is not None and end < start:
        raise GnssrelInputError(f"--end ({end}) is before --start ({start})")
    check_files(nav_paths + precise_paths + obs_paths + fixes_paths + clocks_paths + series_paths)
    notes: list[str] = []
    progress(f"reading {len(nav_paths)} navigation file(s)")
    nav, present = read_navigation_files(nav_paths, systems)
    letters = list(present)
    sp3_paths, clk_paths = split_precise(precise_paths)
    sp3 = None
    if sp3_paths:
        progress(f"reading {len(sp3_paths)} SP3 file(s)")
        sp3 = accounting.unique_keys(read_sp3(sp3_paths, systems=letters), "sp3_records", "position_ecef_m")
    clk, clk_source = _read_clock_files(clk_paths, letters, sp3 is not None and clock_fallback, notes, progress)
    obs_list = []
    for p in obs_paths:
        progress(f"reading observations {Path(p).name}")
        obs_list.append(decimate_to_step(_read_log(p, letters, start, end, code_options), step_s))
        check_log_against_navigation(obs_list[-1], nav, present, p)
    default_start, default_end = default_window(nav, letters, obs_list, sp3, clk)
    start = default_start if start is None else start
    end = default_end if end is None else end
    times = _time_grid(start, end, obs_list, step_s)
    progress(f"broadcast orbits and relativity terms ({present}): {times.size} epochs "
             f"{str(times[0])[:16]} to {str(times[-1])[:16]} GPST")
    states = broadcast_states(nav, times, systems=letters, rule=rule)
    rel = relativity_terms(states)
    content = ReportContent(title=title or "gnssrel report", relativity=rel, relativity_summary=relativity_summary(rel),
                            description=description, notes=notes,
                            inputs={"navigation": nav_paths, "sp3": sp3_paths, "clock": clk_paths,
                                    "observations": obs_paths, "fixes": fixes_paths,
                                    "satellite_clocks": clocks_paths, "receiver_clock_series": series_paths})
    ledger = accounting.navigation_ledger(nav)
    rows = [accounting.used_rows([states])]
    if sp3 is not None:
        ledger.merge(accounting.precise_ledger(sp3, "sp3_records", "position_ecef_m"))
        sp3 = drop_excluded(sp3, ledger)          # E14/E18 as in the broadcast path (pipeline.window)
        accounting.retire_beyond_reach(ledger, sp3, "sp3_records", "position_ecef_m", times[0], times[-1],
                                       accounting.sp3_reach_s(sp3), letters)
        rows.append(accounting.used_rows([_orbits(content, nav, sp3, times, letters, progress, rule)]))
    if clk is not None:
        ledger.merge(accounting.precise_ledger(clk, "clock_records", "clock_s"))
        clk = drop_excluded(clk, ledger, "clock_records", "clock_s")
    if clk is None and sp3 is not None:
        clk, clk_source = sp3, f"SP3 clocks {', '.join(Path(p).name for p in sp3_paths)}"
    if clk is not None:
        progress(f"broadcast vs precise clocks ({clk_source})")
        compared = compare_clocks(nav, clk[["clock_s"]], letters, times[0], times[-1], step_s, clk_source, rule=rule)
        content.clock_table, content.clock_summary = compared.table, compared.summary
        content.clock_source = clk_source
        rows.append(accounting.used_rows([compared.states]))
        if "position_ecef_m" not in clk:      # clock files (the SP3's clocks are counted with its records)
            accounting.retire_outside_window(ledger, clk, "clock_records", "clock_s",
                                             compared.states["time"].values, letters)
        if content.orbit_summary and content.orbit_differences is not None:   # issue 14: SISRE, orbits/sisre.py
            content.orbit_summary["sisre"] = sisre_by_system(content.orbit_differences, compared.table)
    for i, (path, obs_ds) in enumerate(zip(obs_paths, obs_list)):
        r = ReceiverFindings(name=_receiver_name(obs_ds, path), observations_path=str(path),
                             fixes_path=fixes_paths[i] if fixes_paths else None,
                             clocks_path=clocks_paths[i] if clocks_paths else None)
        audited = _audit(r, obs_ds, nav, letters, (times[0], times[-1]), progress, rule, code_options)
        if "reference_note" in (r.audit_summary.get("position") or {}):
            notes.append(f"{r.name}: {HEADER_POSITION_NOTE}")
        if series_paths:
            _compare_clock_series(r, series_paths[i], audited, progress)
        content.receivers.append(r)
        ledger.merge(audited.ledger)
        rows.append(r.audit.extra.get("ephemeris_rows", {}))
    accounting.retire_navigation(ledger, nav, accounting.union_rows(*rows), letters, times[0], times[-1])
    for r in content.receivers:
        r.verdict = receiver_verdict(r.name, r.audit_summary, r.clock_check)
    content.accounting = ledger.as_dict()
    if not title:                                       # from the files: 'NYA1 2024-05-03 (day 124)'
        content.title = report_title(content)
    content.summary = combined_summary(content)
    content.summary["systems"] = present
    return content


def _orbits(content, nav, sp3, times, systems, progress, rule=DEFAULT_RULE):
    """Broadcast against precise orbits at the SP3 epochs inside ``times``; the broadcast states used."""
    t = sp3["time"].values
    inside = t[(t >= times[0]) & (t <= times[-1])]
    if inside.size == 0:
        content.notes.append("the SP3 epochs do not overlap the analysed span: no orbit comparison")
        return None
    progress(f"broadcast vs precise orbits at {inside.size} SP3 epochs")
    states = broadcast_states(nav, inside, systems=systems, rule=rule)
    precise = precise_states(sp3, inside)
    content.orbit_table, content.orbit_summary = compare_with_precise(states, precise)
    content.orbit_differences = per_epoch_differences(states, precise)
    return states


def _read_clock_files(clk_paths, systems, fallback, notes, progress):
    """(clock Dataset, source text) from the RINEX clock files, or (None, None)."""
    if not clk_paths:
        return None, None
    progress(f"reading {len(clk_paths)} clock file(s)")
    try:
        precise, kind = read_precise_clocks(clk_paths, systems)
    except FileFormatError as exc:
        if not fallback:
            raise
        notes.append(f"the RINEX clock file could not be read ({exc}); the SP3 clocks were compared instead")
        log.warning("RINEX clock file unreadable, using the SP3 clocks: %s", exc)
        return None, None
    return precise[["clock_s"]], f"{kind} {', '.join(Path(p).name for p in clk_paths)}"


def _read_log(path, systems, start, end, code_options):
    """An observation log; with the phases' loss-of-lock flags when the codes are to be smoothed."""
    smooth = bool((code_options or {}).get("smooth_code_s"))
    obs = read_observations(path, systems=systems, start=start, end=end, with_flags=smooth)
    return obs.drop_vars([v for v in obs.data_vars if str(v).endswith("ssi")]) if smooth else obs


def _audit(r, obs_ds, nav, systems, window, progress, rule=DEFAULT_RULE, code_options=None):
    """Fill ``r`` (ReceiverFindings) with the audit of its log, fixes and clock table; the LogAudit."""
    if r.fixes_path:
        r.fixes = read_receiver_fixes(r.fixes_path)
    progress(f"{r.name}: audit of the observation log" + (" and the receiver's fixes" if r.fixes_path else ""))
    clock_status = None
    if r.clocks_path:
        progress(f"{r.name}: the receiver's satellite-clock table")
        table = receiver_rows_in_window(read_receiver_clocks(r.clocks_path), r.clocks_path, window[0], window[1],
                                        systems)
        r.clock_table = table
        r.clock_rows, r.clock_check = check_receiver_clocks(table, nav, systems=systems)
        states = {e["status"] for e in r.clock_check["by_system"].values()}
        clock_status = "clock table: " + ("; ".join(sorted(states)))
    audited = audit_log(obs_ds, nav, systems=systems, fixes=r.fixes, rule=rule, receiver_clock_verdict=clock_status,
                        count_navigation=False, counted_clock_rows=r.clock_table, **(code_options or {}))
    r.audit = audited.result
    r.audit_summary = {k: v for k, v in audited.summary.items() if k != "accounting"}
    if (r.audit_summary.get("position") or {}).get("reference") == "header":   # approximate only: say so
        r.audit_summary["position"]["reference_note"] = HEADER_POSITION_NOTE
    r.position_errors = audited.position_errors()
    if r.fixes is not None and r.audit.reference_ecef_m is not None:
        r.fixes_error_3d_m = position_errors_3d_m(r.fixes, r.audit.reference_ecef_m)
    return audited


def _compare_clock_series(r, path, audited, progress) -> None:
    """The receiver's own clock series (``--receiver-clock-bias``) against gnssrel's clock per
    hypothesis: ``receiver_clock_series`` in its audit summary, its rows in the audit's ledger."""
    progress(f"{r.name}: the receiver's own clock series")
    r.clock_series = read_receiver_clock_series(path)
    block, series_ledger = check_receiver_clock_series(r.clock_series, audited.positions)
    r.audit_summary["receiver_clock_series"] = block
    audited.ledger.merge(series_ledger)


def combined_summary(content: ReportContent) -> dict:
    """summary.json: inputs, each stage's summary, and a ``receivers`` block of verdicts."""
    t0, t1 = content.time_span
    return {
        "title": content.title, "time_scale": "GPST", "start": t0, "end": t1,
        "inputs": content.inputs,
        "receivers": {r.name: r.verdict for r in content.receivers},
        "relativity": content.relativity_summary,
        "orbits": content.orbit_summary,
        "clocks": content.clock_summary,
        "receiver_audits": {r.name: r.audit_summary for r in content.receivers},
        "receiver_clock_tables": {r.name: r.clock_check for r in content.receivers if r.clock_check},
        "notes": content.notes,
        "accounting": content.accounting,
    }
