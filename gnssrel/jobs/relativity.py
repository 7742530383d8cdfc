"""``gnssrel relativity``: every relativistic clock term of every satellite, per epoch.

Wiring only: read the navigation files, build the GPST epoch grid, make the
state histories (broadcast, or with ``--precise`` interpolated SP3 orbits that
take the broadcast e, sqrt(A), E for the specification form), call
:func:`gnssrel.relativity.engine.relativity_terms` and
:func:`~gnssrel.relativity.engine.relativity_summary`, write the table and summary.
"""

from __future__ import annotations

import logging

import numpy as np

from gnssrel.constants import SYSTEM_ORDER
from gnssrel.errors import GnssrelInputError, NoDataError

HELP = "relativistic clock terms per satellite and epoch: periodic, J2, rate, proper time"
DESCRIPTION = (
    "For every satellite and epoch compute the periodic relativistic clock term two ways "
    "(F e sqrt(A) sin E and -2 r.v/c^2), the J2 periodic term, the rate of the satellite's proper "
    "time against TT (velocity and gravity parts, positive = clock runs fast) and the proper-time "
    "integral along the orbit; summarise per satellite and system. States come from the broadcast "
    "ephemerides, or with --precise from SP3 orbits. Times are GPST unless a scale is written "
    "after them (e.g. '2020-06-25T06:00 UTC').")

log = logging.getLogger(__name__)
DEFAULT_STEP_S = 30.0
BROADCAST_ELEMENTS = ("eccentricity", "sqrt_a_sqrt_m", "eccentric_anomaly_rad", "inclination_rad",
                      "argument_of_latitude_rad")
TABLE_VARIABLES = ("periodic_icd_s", "periodic_state_s", "periodic_diff_s", "j2_periodic_s",
                   "rate_velocity", "rate_gravity", "rate_total", "proper_time_offset_s")


def add_arguments(parser) -> None:
    parser.add_argument("nav", metavar="NAV", nargs="+", help="RINEX navigation file(s)")
    parser.add_argument("--precise", metavar="SP3", nargs="+",
                        help="SP3 orbit files: take the states from them (give the day before too)")
    parser.add_argument("--systems", default=SYSTEM_ORDER, metavar="LETTERS",
                        help=f"systems to include, e.g. GE (default: {SYSTEM_ORDER})")
    parser.add_argument("--start", metavar="ISO", help="first epoch (default scale GPST; "
                        "default: the first reference time of the navigation data)")
    parser.add_argument("--end", metavar="ISO", help="last epoch (default scale GPST; "
                        "default: the last reference time of the navigation data)")
    parser.add_argument("--step", type=float, default=DEFAULT_STEP_S, metavar="SECONDS",
                        help=f"epoch interval (default {DEFAULT_STEP_S:g} s)")
    parser.add_argument("--include-unhealthy", action="store_true",
                        help="also use records flagged unhealthy (e.g. the eccentric Galileo E14, E18)")
    parser.add_argument("--output", metavar="FILE", help="per-epoch table (.csv, .parquet or .nc)")
    parser.add_argument("--summary", metavar="FILE.json", help="write the summary as JSON")
    parser.add_argument("--json", action="store_true", help="print the summary as JSON")


def _systems(args) -> str:
    from gnssrel.io.writers import check_output_suffix

    if args.output:
        check_output_suffix(args.output)
    if args.summary:
        check_output_suffix(args.summary, allowed=(".json",))
    systems = "".join(args.systems.split()).upper()
    unknown = sorted(set(systems) - set(SYSTEM_ORDER))
    if not systems or unknown:
        raise GnssrelInputError(f"--systems: unknown letters {''.join(unknown) or '(none given)'}; "
                                f"use some of {SYSTEM_ORDER}")
    if not args.step > 0:
        raise GnssrelInputError(f"--step must be a positive number of seconds, not {args.step:g}")
    return systems


def _epochs(nav, systems, args):
    from gnssrel.orbits.broadcast import time_grid
    from gnssrel.timescales import parse_time

    refs = np.concatenate([np.asarray(nav.ephemerides[s]["toe" if s != "R" else "toc"])
                           .astype("datetime64[ns]") for s in systems])
    start = parse_time(args.start, "GPST") if args.start else refs.min()
    end = parse_time(args.end, "GPST") if args.end else refs.max()
    if end < start:
        raise GnssrelInputError(f"--end ({end}) is before --start ({start})")
    times = time_grid(start, end, args.step)
    if times.size < 3:
        raise GnssrelInputError("fewer than 3 epochs between --start and --end: the proper-time "
                                "integral needs at least 3")
    return times


def states_for(args, nav, systems, times):
    """Broadcast states, or precise ones carrying the broadcast elements (NaN where none)."""
    from gnssrel.orbits.broadcast import broadcast_states

    broadcast = broadcast_states(nav, times, systems=systems,
                                 include_unhealthy=args.include_unhealthy)
    if not args.precise:
        return broadcast
    from gnssrel.io.sp3 import read_sp3
    from gnssrel.orbits.precise import precise_states

    sp3 = read_sp3(list(args.precise), systems=list(systems))
    states = precise_states(sp3, times)
    aligned = broadcast[list(BROADCAST_ELEMENTS)].reindex(sv=states["sv"].values)
    for name in BROADCAST_ELEMENTS:
        states[name] = aligned[name]
    return states


def relativity_table(ds):
    """Long table: one row per (time, sv) with a usable state; units in the column names."""
    import pandas as pd

    n_t, n_s = ds.sizes["time"], ds.sizes["sv"]
    table = {"time": np.repeat(ds["time"].values, n_s), "sv": np.tile(ds["sv"].values.astype(str), n_t)}
    for name in TABLE_VARIABLES:
        table[name] = ds[name].transpose("time", "sv").values.ravel()
    table["user_applies_periodic"] = np.tile(ds["user_applies_periodic"].values, n_t)
    frame = pd.DataFrame(table)
    return frame[np.isfinite(frame["periodic_state_s"])].reset_index(drop=True)


def run(args) -> dict:
    from gnssrel.io import writers
    from gnssrel.io.rinex_nav import NavigationData, read_navigation
    from gnssrel.relativity.engine import relativity_summary, relativity_terms

    systems = _systems(args)
    items = [read_navigation(p, systems=list(systems)) for p in args.nav]
    nav = items[0] if len(items) == 1 else NavigationData.merge(items)
    present = "".join(s for s in systems if s in nav.ephemerides and len(nav.ephemerides[s]))
    if not present:
        raise NoDataError(f"no records of systems {systems} in the navigation data", args.nav[0])
    times = _epochs(nav, present, args)
    states = states_for(args, nav, present, times)
    if not np.isfinite(states["position_ecef_m"].values).any():
        raise NoDataError("no satellite has a usable state between --start and --end", args.nav[0])
    ds = relativity_terms(states)
    summary = relativity_summary(ds)
    summary.update(start=times[0], end=times[-1], step_s=float(args.step), n_epochs=int(times.size),
                   time_scale="GPST", states="precise (SP3)" if args.precise else "broadcast",
                   include_unhealthy=bool(args.include_unhealthy))
    if args.output:
        writers.write_table(relativity_table(ds), args.output)
    if args.summary:
        writers.write_json(summary, args.summary)
    if args.json:
        print(writers.to_json_text(summary))
    elif not getattr(args, "quiet", False):
        _print_text(summary)
    return summary


def _print_text(summary: dict) -> None:
    print(f"relativity from {summary['states']} states, {summary['n_epochs']} epochs "
          f"({summary['start']} .. {summary['end']} GPST)")
    print(f"{'sys':3} {'sats':>4} {'rate':>12} {'us/day':>8} {'max periodic ns':>16} {'max icd-state ns':>17}")
    for letter, row in summary["by_system"].items():
        sats = [v for s, v in summary["satellites"].items() if s[0] == letter]
        periodic = max(v["periodic_max_abs_ns"] for v in sats)
        diff = max(v["icd_vs_state_max_diff_ns"] for v in sats)
        print(f"{letter:3} {row['satellites']:4d} {row['median_rate_total']:12.5e} "
              f"{row['median_us_per_day_total']:8.3f} {periodic:16.2f} {diff:17.3f}")
