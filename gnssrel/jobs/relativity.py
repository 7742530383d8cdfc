"""``gnssrel relativity``: every relativistic clock term of every satellite, per epoch.

Wiring only: read the navigation files, build the GPST epoch grid, make the
state histories (broadcast, or with ``--precise`` interpolated SP3 orbits that
take the broadcast e, sqrt(A), E for the specification form,
:func:`gnssrel.orbits.elements.with_broadcast_elements`), call
:func:`gnssrel.pipeline.stages.relativity_terms` and
:func:`~gnssrel.pipeline.stages.relativity_summary`, write the table and summary.
"""

from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from gnssrel.errors import NoDataError
from gnssrel.jobs import common
from gnssrel.orbits.spans import describe_navigation_span
from gnssrel.text import fmt, fmt_span, in_system_order, system_label, text_table

HELP = "relativistic clock terms per satellite and epoch: periodic, J2, rate, proper time"
DESCRIPTION = (
    "For every satellite and epoch compute the periodic relativistic clock term two ways "
    "(F e sqrt(A) sin E and -2 r.v/c^2), the J2 periodic term, the rate of the satellite's proper "
    "time against TT (velocity and gravity parts, positive = clock runs fast) and the proper-time "
    "integral along the orbit; summarise per satellite and system. States come from the broadcast "
    "ephemerides, or with --precise from SP3 orbits; satellites excluded by rule (the eccentric Galileo "
    "E14, E18) are left out of both unless --include-unhealthy. Times are GPST unless a scale is written "
    "after them (e.g. '2020-06-25T06:00 UTC').")

log = logging.getLogger(__name__)
DEFAULT_STEP_S = 30.0


def add_arguments(parser) -> None:
    parser.add_argument("nav", metavar="NAV", nargs="+", help="RINEX navigation file(s)")
    parser.add_argument("--precise", metavar="SP3", nargs="+",
                        help="SP3 orbit files: take the states from them (give the day before too)")
    common.add_systems(parser)
    common.add_time_window(parser, DEFAULT_STEP_S)
    common.add_include_unhealthy(parser)
    common.add_rule(parser)
    common.add_outputs(parser, "per-epoch table (.csv, .parquet or .nc)")


def read_precise_orbits(args, systems, ledger=None):
    """The --precise SP3 orbits (None without), the satellites excluded by rule left out and counted
    (gnssrel.pipeline.window.drop_excluded) unless --include-unhealthy, as in the broadcast path."""
    # deferred: the stages pull xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.io.sp3 import read_sp3
    from gnssrel.pipeline import accounting
    from gnssrel.pipeline.window import drop_excluded

    if not args.precise:
        return None
    sp3 = read_sp3(list(args.precise), systems=list(systems))
    if ledger is not None:
        ledger.merge(accounting.precise_ledger(sp3, "sp3_records", "position_ecef_m"))
    return drop_excluded(sp3, ledger, include_unhealthy=args.include_unhealthy)


def states_for(args, nav, systems, times, ledger=None, sp3=None):
    """Broadcast states, or precise ones carrying the broadcast elements (NaN where none).

    With a ``ledger``, the navigation records no state used are retired in it, and
    the SP3 records outside the reach of the epochs retired (``sp3``: from
    :func:`read_precise_orbits` with the same ledger; read here when not given).
    """
    # deferred: the stages pull xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.orbits.broadcast import broadcast_states
    from gnssrel.orbits.elements import with_broadcast_elements
    from gnssrel.orbits.precise import precise_states
    from gnssrel.pipeline import accounting

    broadcast = broadcast_states(nav, times, systems=systems, include_unhealthy=args.include_unhealthy,
                                 rule=getattr(args, "rule", "post"))
    if ledger is not None:
        accounting.retire_navigation(ledger, nav, [broadcast], systems, times[0], times[-1],
                                     args.include_unhealthy)
    if not args.precise:
        return broadcast
    if sp3 is None:
        sp3 = read_precise_orbits(args, systems, ledger)
    if ledger is not None:
        # SP3 records used: those the interpolation of the grid can reach; the others are outside
        accounting.retire_beyond_reach(ledger, sp3, "sp3_records", "position_ecef_m", times[0], times[-1],
                                       accounting.sp3_reach_s(sp3), systems)
    return with_broadcast_elements(precise_states(sp3, times), broadcast)


def relativity_table(ds):
    """Long table: one row per (time, sv) with a usable state; units in the column names."""
    # deferred: the relativity engine pulls xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.relativity.engine import TERM_VARIABLES

    n_t, n_s = ds.sizes["time"], ds.sizes["sv"]
    table = {"time": np.repeat(ds["time"].values, n_s), "sv": np.tile(ds["sv"].values.astype(str), n_t)}
    for name in TERM_VARIABLES:
        table[name] = ds[name].transpose("time", "sv").values.ravel()
    table["user_applies_periodic"] = np.tile(ds["user_applies_periodic"].values, n_t)
    frame = pd.DataFrame(table)
    return frame[np.isfinite(frame["periodic_state_s"])].reset_index(drop=True)


def run(args) -> dict:
    # deferred: the stages pull xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.pipeline import accounting
    from gnssrel.pipeline.inputs import read_navigation_files
    from gnssrel.pipeline.stages import relativity_summary, relativity_terms

    common.check_outputs(args)
    nav, present = read_navigation_files(args.nav, common.parse_systems(args.systems))
    ledger = accounting.navigation_ledger(nav)
    sp3 = read_precise_orbits(args, present, ledger)
    times = common.window_epochs(args, nav, present, precise=(sp3,))   # one window rule: pipeline.window
    states = states_for(args, nav, present, times, ledger, sp3)
    if not np.isfinite(states["position_ecef_m"].values).any():
        raise NoDataError(f"no satellite has a usable state in the window {fmt_span(times[0], times[-1])}; "
                          f"the navigation records: {describe_navigation_span(nav, present)}"
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
          f"every {summary['step_s']:g} s, {fmt_span(summary['start'], summary['end'])}")
    rows = []
    for letter in in_system_order(summary["by_system"]):
        row = summary["by_system"][letter]
        sats = [v for s, v in summary["satellites"].items() if s[0] == letter]
        periodic = max(v["periodic_max_abs_ns"] for v in sats)
        diffs = [v["icd_vs_state_max_diff_ns"] for v in sats if v["icd_vs_state_max_diff_ns"] is not None]
        rows.append((system_label(letter), row["satellites"], fmt(row["median_rate_total"], ".5e"),
                     fmt(row["median_us_per_day_total"], ".3f"), fmt(periodic, ".2f"),
                     fmt(max(diffs) if diffs else None, ".3f")))
    print(text_table(("system", "satellites", "median rate vs TT (s/s)", "median rate (µs/day)",
                             "max periodic (ns)", "max spec - state (ns)"), rows))

