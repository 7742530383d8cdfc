"""``gnssrel clocks``: broadcast versus precise satellite clocks, and which convention a clock follows.

Wiring only: read the navigation and precise clock files (SP3 or RINEX clock,
told apart by content), run :func:`gnssrel.clocks.compare.compare_clocks` and,
with ``--receiver-clocks``, :func:`gnssrel.clocks.firmware.check_receiver_clocks`;
write the tables and the summary.
"""

from __future__ import annotations

import logging

import numpy as np

from gnssrel.errors import FileFormatError, GnssrelInputError, NoDataError
from gnssrel.jobs import common

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
                        help="a receiver's own satellite clock corrections (see gnssrel.io.receiver_clocks)")
    common.add_systems(parser)
    common.add_time_window(parser, None, "keep only precise epochs on multiples of this interval (e.g. 300)")
    parser.add_argument("--datum", choices=("robust", "epoch-median"), default="robust",
                        help="per-epoch datum: alternating median/mean (default) or the plain median")
    common.add_include_unhealthy(parser)
    common.add_rule(parser)
    common.add_outputs(parser, "per-satellite, per-epoch table (.csv, .parquet or .nc)")


def precise_kind(path) -> str:
    """"sp3" or "clock" from the file's first line (not its name)."""
    from gnssrel.io.opening import read_bytes

    first = read_bytes(path)[:400].decode("ascii", errors="replace").splitlines()
    line = first[0] if first else ""
    if line[:2] in ("#a", "#b", "#c", "#d"):
        return "sp3"
    # RINEX clock: file type "C" in column 21 (2.x, 3.00-3.02) or 22 (3.04), label from column 61/66.
    if "RINEX VERSION / TYPE" in line and "C" in line[20:22]:
        return "clock"
    raise FileFormatError("neither an SP3 file (first line '#c'/'#d') nor a RINEX clock file "
                          "(type C in RINEX VERSION / TYPE)", path, 1, line)


def read_precise_clocks(paths, systems=None):
    """Read SP3 or RINEX clock files (all of one kind) into a Dataset with ``clock_s`` (time, sv)."""
    import xarray as xr

    from gnssrel.jobs.accounting import gather, ledger_of, unique_keys

    kinds = {precise_kind(p) for p in paths}
    if len(kinds) > 1:
        raise GnssrelInputError("--precise: give either SP3 files or RINEX clock files, not both")
    kind = kinds.pop()
    if kind == "sp3":
        from gnssrel.io.sp3 import read_sp3

        return unique_keys(read_sp3(list(paths), systems=systems), "sp3_records", "position_ecef_m"), "SP3 clocks"
    from gnssrel.io.rinex_clock import read_rinex_clock

    parts = [precise_ledger_attached(read_rinex_clock(p, systems=systems)) for p in paths]
    if len(parts) == 1:
        return unique_keys(parts[0], "clock_records", "clock_s"), "RINEX clock file"
    ledger = gather(*(ledger_of(part) for part in parts))
    ds = xr.concat([part[["clock_s"]] for part in parts], dim="time", join="outer")
    ds.attrs = {"accounting": ledger.as_dict()}
    return unique_keys(ds, "clock_records", "clock_s"), "RINEX clock file"


def precise_ledger_attached(ds):
    """A RINEX clock Dataset (``clock_s`` only) carrying its reader's counts, or counts of its values."""
    from gnssrel.jobs.accounting import precise_ledger

    out = ds[["clock_s"]]
    out.attrs = dict(ds.attrs)
    out.attrs["accounting"] = precise_ledger(ds, "clock_records", "clock_s").as_dict()
    return out


def run(args) -> dict:
    from gnssrel.jobs import accounting

    if not args.precise and not args.receiver_clocks:
        raise GnssrelInputError("give --precise SP3|CLK files and/or --receiver-clocks FILE.csv")
    common.check_outputs(args)
    letters = common.parse_systems(args.systems)
    systems = list(letters) if letters else None
    start, end = common.time_window(args)
    nav, present = common.read_navigation_files(args.nav, letters)
    ledger = accounting.navigation_ledger(nav)
    states_used = []
    summary: dict = {}
    table = None
    if args.precise:
        from gnssrel.clocks.compare import compare_clocks, select_epochs
        from gnssrel.orbits.broadcast import broadcast_states

        precise, source = read_precise_clocks(args.precise, systems)
        item, variable = ("sp3_records", "position_ecef_m") if source == "SP3 clocks" else \
            ("clock_records", "clock_s")
        ledger.merge(accounting.precise_ledger(precise, item, variable))
        t = precise["time"].values
        if start is None and end is None:   # default: the bulk of the navigation records
            nav_start, nav_end = common.navigation_span(nav, present)
            if not ((t >= nav_start) & (t <= nav_end)).any():
                raise NoDataError(f"no overlap: the precise clocks ({common.fmt_span(t.min(), t.max())}) and "
                                  f"the navigation records, {common.describe_navigation_span(nav, present)}",
                                  args.precise[0])
        keep = t[select_epochs(t, start, end, args.step)]
        states = broadcast_states(nav, keep, systems=present, include_unhealthy=args.include_unhealthy,
                                  rule=args.rule) if keep.size else None
        table, summary = compare_clocks(nav, precise, systems=systems, start=start, end=end,
                                        step_s=args.step, datum_method=args.datum, states=states,
                                        include_unhealthy=args.include_unhealthy,
                                        precise_source=f"{source} ({', '.join(map(str, args.precise))})")
        accounting.retire_outside_window(ledger, precise, item, variable, keep, systems,
                                         reason=accounting.OUTSIDE_WINDOW if not args.step else
                                         "outside the time window or not on the --step grid")
        states_used.append(states)
        window = (keep[0], keep[-1])
    if args.receiver_clocks:
        from gnssrel.clocks.firmware import check_receiver_clocks
        from gnssrel.io.receiver_clocks import read_receiver_clocks

        receiver = read_receiver_clocks(args.receiver_clocks)
        receiver = receiver_rows_in_window(receiver, args.receiver_clocks, start, end, systems,
                                           nav=nav, present=present)
        ledger.merge(accounting.ledger_of(receiver))
        rows, check = check_receiver_clocks(receiver, nav, systems=systems)
        summary["receiver_clocks"] = check
        if table is None:
            table = rows
        t = receiver["time"].to_numpy().astype("datetime64[ns]")
        from gnssrel.orbits.broadcast import broadcast_states

        times = np.unique(t)
        states_used.append(broadcast_states(nav, times, systems=present))
        window = (times[0], times[-1]) if not args.precise else (min(window[0], times[0]), max(window[1], times[-1]))
    accounting.retire_navigation(ledger, nav, states_used, present, window[0], window[1], args.include_unhealthy)
    summary["selection_rule"] = args.rule
    summary["accounting"] = ledger.as_dict()
    return common.emit(args, summary, table, _print_text)


def receiver_rows_in_window(receiver, path, start, end, systems, nav=None, present=None):
    """The rows of a receiver clock table inside [start, end] and of the requested systems; the
    others retired with their reason in the returned table's ``attrs["accounting"]``.
    No row left: a message naming the file and the real cause (exit 2)."""
    from gnssrel.jobs import accounting

    rows_ledger = accounting.gather(accounting.ledger_of(receiver))
    letters = receiver["sv"].astype(str).str[0].to_numpy()
    for letter in np.unique(letters):
        accounting._ensure_counted(rows_ledger, "receiver_clock_rows", str(letter),
                                   int((letters == letter).sum()))
    t = receiver["time"].to_numpy().astype("datetime64[ns]")
    in_window = np.ones(t.size, bool)
    if start is not None:
        in_window &= t >= np.datetime64(start, "ns")
    if end is not None:
        in_window &= t <= np.datetime64(end, "ns")
    wanted = np.isin(letters, list(systems)) if systems else np.ones(t.size, bool)
    for letter in np.unique(letters):
        own = letters == letter
        rows_ledger.retire("receiver_clock_rows", str(letter), accounting.NOT_REQUESTED, int((own & ~wanted).sum()))
        rows_ledger.retire("receiver_clock_rows", str(letter), accounting.OUTSIDE_WINDOW,
                           int((own & wanted & ~in_window).sum()))
    keep = in_window & wanted
    if not keep.any():
        span = common.fmt_span(t.min(), t.max()) if t.size else "no rows"
        if not wanted.any():
            why = (f"it holds no row of the requested systems {''.join(systems)} (its systems: "
                   f"{''.join(common.in_system_order(set(letters)))})")
        else:
            window = common.fmt_span(start if start is not None else t.min(), end if end is not None else t.max())
            why = f"no overlap: its rows span {span}, the window is {window}"
        raise NoDataError(f"the receiver clock table cannot be checked: {why}", path)
    if nav is not None and present:
        nav_start, nav_end = common.navigation_span(nav, present)
        half_day = np.timedelta64(12, "h")
        if not ((t[keep] >= nav_start - half_day) & (t[keep] <= nav_end + half_day)).any():
            raise NoDataError(f"no overlap: the receiver clock table's rows ({common.fmt_span(t.min(), t.max())}) "
                              f"and the navigation records, {common.describe_navigation_span(nav, present)}", path)
    out = receiver[keep].copy()
    out.attrs = {**receiver.attrs, "accounting": rows_ledger.as_dict()}
    return out


DATUM_WORDS = {"robust": "alternating per-epoch median and per-satellite mean",
               "epoch-median": "per-epoch median"}


def _print_text(summary: dict) -> None:
    if "by_system" in summary:
        span = common.fmt_span(summary["first_epoch_gpst"], summary["last_epoch_gpst"])
        print(f"precise minus broadcast satellite clocks: {summary['n_epochs']} epochs, {span}")
        print(f"precise clocks: {summary.get('precise_source', '?')}")
        rows = [(common.system_label(s), e["n_sat"], common.fmt(e["median_std_ns"], ".3f"),
                 common.fmt(e["max_std_ns"], ".3f"), common.fmt(e["convention_k"], ".3f"),
                 common.fmt_sigma(e["convention_k_sigma"]), e["convention"])
                for s, e in ((s, summary["by_system"][s]) for s in common.in_system_order(summary["by_system"]))]
        print(common.text_table(("system", "satellites", "median std (ns)", "max std (ns)",
                                 "k (periodic term)", "sigma k", "convention"), rows))
        print("k: fitted factor of the periodic term in the precise clocks (0: left out, as broadcast "
              "polynomials do; 1: included)")
    if summary.get("receiver_clocks"):
        print_receiver_clocks(summary["receiver_clocks"])


def print_receiver_clocks(check: dict) -> None:
    """The table of a receiver's own satellite-clock check (also used by ``gnssrel audit``)."""
    print("receiver's own satellite clock table: fitted factor k of the periodic term")
    rows = [(common.system_label(s), e["n_sat"], common.fmt(e["convention_k"], ".3f"),
             common.fmt_sigma(e["convention_k_sigma"]), f"{e['expected_k']:g}", e["status"],
             str(e["week_crossover"]))
            for s, e in ((s, check["by_system"][s]) for s in common.in_system_order(check["by_system"]))]
    print(common.text_table(("system", "satellites", "k (periodic term)", "sigma k", "expected k",
                             "status", "week crossover"), rows))
