"""``gnssrel report``: the whole chain on the user's files, written as an HTML report.

Wiring only: the analysis is :func:`gnssrel.pipeline.analysis.analyse` (every stage
on the files, one ledger, a :class:`~gnssrel.pipeline.results.ReportContent`), the
report :func:`gnssrel.report.builder.write_report`.  ``gnssrel demo`` calls the same
two on ``sample_logs/``.
"""

from __future__ import annotations

import argparse
import logging
from pathlib import Path

from gnssrel.io.writers import to_json_text
from gnssrel.jobs import common

HELP = "the HTML report with its figures and tables, from your own files"
DESCRIPTION = (
    "Run the whole chain on navigation files (and, when given, SP3/RINEX clock files, receiver "
    "observation logs, the receivers' own fixes and satellite-clock tables) and write a "
    "self-contained report.html with every figure embedded, each figure also as PNG and SVG, "
    "the tables as CSV and summary.json. --receiver-fixes and --receiver-clocks pair with --obs "
    "in the order given. Every stage uses the same --systems and --start/--end window. Default "
    "window, as in every command: the span of the --obs logs when given; else the period the "
    "navigation file name declares (e.g. _20201770000_01D_: that GPST day) or the day holding most "
    "records, cut to the --precise products' span. The folder is written complete or not at all.")

log = logging.getLogger(__name__)
DEFAULT_STEP_S = 30.0   # gnssrel.pipeline.analysis.DEFAULT_STEP_S (not imported: --help stays light)
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
                        help="each receiver's own fixes, one per --obs, same order: "
                             + common.RECEIVER_FIXES_FORMAT)
    parser.add_argument("--receiver-clocks", metavar="FILE.csv", nargs="+", default=[],
                        help="each receiver's own satellite-clock table, one per --obs, same order: "
                             + common.RECEIVER_CLOCKS_FORMAT)
    parser.add_argument("--receiver-clock-bias", metavar="FILE.csv", nargs="+", default=[],
                        help="each receiver's own clock series, one per --obs, same order: CSV with columns time, "
                             "time_scale (GPST, UTC, GST or BDT), clock_bias_ns and optionally clock_drift_ns_per_s")
    common.add_systems(parser)
    common.add_time_window(parser, None, STEP_HELP)
    common.add_rule(parser)
    parser.add_argument("--title", default=None,
                        help="report title (default: from the files: the station(s) and the day, e.g. "
                             "'NYA1 2024-05-03 (day 124)')")
    parser.add_argument("--output", required=True, metavar="DIR", help="report folder to write")
    parser.add_argument("--plots", metavar="DIR", help="also copy the PNG figures into this folder")
    common.add_fail_on_fault(parser)
    common.add_json(parser, "print summary.json on stdout instead of the findings")


def _progress(args):
    quiet = getattr(args, "quiet", False) or getattr(args, "json", False)
    return (lambda text: None) if quiet else (lambda text: print(f"  {text}", flush=True))


def print_findings(content, report_path, verbose: bool = False) -> None:
    """The end of ``gnssrel report``/``demo`` on the terminal: the report's path, the findings (those of the
    report's findings box: verdicts, every result computed, what was not judged), the accounting."""
    from gnssrel.report.findings import report_findings  # deferred: the report layer (start-up of --help)

    print(f"report: {report_path}")
    for finding in report_findings(content):
        print(f"  {finding.text}")
    for note in content.notes:
        print(f"  note: {note}")
    common.print_accounting(content.summary, verbose)


def run(args) -> dict:
    # deferred: the analysis pulls xarray and scipy, the report matplotlib (start-up of `gnssrel --help`)
    from gnssrel.pipeline.analysis import analyse
    from gnssrel.report.builder import check_report_folder, write_report

    # --output is a folder here, so only the shared --step check applies (not the table-suffix one)
    common.check_outputs(argparse.Namespace(step=args.step))
    check_report_folder(args.output)
    progress = _progress(args)
    start, end = common.time_window(args)
    content = analyse(args.nav, args.precise, args.obs, args.receiver_fixes, args.receiver_clocks,
                      title=args.title, progress=progress, systems=common.parse_systems(args.systems),
                      start=start, end=end, step_s=args.step, rule=args.rule,
                      clock_series_paths=args.receiver_clock_bias)
    for r in content.receivers:   # header/body disagreements of each log (gnssrel audit prints them too)
        for warning in ((r.audit_summary or {}).get("observations") or {}).get("reader_warnings", []):
            log.warning("%s: %s", r.observations_path, warning)
    progress("drawing the figures and writing the report")
    folder = write_report(content, args.output, plots=args.plots)
    if args.json:
        print(to_json_text(content.summary))
    elif not args.quiet:
        print_findings(content, Path(folder) / "report.html", verbose=bool(args.verbose))
    common.flag_faults(args, [r.name for r in content.receivers if (r.verdict or {}).get("faulty") is True])
    return content.summary
