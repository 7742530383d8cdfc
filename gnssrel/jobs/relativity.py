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

from gnssrel.errors import GnssrelInputError, NoDataError
from gnssrel.jobs import common

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
    common.add_systems(parser)
    common.add_time_window(parser, DEFAULT_STEP_S)
    common.add_include_unhealthy(parser)
    common.add_rule(parser)
    common.add_outputs(parser, "per-epoch table (.csv, .parquet or .nc)")


def _epochs(nav, systems, args):
    from gnssrel.orbits.broadcast import time_grid

    start, end = common.navigation_window(args, nav, systems)
    common.check_grid_size(start, end, args.step)
    times = time_grid(start, end, args.step)
    if times.size < 3:
        if args.start or args.end:
            window = f"between --start and --end ({common.fmt_span(start, end)})"
        else:
            window = (f"in the default window {common.fmt_span(start, end)}, the span of the bulk of the "
                      f"navigation records' reference times in {common.nav_files(nav)}")
        raise GnssrelInputError(f"only {times.size} epoch{'s' if times.size != 1 else ''} every "
                                f"{args.step:g} s {window}: the proper-time integral needs at least 3 "
                                "(give a wider --start/--end or a smaller --step)")
    return times


def states_for(args, nav, systems, times, ledger=None):
    """Broadcast states, or precise ones carrying the broadcast elements (NaN where none).

    With a ``ledger``, the navigation records no state used are retired in it, and
    the SP3 reader's counts added with the records outside the epochs retired.
    """
    from gnssrel.jobs import accounting
    from gnssrel.orbits.broadcast import broadcast_states

    broadcast = broadcast_states(nav, times, systems=systems,
                                 include_unhealthy=args.include_unhealthy,
                                 rule=getattr(args, "rule", "post"))
    if ledger is not None:
        accounting.retire_navigation(ledger, nav, [broadcast], systems, times[0], times[-1],
                                     args.include_unhealthy)
    if not args.precise:
        return broadcast
    from gnssrel.io.sp3 import read_sp3
    from gnssrel.orbits.precise import precise_states

    sp3 = read_sp3(list(args.precise), systems=list(systems))
    if ledger is not None:
        ledger.merge(accounting.precise_ledger(sp3, "sp3_records", "position_ecef_m"))
        _retire_sp3_outside(ledger, sp3, times, systems)
    states = precise_states(sp3, times)
    aligned = broadcast[list(BROADCAST_ELEMENTS)].reindex(sv=states["sv"].values)
    for name in BROADCAST_ELEMENTS:
        states[name] = aligned[name]
    return states


def _retire_sp3_outside(ledger, sp3, times, systems):
    """SP3 records used: those the interpolation of the grid can reach; the others are outside."""
    from gnssrel.jobs import accounting

    accounting.retire_beyond_reach(ledger, sp3, "sp3_records", "position_ecef_m", times[0], times[-1],
                                   accounting.sp3_reach_s(sp3), systems)


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
    from gnssrel.jobs import accounting
    from gnssrel.relativity.engine import relativity_summary, relativity_terms

    common.check_outputs(args)
    nav, present = common.read_navigation_files(args.nav, common.parse_systems(args.systems))
    times = _epochs(nav, present, args)
    ledger = accounting.navigation_ledger(nav)
    states = states_for(args, nav, present, times, ledger)
    if not np.isfinite(states["position_ecef_m"].values).any():
        raise NoDataError(f"no satellite has a usable state in the window {common.fmt_span(times[0], times[-1])}; "
                          f"the navigation records: {common.describe_navigation_span(nav, present)}"
                          + (f"; precise orbits: {', '.join(map(str, args.precise))}" if args.precise else ""))
    ds = relativity_terms(states)
    summary = relativity_summary(ds)
    summary.update(start=times[0], end=times[-1], step_s=float(args.step), n_epochs=int(times.size),
                   time_scale="GPST", states="precise (SP3)" if args.precise else "broadcast",
                   include_unhealthy=bool(args.include_unhealthy), selection_rule=args.rule)
    summary["accounting"] = ledger.as_dict()
    return common.emit(args, summary, relativity_table(ds) if args.output else None, _print_text)


def _print_text(summary: dict) -> None:
    print(f"relativistic clock terms from {summary['states']} states: {summary['n_epochs']} epochs "
          f"every {summary['step_s']:g} s, {common.fmt_span(summary['start'], summary['end'])}")
    rows = []
    for letter in common.in_system_order(summary["by_system"]):
        row = summary["by_system"][letter]
        sats = [v for s, v in summary["satellites"].items() if s[0] == letter]
        periodic = max(v["periodic_max_abs_ns"] for v in sats)
        diffs = [v["icd_vs_state_max_diff_ns"] for v in sats if v["icd_vs_state_max_diff_ns"] is not None]
        rows.append((common.system_label(letter), row["satellites"], common.fmt(row["median_rate_total"], ".5e"),
                     common.fmt(row["median_us_per_day_total"], ".3f"), common.fmt(periodic, ".2f"),
                     common.fmt(max(diffs) if diffs else None, ".3f")))
    print(common.text_table(("system", "satellites", "rate vs TT (s/s)", "rate (µs/day)",
                             "max periodic (ns)", "max spec - state (ns)"), rows))
