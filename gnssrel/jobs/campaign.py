"""``gnssrel campaign``: many receivers and many days in one run, on a local or a Dask cluster.

Wiring only: plan the station-days (:mod:`gnssrel.campaign.plan`), print the plan, run the
tasks on dask.distributed (:mod:`gnssrel.campaign.run`), write the campaign table and summary.
"""

from __future__ import annotations

import argparse
import logging
import time
from pathlib import Path

from gnssrel.errors import GnssrelInputError, NoDataError
from gnssrel.io import writers
from gnssrel.jobs import common
from gnssrel.text import fmt, fmt_k, in_system_order, text_table

HELP = "audit many station-days (receivers x days) at once, on local worker processes or a Dask cluster"
EXIT_SOME_FAILED = 3
DESCRIPTION = (
    "Group the observation logs of INPUT (files, folders, glob patterns, or a CSV/TOML manifest) into "
    "station-days by their RINEX names (else headers), match the navigation and precise files to each "
    "by time span, print the plan, and audit every station-day as one Dask task (the stages of "
    "`gnssrel audit`). Results go to DIR: tasks/<station>_<date>/ (corrections.parquet, positions.parquet, "
    "summary.json), campaign.parquet and campaign.csv (one row per station-day), summary.json, report/ (HTML and figures). A rerun "
    f"skips the tasks already done with unchanged inputs and options. Exit status: 0 every task ok, "
    f"{EXIT_SOME_FAILED} some failed (each listed with its reason), 2 nothing could run or bad input, "
    f"1 internal error; with --fail-on-fault, {common.EXIT_FAULT_FOUND} when a receiver's fixes follow a wrong "
    "hypothesis (wins over 3).")

log = logging.getLogger(__name__)


def add_arguments(parser) -> None:
    parser.add_argument("inputs", metavar="INPUT", nargs="+",
                        help="observation and navigation logs, folders, glob patterns, or a manifest (.csv/.toml)")
    parser.add_argument("--output", metavar="DIR",
                        help="campaign folder (created; reused on resume); needed unless --dry-run")
    parser.add_argument("--workers", type=int, metavar="N",
                        help="worker processes of the local cluster (default: the number of cores)")
    parser.add_argument("--scheduler", metavar="ADDRESS",
                        help="run on an existing Dask cluster, e.g. tcp://host:8786, instead of a local one")
    parser.add_argument("--precise", metavar="SP3|CLK", nargs="+",
                        help="precise products (SP3, RINEX clock), matched to each station-day by time span")
    parser.add_argument("--receiver-fixes-dir", metavar="DIR",
                        help="folder of the receivers' own fixes, one file per station named after it (KVRP_...)")
    common.add_systems(parser)
    parser.add_argument("--step", type=float, default=None, metavar="SECONDS",
                        help="keep only epochs on multiples of this interval, s (default: every epoch)")
    parser.add_argument("--elevation-mask", type=float, default=10.0, metavar="DEG",
                        help="elevation mask in degrees (default 10)")
    common.add_rule(parser)
    common.add_fail_on_fault(parser)
    parser.add_argument("--resume", action=argparse.BooleanOptionalAction, default=True,
                        help="skip the station-days finished by an earlier run with the same inputs and "
                             "options (default: on)")
    parser.add_argument("--summary", metavar="FILE.json", help=common.SUMMARY_HELP)
    parser.add_argument("--report", action=argparse.BooleanOptionalAction, default=True,
                        help="write the campaign report (HTML + figures) to DIR/report/ (default: on)")
    parser.add_argument("--survey", action="store_true",
                        help="also run the carrier-phase survey (`gnssrel survey`) on every station-day with "
                             "precise SP3 and RINEX clock files: daily positions in the table, their "
                             "repeatability per station in the summary")
    parser.add_argument("--dry-run", action="store_true", help="print the plan only")
    common.add_json(parser)


def run(args) -> dict | None:
    from gnssrel.campaign.plan import describe_plan, plan_campaign  # deferred: keeps `gnssrel --help` fast
    from gnssrel.campaign.run import campaign_summary, campaign_table, execute, prepare

    if args.summary:
        writers.check_output_suffix(args.summary, allowed=(".json",))
    if not args.output and not args.dry_run:
        raise GnssrelInputError("--output DIR is needed (the campaign folder), unless --dry-run")
    if args.workers is not None and args.workers < 1:
        raise GnssrelInputError(f"--workers must be at least 1, not {args.workers}")
    options = {"systems": common.parse_systems(args.systems), "rule": args.rule, "step_s": args.step,
               "elevation_mask_deg": args.elevation_mask}
    if args.survey:                  # only then: the default options (and content hashes) stay as they were
        options["survey"] = True
    tasks, notes = plan_campaign(args.inputs, args.precise or (), args.receiver_fixes_dir)
    say = (lambda text: None) if args.quiet or args.json else print
    for line in describe_plan(tasks, notes):
        say(line)
    if args.dry_run:
        return None
    if not tasks:
        raise NoDataError("no observation log among the inputs: nothing to run", args.inputs[0])
    out = Path(args.output)
    if out.exists() and not out.is_dir():
        raise GnssrelInputError("--output: not a folder", out)
    (out / "tasks").mkdir(parents=True, exist_ok=True)
    to_run, kept = prepare(tasks, options, out, resume=args.resume)
    for s in kept:
        s["_skipped"] = True
    if kept:
        say(f"{len(kept)} task(s) finished earlier with the same inputs and options: skipped")
    started = time.perf_counter()
    results = execute(to_run, options, workers=args.workers, scheduler=args.scheduler, say=say)
    elapsed = time.perf_counter() - started
    summaries = kept + results
    table = campaign_table(summaries)
    writers.write_table(table, out / "campaign.parquet")
    writers.write_table(table, out / "campaign.csv")
    summary = campaign_summary(summaries, n_skipped=sum(s.get("kind") != "network-day" for s in kept),
                               extra={"output": str(out), "wall_time_s": round(elapsed, 3),
                                      "options": options})
    writers.write_json(summary, out / "summary.json")
    if args.report and summary["n_tasks"]:
        from gnssrel.report.campaign_report import write_campaign_report  # deferred: matplotlib

        write_campaign_report(out)
    if args.summary:
        writers.write_json(summary, args.summary)
    if args.json:
        print(writers.to_json_text(summary))
    elif not args.quiet:
        _print_text(summary)
    if summary["n_ok"] == 0:
        reasons = "; ".join(f"{t['station']} {t['date']}: {t['reason']}" for t in summary["tasks"][:3])
        raise NoDataError(f"no station-day could be audited ({reasons})")
    if summary["n_failed"] or any(day["status"] != "ok" for day in summary["network"]):
        args.exit_status = EXIT_SOME_FAILED
    from gnssrel.pipeline.verdicts import firmware_at_fault  # deferred: as above

    common.flag_faults(args, [f"{s['station']} {s['date']}" for s in summaries
                              if s.get("kind") != "network-day" and firmware_at_fault(s, s.get("receiver_clocks"))])
    return summary


def _print_text(summary: dict) -> None:
    letters = in_system_order({s for t in summary["tasks"] for s in t["relativity_k"]})
    rows = []
    for t in summary["tasks"]:
        fits, pos = t["relativity_k"], t["position"]
        rows.append((t["station"], t["date"], t["status"] + (" (earlier run)" if t.get("skipped") else ""),
                     *(fmt_k(fits[s]["k"], fits[s]["sigma"]) if fits.get(s, {}).get("k") is not None else "-"
                       for s in letters),
                     fmt(pos["median_error_3d_m"]), fmt(pos["median_error_3d_m_without_periodic"]),
                     t.get("receiver_fixes_follow") or "-"))
    print(text_table(("station", "date", "status", *(f"k {s}" for s in letters),
                      "3-D error (m)", "without periodic (m)", "fixes follow"), rows))
    for t in summary["tasks"]:
        if t["status"] != "ok":
            print(f"  {t['station']} {t['date']} failed: {t['reason']}")
    for t in summary["tasks"]:
        survey = t.get("survey")
        if survey is not None:
            where = (f"east {fmt(survey.get('east_m'), '+.4f')} north {fmt(survey.get('north_m'), '+.4f')} "
                     f"up {fmt(survey.get('up_m'), '+.4f')} m from the header" if survey["status"] == "ok"
                     else f"{survey['status']}: {survey['reason']}")
            print(f"  survey {t['station']} {t['date']}: {where}")
    for station, r in (summary.get("survey_repeatability") or {}).items():
        print(f"  survey repeatability {station} over {r['n_days']} day(s): east {fmt(r['east_mm'], '.1f')} "
              f"north {fmt(r['north_mm'], '.1f')} up {fmt(r['up_mm'], '.1f')} mm (std of daily positions)")
    for day in summary["network"]:
        clocks = "; ".join(f"{s} k {fmt_k(c['k'], c['sigma'])} ({c['convention']})"
                           for s, c in day["clock_k"].items())
        print(f"network {day['date']}: relativity terms {day['status']}"
              + (f" ({day['reason']})" if day["reason"] else "")
              + (f"; precise minus broadcast clocks: {clocks}" if clocks else ""))
    print(f"{summary['n_tasks']} station-day(s): {summary['n_ok']} ok, {summary['n_failed']} failed, "
          f"{summary['n_skipped']} taken from an earlier run; results in {summary['output']}")
