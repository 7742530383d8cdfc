"""``gnssrel clocks``: broadcast versus precise satellite clocks, and which convention a clock follows.

Wiring only: read the navigation and precise clock files (SP3 or RINEX clock,
told apart by content), run :func:`gnssrel.pipeline.stages.compare_clocks` and,
with ``--receiver-clocks``, :func:`gnssrel.clocks.firmware.check_receiver_clocks`;
write the tables and the summary.
"""

from __future__ import annotations

import logging

import numpy as np

from gnssrel.errors import GnssrelInputError, NoDataError
from gnssrel.jobs import common
from gnssrel.orbits.spans import describe_navigation_span, navigation_span
from gnssrel.text import fmt, fmt_sigma, fmt_span, in_system_order, system_label, text_table

HELP = "compare broadcast and precise satellite clocks; fit the periodic-term convention"
DESCRIPTION = (
    "Evaluate the broadcast clock of every satellite at the epochs of the precise clocks (SP3 or "
    "RINEX clock files), remove the per-epoch datum robustly, report per-satellite mean/std/RMS "
    "of precise minus broadcast, and fit the factor k of the periodic relativistic term in each "
    "system's clocks (k = 0: the clocks exclude the term, as broadcast polynomials do). With "
    "--receiver-clocks, check a receiver's own satellite clock corrections (CSV: time, "
    "time_scale, sv, clock_correction_s[, flags]) for the known faults.")

log = logging.getLogger(__name__)


def add_arguments(parser) -> None:
    parser.add_argument("nav", metavar="NAV", nargs="+", help="RINEX navigation file(s) of the day")
    parser.add_argument("--precise", metavar="SP3|CLK", nargs="+",
                        help="precise clocks: SP3 files (e.g. the day before and the day) or RINEX clock files")
    parser.add_argument("--receiver-clocks", metavar="FILE.csv",
                        help=f"a receiver's own satellite clock corrections: {common.RECEIVER_CLOCKS_FORMAT}")
    common.add_systems(parser)
    common.add_time_window(parser, None, "keep only precise epochs on multiples of this interval (e.g. 300)")
    parser.add_argument("--antex", metavar="ATX",
                        help="with SP3 files: ANTEX file whose satellite phase-centre offsets move the precise "
                             "orbits to the broadcast phase centre for the signal-in-space range error")
    parser.add_argument("--datum", choices=("robust", "epoch-median"), default="robust",
                        help="per-epoch datum: alternating median/mean (default) or the plain median")
    common.add_include_unhealthy(parser)
    common.add_rule(parser)
    common.add_outputs(parser, "per-satellite, per-epoch table (.csv, .parquet or .nc)")


def run(args) -> dict:
    # deferred: the stages pull xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.clocks.firmware import check_receiver_clocks
    from gnssrel.io.receiver_clocks import read_receiver_clocks
    from gnssrel.orbits.broadcast import broadcast_states
    from gnssrel.pipeline import accounting
    from gnssrel.pipeline.inputs import read_navigation_files, read_precise_clocks, receiver_rows_in_window
    from gnssrel.pipeline.stages import compare_clocks
    from gnssrel.pipeline.window import drop_excluded

    if not args.precise and not args.receiver_clocks:
        raise GnssrelInputError("give --precise SP3|CLK files and/or --receiver-clocks FILE.csv")
    if getattr(args, "antex", None) and not args.precise:
        raise GnssrelInputError("--antex moves precise orbits to the antenna phase centre: give --precise SP3 files")
    common.check_outputs(args)
    letters = common.parse_systems(args.systems)
    systems = list(letters) if letters else None
    start, end = common.time_window(args)
    nav, present = read_navigation_files(args.nav, letters)
    ledger = accounting.navigation_ledger(nav)
    states_used = []
    summary: dict = {}
    table = None
    if args.precise:
        precise, source = read_precise_clocks(args.precise, systems)
        item, variable = ("sp3_records", "position_ecef_m") if source == "SP3 clocks" else \
            ("clock_records", "clock_s")
        ledger.merge(accounting.precise_ledger(precise, item, variable))
        t = precise["time"].values
        if start is None and end is None:   # default: the bulk of the navigation records
            nav_start, nav_end = navigation_span(nav, present)
            if not ((t >= nav_start) & (t <= nav_end)).any():
                raise NoDataError(f"no overlap: the precise clocks ({fmt_span(t.min(), t.max())}) and "
                                  f"the navigation records, {describe_navigation_span(nav, present)}",
                                  args.precise[0])
            window = common.navigation_window(args, nav, present, precise=(precise,))  # pipeline.window
            if ((t >= window[0]) & (t <= window[1])).any():   # else the comparison says: another day?
                start, end = window
        precise = drop_excluded(precise, ledger, item, variable, args.include_unhealthy)  # E14/E18 as broadcast
        table, summary, states = compare_clocks(nav, precise, systems=systems, start=start, end=end,
                                                step_s=args.step, datum_method=args.datum, rule=args.rule,
                                                include_unhealthy=args.include_unhealthy,
                                                source=f"{source} ({', '.join(map(str, args.precise))})")
        keep = states["time"].values if states is not None else t[:0]
        accounting.retire_outside_window(ledger, precise, item, variable, keep, systems,
                                         reason=accounting.OUTSIDE_WINDOW if not args.step else
                                         "outside the time window or not on the --step grid")
        states_used.append(states)
        window = (keep[0], keep[-1])
        summary.update(_sisre_from_sp3(args, nav, precise, source, states, table, systems, ledger))
    if args.receiver_clocks:
        receiver = read_receiver_clocks(args.receiver_clocks)
        receiver = receiver_rows_in_window(receiver, args.receiver_clocks, start, end, systems,
                                           nav=nav, present=present)
        ledger.merge(accounting.ledger_of(receiver))
        rows, check = check_receiver_clocks(receiver, nav, systems=systems)
        summary["receiver_clocks"] = check
        if table is None:
            table = rows
        t = receiver["time"].to_numpy().astype("datetime64[ns]")
        times = np.unique(t)
        states_used.append(broadcast_states(nav, times, systems=present))
        window = (times[0], times[-1]) if not args.precise else (min(window[0], times[0]), max(window[1], times[-1]))
    accounting.retire_navigation(ledger, nav, states_used, present, window[0], window[1], args.include_unhealthy)
    summary["selection_rule"] = args.rule
    summary["accounting"] = ledger.as_dict()
    return common.emit(args, summary, table, _print_text)


def _sisre_from_sp3(args, nav, precise, source, states, table, systems, ledger) -> dict:
    """The signal-in-space range error when the precise files are SP3 (they hold the orbits too):
    the clock part from this command's comparison, the orbit part at the same epochs."""
    # deferred: the orbit stages pull xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.jobs.orbits import antenna_offsets, signal_in_space_error
    from gnssrel.orbits.compare import per_epoch_differences
    from gnssrel.orbits.precise import precise_states
    if source != "SP3 clocks" or states is None or "position_ecef_m" not in precise:
        if getattr(args, "antex", None):
            ledger.warn("--antex not used: the signal-in-space range error needs SP3 orbits "
                        "(or `gnssrel orbits --precise SP3 CLK --antex`)")
        return {}
    orbits = precise_states(precise, states["time"].values)
    orbits, antenna = antenna_offsets(getattr(args, "antex", None), orbits, ledger, states, nav)
    per_epoch = per_epoch_differences(states, orbits)
    out = signal_in_space_error(nav, None, states, orbits, per_epoch, systems, clock_table=table,
                                source="SP3 clocks")
    return {**out, "antenna_offsets": antenna} if out else {}


DATUM_WORDS = {"robust": "alternating per-epoch median and per-satellite mean",
               "epoch-median": "per-epoch median"}


def _print_text(summary: dict) -> None:
    if "by_system" in summary:
        span = fmt_span(summary["first_epoch_gpst"], summary["last_epoch_gpst"])
        print(f"precise minus broadcast satellite clocks: {summary['n_epochs']} epochs, {span}")
        print(f"precise clocks: {summary.get('precise_source', '?')}")
        rows = [(system_label(s), e["n_sat"], fmt(e["median_std_ns"], ".3f"),
                 fmt(e["max_std_ns"], ".3f"), fmt(e["convention_k"], ".3f"),
                 fmt_sigma(e["convention_k_sigma"]), e["convention"])
                for s, e in ((s, summary["by_system"][s]) for s in in_system_order(summary["by_system"]))]
        print(text_table(("system", "satellites", "median std (ns)", "max std (ns)",
                                 "k (periodic term)", "sigma k", "convention"), rows))
        print("k: fitted factor of the periodic term in the precise clocks (0: left out, as broadcast "
              "polynomials do; 1: included)")
    if summary.get("sisre"):
        from gnssrel.jobs.orbits import print_radial_and_sisre  # deferred: one table for two commands
        print_radial_and_sisre(summary)
    if summary.get("receiver_clocks"):
        print_receiver_clocks(summary["receiver_clocks"])


def print_receiver_clocks(check: dict) -> None:
    """The table of a receiver's own satellite-clock check (also used by ``gnssrel audit``)."""
    print("receiver's own satellite clock table: fitted factor k of the periodic term")
    rows = [(system_label(s), e["n_sat"], fmt(e["convention_k"], ".3f"),
             fmt_sigma(e["convention_k_sigma"]), f"{e['expected_k']:g}", e["status"],
             str(e["week_crossover"]))
            for s, e in ((s, check["by_system"][s]) for s in in_system_order(check["by_system"]))]
    print(text_table(("system", "satellites", "k (periodic term)", "sigma k", "expected k",
                             "status", "week crossover"), rows))
