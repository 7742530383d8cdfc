"""``gnssrel report``: the whole chain on the user's files, written as an HTML report.

Wiring only: read the files, run the stages (orbits, relativity, clocks, audit),
gather their results in a :class:`gnssrel.report.content.ReportContent` and hand
it to :func:`gnssrel.report.builder.write_report`.  ``gnssrel demo`` calls
:func:`analyse` and the same builder on ``sample_logs/``.
"""

from __future__ import annotations

import argparse
import logging
from pathlib import Path

import numpy as np

from gnssrel.errors import FileFormatError, GnssrelInputError
from gnssrel.jobs import common

HELP = "the HTML report with its figures and tables, from your own files"
DESCRIPTION = (
    "Run the whole chain on navigation files (and, when given, SP3/RINEX clock files, receiver "
    "observation logs, the receivers' own fixes and satellite-clock tables) and write a "
    "self-contained report.html with every figure embedded, each figure also as PNG and SVG, "
    "the tables as CSV and summary.json. --receiver-fixes and --receiver-clocks pair with --obs "
    "in the order given. Every stage uses the same --systems and --start/--end window. Default "
    "window: the span of the --obs logs when given; else the overlap of the navigation records' "
    "span with the span of each --precise file (so a day of SP3/clock products selects that "
    "day); else the navigation records' span. The folder is written complete or not at all.")

log = logging.getLogger(__name__)
DEFAULT_STEP_S = 30.0
STEP_HELP = (f"epoch interval of the relativity terms, s (default: the --obs logs' interval, else "
             f"{DEFAULT_STEP_S:g} s); when given, also keeps only observation and precise-clock epochs "
             "on multiples of it")


def add_arguments(parser) -> None:
    parser.add_argument("nav", metavar="NAV", nargs="+", help="RINEX navigation file(s)")
    parser.add_argument("--precise", metavar="SP3|CLK", nargs="+", default=[],
                        help="precise orbits/clocks: SP3 files and/or RINEX clock files (told apart by content)")
    parser.add_argument("--obs", metavar="OBS", nargs="+", default=[],
                        help="receiver observation logs (RINEX 2/3/4) to audit")
    parser.add_argument("--receiver-fixes", metavar="FILE", nargs="+", default=[],
                        help="each receiver's own fixes (NMEA GGA or CSV), one per --obs, same order")
    parser.add_argument("--receiver-clocks", metavar="FILE.csv", nargs="+", default=[],
                        help="each receiver's own satellite-clock table, one per --obs, same order")
    common.add_systems(parser)
    common.add_time_window(parser, None, STEP_HELP)
    common.add_rule(parser)
    parser.add_argument("--title", default=None, help="report title (default: from the files)")
    parser.add_argument("--output", required=True, metavar="DIR", help="report folder to write")
    parser.add_argument("--plots", metavar="DIR", help="also copy the PNG figures into this folder")
    common.add_json(parser, "print summary.json on stdout instead of the findings")


def _progress(args):
    quiet = getattr(args, "quiet", False) or getattr(args, "json", False)
    return (lambda text: None) if quiet else (lambda text: print(f"  {text}", flush=True))


def _check_files(paths) -> None:
    for p in paths:
        if not Path(p).is_file():
            raise GnssrelInputError("file not found", p)


def _split_precise(paths):
    from gnssrel.jobs.clocks import precise_kind

    sp3, clk = [], []
    for p in paths:
        (sp3 if precise_kind(p) == "sp3" else clk).append(str(p))
    return sp3, clk


def _precise_span(sp3, precise_clocks):
    """(start, end) common to every precise product given, or None when none is."""
    spans = [(ds["time"].values[0], ds["time"].values[-1])
             for ds in (sp3, precise_clocks) if ds is not None and ds.sizes.get("time")]
    if not spans:
        return None
    return max(a for a, _ in spans), min(b for _, b in spans)


def default_window(nav, systems, obs_list=(), sp3=None, precise_clocks=None):
    """The GPST window used when --start/--end are not given (see DESCRIPTION).

    The logs' span when there are logs; else the overlap of the navigation records'
    reference times (toe; t_b for GLONASS) with every precise product's span; else
    the navigation span alone (also when that overlap is empty).
    """
    if obs_list:
        return (min(o["time"].values[0] for o in obs_list), max(o["time"].values[-1] for o in obs_list))
    start, end = common.navigation_span(nav, systems)
    precise = _precise_span(sp3, precise_clocks)
    if precise is not None and max(start, precise[0]) < min(end, precise[1]):
        start, end = max(start, precise[0]), min(end, precise[1])
    return start, end


def _time_grid(start, end, obs_list, step_s):
    """GPST epochs for the relativity terms: ``step_s``, else the logs' interval, else 30 s."""
    from gnssrel.orbits.broadcast import time_grid

    if step_s is None:
        step_s = min((float(o.attrs.get("interval") or DEFAULT_STEP_S) for o in obs_list),
                     default=DEFAULT_STEP_S)
    if end <= start:
        end = start + np.timedelta64(2, "h")
    common.check_grid_size(start, end, step_s)
    times = time_grid(start, end, step_s)
    if times.size < 3:
        raise GnssrelInputError(f"only {times.size} epochs every {step_s:g} s in the window "
                                f"{common.fmt_span(start, end)}: the proper-time integral needs at least 3 "
                                "(give a wider --start/--end or a smaller --step)")
    return times


def _decimate(ds, step_s):
    """Keep only the epochs on multiples of ``step_s`` (None keeps all)."""
    if not step_s:
        return ds
    t = ds["time"].values.astype("datetime64[ns]").astype("int64")
    keep = np.flatnonzero(np.mod(t, round(step_s * 1e9)) == 0)
    if keep.size == 0:
        raise GnssrelInputError(f"--step {step_s:g}: no observation epoch falls on a multiple of it")
    return ds.isel(time=keep)


def _receiver_name(obs_ds, path) -> str:
    name = str(obs_ds.attrs.get("marker_name") or "").strip()
    return (name or Path(path).name[:4]).replace(" ", "_")


def analyse(nav_paths, precise_paths=(), obs_paths=(), fixes_paths=(), clocks_paths=(), title=None,
            description=None, progress=print, clock_fallback: bool = False, systems: str | None = None,
            start=None, end=None, step_s: float | None = None, rule: str = "post"):
    """Run every stage the inputs allow; returns a ReportContent (see gnssrel.report.content).
    ``rule``: the broadcast record-selection rule of every stage (gnssrel.orbits.selection).

    ``systems`` (letters, None = all), ``start``/``end`` (GPST datetime64, None = the default
    window of :func:`default_window`) and ``step_s`` (None = the logs' interval, else 30 s;
    when given, observation and precise-clock epochs are also decimated to it) apply to
    every stage: orbits, relativity, clocks and the audit.
    """
    from gnssrel import read_observations
    from gnssrel.jobs import accounting
    from gnssrel.jobs.audit import check_log_against_navigation
    from gnssrel.orbits.broadcast import broadcast_states
    from gnssrel.relativity.engine import relativity_summary, relativity_terms
    from gnssrel.report.content import ReceiverFindings, ReportContent

    nav_paths, precise_paths, obs_paths = ([str(p) for p in group] for group in (nav_paths, precise_paths, obs_paths))
    fixes_paths, clocks_paths = [str(p) for p in fixes_paths], [str(p) for p in clocks_paths]
    for flag, given in (("--receiver-fixes", fixes_paths), ("--receiver-clocks", clocks_paths)):
        if given and len(given) != len(obs_paths):
            raise GnssrelInputError(f"{flag}: give one file per --obs log ({len(obs_paths)}), "
                                    f"in the same order; got {len(given)}")
    if start is not None and end is not None and end < start:
        raise GnssrelInputError(f"--end ({end}) is before --start ({start})")
    _check_files(nav_paths + precise_paths + obs_paths + fixes_paths + clocks_paths)
    notes: list[str] = []
    progress(f"reading {len(nav_paths)} navigation file(s)")
    nav, present = common.read_navigation_files(nav_paths, systems)
    letters = list(present)
    sp3_paths, clk_paths = _split_precise(precise_paths)
    sp3 = None
    if sp3_paths:
        from gnssrel.io.sp3 import read_sp3

        progress(f"reading {len(sp3_paths)} SP3 file(s)")
        sp3 = accounting.unique_keys(read_sp3(sp3_paths, systems=letters), "sp3_records", "position_ecef_m")
    clk, clk_source = _read_clock_files(clk_paths, letters, sp3 is not None and clock_fallback, notes, progress)
    obs_list = []
    for p in obs_paths:
        progress(f"reading observations {Path(p).name}")
        obs_list.append(_decimate(read_observations(p, systems=letters, start=start, end=end), step_s))
        check_log_against_navigation(obs_list[-1], nav, present, p)
    default_start, default_end = default_window(nav, letters, obs_list, sp3, clk)
    start = default_start if start is None else start
    end = default_end if end is None else end
    times = _time_grid(start, end, obs_list, step_s)
    progress(f"broadcast orbits and relativity terms ({present}): {times.size} epochs "
             f"{str(times[0])[:16]} to {str(times[-1])[:16]} GPST")
    states = broadcast_states(nav, times, systems=letters, rule=rule)
    rel = relativity_terms(states)
    rel_summary = relativity_summary(rel)
    content = ReportContent(title=title or "gnssrel report", relativity=rel, relativity_summary=rel_summary,
                            description=description, notes=notes,
                            inputs={"navigation": nav_paths, "sp3": sp3_paths, "clock": clk_paths,
                                    "observations": obs_paths, "fixes": fixes_paths,
                                    "satellite_clocks": clocks_paths})
    ledger = accounting.navigation_ledger(nav)
    rows = [accounting.used_rows([states])]
    if sp3 is not None:
        ledger.merge(accounting.precise_ledger(sp3, "sp3_records", "position_ecef_m"))
        accounting.retire_beyond_reach(ledger, sp3, "sp3_records", "position_ecef_m", times[0], times[-1],
                                       accounting.sp3_reach_s(sp3), letters)
        rows.append(accounting.used_rows([_orbits(content, nav, sp3, times, letters, progress, rule)]))
    if clk is not None:
        ledger.merge(accounting.precise_ledger(clk, "clock_records", "clock_s"))
    if clk is None and sp3 is not None:
        clk, clk_source = sp3, f"SP3 clocks {', '.join(Path(p).name for p in sp3_paths)}"
    if clk is not None:
        progress(f"broadcast vs precise clocks ({clk_source})")
        content.clock_table, content.clock_summary, clock_states = compare_clocks_in_window(
            nav, clk, letters, times[0], times[-1], step_s, clk_source, with_states=True, rule=rule)
        content.clock_source = clk_source
        rows.append(accounting.used_rows([clock_states]))
        if "position_ecef_m" not in clk:      # clock files (the SP3's clocks are counted with its records)
            accounting.retire_outside_window(ledger, clk, "clock_records", "clock_s", clock_states["time"].values,
                                             letters)
    for i, (path, obs_ds) in enumerate(zip(obs_paths, obs_list)):
        r = ReceiverFindings(name=_receiver_name(obs_ds, path), observations_path=str(path),
                             fixes_path=fixes_paths[i] if fixes_paths else None,
                             clocks_path=clocks_paths[i] if clocks_paths else None)
        _audit(r, obs_ds, nav, letters, (times[0], times[-1]), progress, rule)
        content.receivers.append(r)
        ledger.merge(accounting.audit_accounting(r.audit, obs_ds, nav, letters, fixes=r.fixes,
                                                 receiver_clocks=r.clock_table, navigation=False))
        rows.append(r.audit.extra.get("ephemeris_rows", {}))
    accounting.retire_navigation(ledger, nav, accounting.union_rows(*rows), letters, times[0], times[-1])
    from gnssrel.report.verdicts import receiver_verdict

    for r in content.receivers:
        r.verdict = receiver_verdict(r.name, r.audit_summary, r.clock_check)
    content.accounting = ledger.as_dict()
    content.summary = combined_summary(content)
    content.summary["systems"] = present
    return content


def _orbits(content, nav, sp3, times, systems, progress, rule="post"):
    from gnssrel.orbits.broadcast import broadcast_states
    from gnssrel.orbits.compare import compare_with_precise
    from gnssrel.orbits.precise import precise_states

    t = sp3["time"].values
    inside = t[(t >= times[0]) & (t <= times[-1])]
    if inside.size == 0:
        content.notes.append("the SP3 epochs do not overlap the analysed span: no orbit comparison")
        return
    progress(f"broadcast vs precise orbits at {inside.size} SP3 epochs")
    states = broadcast_states(nav, inside, systems=systems, rule=rule)
    content.orbit_table, content.orbit_summary = compare_with_precise(states, precise_states(sp3, inside))
    return states


def _read_clock_files(clk_paths, systems, fallback, notes, progress):
    """(clock Dataset, source text) from the RINEX clock files, or (None, None)."""
    from gnssrel.jobs.clocks import read_precise_clocks

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


def compare_clocks_in_window(nav, precise, systems, start, end, step_s, source, with_states: bool = False,
                             rule: str = "post"):
    """Broadcast vs precise clocks for ``systems`` on the precise epochs in [start, end]
    (with ``with_states``, the broadcast states of those epochs as a third item)."""
    from gnssrel.clocks.compare import compare_clocks, select_epochs
    from gnssrel.orbits.broadcast import broadcast_states

    t = precise["time"].values
    keep = t[select_epochs(t, start, end, step_s)]
    states = broadcast_states(nav, keep, systems=systems, rule=rule) if keep.size else None
    table, summary = compare_clocks(nav, precise[["clock_s"]], systems=systems, start=start, end=end,
                                    step_s=step_s, precise_source=source, states=states)
    return (table, summary, states) if with_states else (table, summary)


def _audit(r, obs_ds, nav, systems, window, progress, rule="post"):
    from gnssrel.audit.positioning import position_errors_3d_m
    from gnssrel.audit.summary import audit_log, audit_summary, per_epoch_errors
    from gnssrel.clocks.firmware import check_receiver_clocks
    from gnssrel.io.receiver_clocks import read_receiver_clocks
    from gnssrel.io.receiver_fixes import read_receiver_fixes
    from gnssrel.jobs.clocks import receiver_rows_in_window

    if r.fixes_path:
        r.fixes = read_receiver_fixes(r.fixes_path)
    progress(f"{r.name}: audit of the observation log" + (" and the receiver's fixes" if r.fixes_path else ""))
    r.audit = audit_log(obs_ds, nav, systems=systems, fixes=r.fixes, rule=rule)
    clock_status = None
    if r.clocks_path:
        progress(f"{r.name}: the receiver's satellite-clock table")
        table = receiver_rows_in_window(read_receiver_clocks(r.clocks_path), r.clocks_path, window[0], window[1],
                                        systems)
        r.clock_table = table
        r.clock_rows, r.clock_check = check_receiver_clocks(table, nav, systems=systems)
        states = {e["status"] for e in r.clock_check["by_system"].values()}
        clock_status = "clock table: " + ("; ".join(sorted(states)))
    r.audit_summary = audit_summary(r.audit, receiver_clock_verdict=clock_status)
    r.position_errors = per_epoch_errors(r.audit)
    if r.fixes is not None and r.audit.reference_ecef_m is not None:
        r.fixes_error_3d_m = position_errors_3d_m(r.fixes, r.audit.reference_ecef_m)


def combined_summary(content) -> dict:
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


def print_findings(content, report_path, verbose: bool = False) -> None:
    from gnssrel.jobs.accounting import print_block

    print(f"report: {report_path}")
    for r in content.receivers:
        print(f"  {r.verdict['verdict']}")
    for note in content.notes:
        print(f"  note: {note}")
    print_block(content.summary, verbose)


def run(args) -> dict:
    from gnssrel.io.writers import to_json_text
    from gnssrel.report.builder import check_report_folder, write_report

    # --output is a folder here, so only the shared --step check applies (not the table-suffix one)
    common.check_outputs(argparse.Namespace(step=args.step))
    check_report_folder(args.output)
    progress = _progress(args)
    start, end = common.time_window(args)
    content = analyse(args.nav, args.precise, args.obs, args.receiver_fixes, args.receiver_clocks,
                      title=args.title, progress=progress, systems=common.parse_systems(args.systems),
                      start=start, end=end, step_s=args.step, rule=args.rule)
    progress("drawing the figures and writing the report")
    folder = write_report(content, args.output, plots=args.plots)
    if args.json:
        print(to_json_text(content.summary))
    elif not args.quiet:
        print_findings(content, Path(folder) / "report.html", verbose=bool(args.verbose))
    return content.summary
