"""``gnssrel report``: the whole chain on the user's files, written as an HTML report.

Wiring only: read the files, run the stages (orbits, relativity, clocks, audit),
gather their results in a :class:`gnssrel.report.content.ReportContent` and hand
it to :func:`gnssrel.report.builder.write_report`.  ``gnssrel demo`` calls
:func:`analyse` and the same builder on ``sample_logs/``.
"""

from __future__ import annotations

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
    "in the order given. The folder is written complete or not at all.")

log = logging.getLogger(__name__)
DEFAULT_STEP_S = 30.0


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


def _time_grid(nav, obs_list, sp3):
    """GPST epochs for the relativity terms: the logs' span, else the precise span, else the nav span."""
    from gnssrel.orbits.broadcast import time_grid

    if obs_list:
        starts = [o["time"].values[0] for o in obs_list]
        ends = [o["time"].values[-1] for o in obs_list]
        step = min(float(o.attrs.get("interval") or DEFAULT_STEP_S) for o in obs_list)
        return time_grid(min(starts), max(ends), step)
    refs = np.concatenate([np.asarray(t["toe" if s != "R" else "toc"]).astype("datetime64[ns]")
                           for s, t in nav.ephemerides.items() if len(t)])
    start, end = refs.min(), refs.max()
    if sp3 is not None:
        t = sp3["time"].values
        start, end = max(start, t[0]), min(end, t[-1])
    if end <= start:
        end = start + np.timedelta64(2, "h")
    return time_grid(start, end, DEFAULT_STEP_S)


def _receiver_name(obs_ds, path) -> str:
    name = str(obs_ds.attrs.get("marker_name") or "").strip()
    return (name or Path(path).name[:4]).replace(" ", "_")


def analyse(nav_paths, precise_paths=(), obs_paths=(), fixes_paths=(), clocks_paths=(), title=None,
            description=None, progress=print, clock_fallback: bool = False):
    """Run every stage the inputs allow; returns a ReportContent (see gnssrel.report.content)."""
    from gnssrel import read_navigation, read_observations
    from gnssrel.orbits.broadcast import broadcast_states
    from gnssrel.relativity.engine import relativity_summary, relativity_terms
    from gnssrel.report.content import ReceiverFindings, ReportContent

    nav_paths, precise_paths, obs_paths = ([str(p) for p in group] for group in (nav_paths, precise_paths, obs_paths))
    fixes_paths, clocks_paths = [str(p) for p in fixes_paths], [str(p) for p in clocks_paths]
    for flag, given in (("--receiver-fixes", fixes_paths), ("--receiver-clocks", clocks_paths)):
        if given and len(given) != len(obs_paths):
            raise GnssrelInputError(f"{flag}: give one file per --obs log ({len(obs_paths)}), "
                                    f"in the same order; got {len(given)}")
    _check_files(nav_paths + precise_paths + obs_paths + fixes_paths + clocks_paths)
    notes: list[str] = []
    progress(f"reading {len(nav_paths)} navigation file(s)")
    navs = [read_navigation(p) for p in nav_paths]
    nav = navs[0] if len(navs) == 1 else type(navs[0]).merge(navs)
    sp3_paths, clk_paths = _split_precise(precise_paths)
    sp3 = None
    if sp3_paths:
        from gnssrel.io.sp3 import read_sp3

        progress(f"reading {len(sp3_paths)} SP3 file(s)")
        sp3 = read_sp3(sp3_paths)
    obs_list = []
    for p in obs_paths:
        progress(f"reading observations {Path(p).name}")
        obs_list.append(read_observations(p))
    times = _time_grid(nav, obs_list, sp3)
    progress(f"broadcast orbits and relativity terms: {times.size} epochs "
             f"{str(times[0])[:16]} to {str(times[-1])[:16]} GPST")
    states = broadcast_states(nav, times)
    rel = relativity_terms(states)
    rel_summary = relativity_summary(rel)
    content = ReportContent(title=title or "gnssrel report", relativity=rel, relativity_summary=rel_summary,
                            description=description, notes=notes,
                            inputs={"navigation": nav_paths, "sp3": sp3_paths, "clock": clk_paths,
                                    "observations": obs_paths, "fixes": fixes_paths,
                                    "satellite_clocks": clocks_paths})
    if sp3 is not None:
        _orbits(content, nav, sp3, times, progress)
    _clocks(content, nav, sp3, sp3_paths, clk_paths, times, progress, clock_fallback)
    for i, (path, obs_ds) in enumerate(zip(obs_paths, obs_list)):
        r = ReceiverFindings(name=_receiver_name(obs_ds, path), observations_path=str(path),
                             fixes_path=fixes_paths[i] if fixes_paths else None,
                             clocks_path=clocks_paths[i] if clocks_paths else None)
        _audit(r, obs_ds, nav, progress)
        content.receivers.append(r)
    from gnssrel.report.verdicts import receiver_verdict

    for r in content.receivers:
        r.verdict = receiver_verdict(r.name, r.audit_summary, r.clock_check)
    content.summary = combined_summary(content)
    return content


def _orbits(content, nav, sp3, times, progress):
    from gnssrel.orbits.broadcast import broadcast_states
    from gnssrel.orbits.compare import compare_with_precise
    from gnssrel.orbits.precise import precise_states

    t = sp3["time"].values
    inside = t[(t >= times[0]) & (t <= times[-1])]
    if inside.size == 0:
        content.notes.append("the SP3 epochs do not overlap the analysed span: no orbit comparison")
        return
    progress(f"broadcast vs precise orbits at {inside.size} SP3 epochs")
    content.orbit_table, content.orbit_summary = compare_with_precise(broadcast_states(nav, inside),
                                                                      precise_states(sp3, inside))


def _clocks(content, nav, sp3, sp3_paths, clk_paths, times, progress, fallback):
    from gnssrel.clocks.compare import compare_clocks
    from gnssrel.jobs.clocks import read_precise_clocks

    precise, source = None, None
    if clk_paths:
        try:
            precise, kind = read_precise_clocks(clk_paths)
            source = f"{kind} {', '.join(Path(p).name for p in clk_paths)}"
        except FileFormatError as exc:
            if not (fallback and sp3 is not None):
                raise
            content.notes.append(f"the RINEX clock file could not be read ({exc}); the SP3 clocks "
                                 "were compared instead")
            log.warning("RINEX clock file unreadable, using the SP3 clocks: %s", exc)
    if precise is None and sp3 is not None:
        precise, source = sp3, f"SP3 clocks {', '.join(Path(p).name for p in sp3_paths)}"
    if precise is not None:
        progress(f"broadcast vs precise clocks ({source})")
        content.clock_table, content.clock_summary = compare_clocks(
            nav, precise[["clock_s"]], start=times[0], end=times[-1], precise_source=source)
        content.clock_source = source


def _audit(r, obs_ds, nav, progress):
    from gnssrel.audit.positioning import position_errors_3d_m
    from gnssrel.audit.summary import audit_log, audit_summary, per_epoch_errors
    from gnssrel.clocks.firmware import check_receiver_clocks
    from gnssrel.io.receiver_clocks import read_receiver_clocks
    from gnssrel.io.receiver_fixes import read_receiver_fixes

    if r.fixes_path:
        r.fixes = read_receiver_fixes(r.fixes_path)
    progress(f"{r.name}: audit of the observation log" + (" and the receiver's fixes" if r.fixes_path else ""))
    r.audit = audit_log(obs_ds, nav, fixes=r.fixes)
    clock_status = None
    if r.clocks_path:
        progress(f"{r.name}: the receiver's satellite-clock table")
        r.clock_rows, r.clock_check = check_receiver_clocks(read_receiver_clocks(r.clocks_path), nav)
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
    }


def print_findings(content, report_path) -> None:
    print(f"report: {report_path}")
    for r in content.receivers:
        print(f"  {r.verdict['verdict']}")
    for note in content.notes:
        print(f"  note: {note}")


def run(args) -> dict:
    from gnssrel.io.writers import to_json_text
    from gnssrel.report.builder import check_report_folder, write_report

    check_report_folder(args.output)
    progress = _progress(args)
    content = analyse(args.nav, args.precise, args.obs, args.receiver_fixes, args.receiver_clocks,
                      title=args.title, progress=progress)
    progress("drawing the figures and writing the report")
    folder = write_report(content, args.output, plots=args.plots)
    if args.json:
        print(to_json_text(content.summary))
    elif not args.quiet:
        print_findings(content, Path(folder) / "report.html")
    return content.summary
