"""`gnssrel simulate`: write the invented demo scenario (navigation, precise products, receiver logs)."""

from __future__ import annotations

import json
import logging

from gnssrel.errors import GnssrelInputError
from gnssrel.io.writers import to_json_text
from gnssrel.jobs import common
from gnssrel.simulate.scenario import DEFAULT_SEED
from gnssrel.text import fmt_span
from gnssrel.timescales import parse_time

HELP = "write an invented, self-consistent scenario: nav, SP3, clock, receiver logs and fixes"
DESCRIPTION = (
    "Write a complete invented scenario to a folder: a RINEX 3.04 mixed navigation file "
    "(GPS, Galileo, BeiDou), an SP3-d orbit/clock file and a RINEX clock 3.04 file from a "
    "fictitious analysis centre, and for each of two fictitious receivers a RINEX 3.04 "
    "observation file, its own position fixes (NMEA GGA) and its own satellite-clock table "
    "(CSV).  One receiver's firmware is correct; the other leaves out the periodic "
    "relativistic clock term.  scenario.json says which.  Same seed, same bytes.  "
    "With --receiver low-cost: two single-frequency low-cost modules instead (milliseconds of clock "
    "offset drifting ~1e-7 with one 1 ms step, C/N0-dependent noise, multipath, a few gross outliers "
    "listed in scenario.json, filtered fixes and their own clock bias/drift CSV; one doubles the "
    "periodic term).  "
    "With --stations N --days D: an invented campaign instead, N receivers (every second one "
    "faulty) logging each day, one folder per day, with campaign.csv listing each station-day's "
    "files and scenario.json the truth.  "
    "With --survey: one static geodetic station instead (24 h at 30 s by default) whose dual-frequency "
    "carrier phase carries the same terms as its code plus integer ambiguities per arc, phase wind-up "
    "and a few cycle slips (listed in scenario.json), with the station's position known to 0.1 mm: "
    "the invented truth for `gnssrel survey`.")

log = logging.getLogger(__name__)


def add_arguments(parser):
    parser.add_argument("--output", required=True, metavar="DIR", help="folder to write (created if needed)")
    parser.add_argument("--seed", type=int, default=DEFAULT_SEED, help=f"random seed (default {DEFAULT_SEED})")
    parser.add_argument("--hours", type=float, default=None, metavar="HOURS",
                        help="length of the receiver logs (default 3 h; 1 h per day in a campaign)")
    parser.add_argument("--stations", type=int, default=None, metavar="N",
                        help="write a campaign of N receivers (up to 8; default 2 with --days)")
    parser.add_argument("--days", type=int, default=None, metavar="D",
                        help="write a campaign of D consecutive days (default 1 with --stations)")
    parser.add_argument("--step", "--interval", dest="interval", type=float, default=None, metavar="SECONDS",
                        help="observation interval of the receiver logs (default 30 s; 1 s with --receiver low-cost)")
    parser.add_argument("--receiver", choices=("geodetic", "low-cost"), default="geodetic",
                        help="the receivers of the scenario: two geodetic dual-frequency receivers (default), or "
                             "two single-frequency low-cost modules (ms clock offset and drift with a 1 ms step, "
                             "C/N0-dependent noise, multipath, outliers, filtered fixes and their own clock series "
                             "CSV; one correct, one doubling the periodic term); default 0.5 h at 1 s")
    parser.add_argument("--survey", action="store_true",
                        help="write a static survey station instead: dual-frequency code and carrier phase "
                             "(ambiguities, wind-up, cycle slips), 24 h at 30 s by default, its position in "
                             "scenario.json to 0.1 mm")
    parser.add_argument("--clock-convention", choices=("excludes-periodic-and-j2", "igs"),
                        default="excludes-periodic-and-j2",
                        help="with --survey: what the precise clocks leave out: the periodic term (ICD form) and "
                             "the J2 term, which the user applies (default), or only -2 r.v/c^2 as an IGS "
                             "analysis (igs: the J2 term stays in the clocks)")
    parser.add_argument("--no-tide", dest="tide", action="store_false",
                        help="with --survey: a static station (default: it moves with the solid-Earth tide, "
                             "IERS 2010 eq. 7.5 degree 2, and its coordinates are conventional tide free)")
    common.add_json(parser, "print the scenario manifest as JSON on stdout instead of the text")


def run(args) -> dict:
    write = _campaign if args.stations is not None or args.days is not None else _scenario
    if getattr(args, "survey", False):
        write = _survey
    manifest, lines = write(args)
    if args.json:
        print(to_json_text(manifest))
    elif not args.quiet:
        print("\n".join(lines))
    log.debug("manifest: %s", json.dumps(manifest["files"]))
    return manifest


def _scenario(args) -> tuple[dict, list[str]]:
    # deferred: the scenario writers (a dozen modules) are needed by this command only (start-up of --help)
    from gnssrel.simulate.generate import write_scenario

    low_cost = args.receiver == "low-cost"
    hours = (0.5 if low_cost else 3.0) if args.hours is None else args.hours
    interval = (1.0 if low_cost else 30.0) if args.interval is None else args.interval
    manifest = write_scenario(args.output, seed=args.seed, hours=hours, interval_s=interval, receivers=args.receiver)
    lines = [(f"invented scenario: {len(manifest['files'])} files in {args.output}, "
              f"{fmt_span(parse_time(manifest['start'], 'GPST'), parse_time(manifest['end'], 'GPST'))}, "
              f"seed {args.seed}")]
    for r in manifest["receivers"]:
        state = "faulty: periodic term " + r["fault"]["mode"] if r["faulty"] else "correct firmware"
        extra = ""
        if r.get("kind") == "low-cost":
            extra = (f"; clock {r['clock_offset_s'] * 1e3:+.1f} ms drifting {r['clock_drift_s_per_s']:+.1e} s/s, "
                     f"1 ms step at {r['clock_steps'][0]['time']} GPST; {len(r['outliers'])} outliers")
        lines.append(f"  receiver {r['marker']}: {state}; its fixes are off by "
                     f"{r['fix_error_3d_m']['median']:.1f} m (median 3D){extra}")
    return manifest, lines


def _survey(args) -> tuple[dict, list[str]]:
    # deferred: as in _scenario
    from gnssrel.simulate.survey import SURVEY_HOURS
    from gnssrel.simulate.write_survey import write_survey

    if args.stations is not None or args.days is not None or args.receiver != "geodetic":
        raise GnssrelInputError("--survey: not with --stations/--days or --receiver low-cost (one geodetic station)")
    hours = SURVEY_HOURS if args.hours is None else args.hours
    interval = 30.0 if args.interval is None else args.interval
    manifest = write_survey(args.output, seed=args.seed, hours=hours, interval_s=interval, tide=args.tide,
                            clock_convention=args.clock_convention)
    s = manifest["survey"]
    x, y, z = s["marker_ecef_m"]
    return manifest, [
        (f"invented survey: {len(manifest['files'])} files in {args.output}, "
         f"{fmt_span(parse_time(manifest['start'], 'GPST'), parse_time(manifest['end'], 'GPST'))}, "
         f"{interval:g} s, seed {args.seed}"),
        (f"  station {s['station']}: marker at X {x:.4f} m, Y {y:.4f} m, Z {z:.4f} m (ECEF), antenna "
         f"{s['antenna_delta_hen_m'][0]:.4f} m above it; {s['arcs']} arcs, {len(s['cycle_slips'])} cycle slips; "
         f"{'moves with the solid-Earth tide' if s['solid_earth_tide'] else 'static (no tide)'}"),
        (f"  precise clocks: {manifest['products']['precise_clock_convention']}; a solution meets the truth "
         f"applying: {', '.join(s['expected']['terms_to_apply'])}")]


def _campaign(args) -> tuple[dict, list[str]]:
    # deferred: as in _scenario
    from gnssrel.simulate.campaign import DEFAULT_CAMPAIGN_HOURS, write_campaign

    hours = DEFAULT_CAMPAIGN_HOURS if args.hours is None else args.hours
    stations = 2 if args.stations is None else args.stations
    days = 1 if args.days is None else args.days
    if args.receiver != "geodetic":
        raise GnssrelInputError("--receiver low-cost: not with --stations/--days (campaigns have geodetic receivers)")
    interval = 30.0 if args.interval is None else args.interval
    manifest = write_campaign(args.output, stations, days, seed=args.seed, hours=hours, interval_s=interval)
    return manifest, [
        (f"invented campaign: {stations} stations x {days} days = {len(manifest['station_days'])} station-days, "
         f"{len(manifest['files'])} files in {args.output} (campaign.csv lists them), "
         f"{hours:g} h logs at {interval:g} s, seed {args.seed}"),
        (f"  faulty firmware (periodic term omitted): {', '.join(manifest['faulty_receivers']) or 'none'}; "
         f"correct: {', '.join(manifest['correct_receivers']) or 'none'}")]
