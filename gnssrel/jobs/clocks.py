"""``gnssrel clocks``: broadcast versus precise satellite clocks, and which convention a clock follows.

Wiring only: read the navigation and precise clock files (SP3 or RINEX clock,
told apart by content), run :func:`gnssrel.clocks.compare.compare_clocks` and,
with ``--receiver-clocks``, :func:`gnssrel.clocks.firmware.check_receiver_clocks`;
write the tables and the summary.
"""

from __future__ import annotations

import logging

from gnssrel.errors import FileFormatError, GnssrelInputError
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
    import numpy as np
    import xarray as xr

    kinds = {precise_kind(p) for p in paths}
    if len(kinds) > 1:
        raise GnssrelInputError("--precise: give either SP3 files or RINEX clock files, not both")
    kind = kinds.pop()
    if kind == "sp3":
        from gnssrel.io.sp3 import read_sp3

        return read_sp3(list(paths), systems=systems), "SP3 clocks"
    from gnssrel.io.rinex_clock import read_rinex_clock

    parts = [read_rinex_clock(p, systems=systems)[["clock_s"]] for p in paths]
    ds = parts[0] if len(parts) == 1 else xr.concat(parts, dim="time", join="outer")
    _, first = np.unique(ds["time"].values, return_index=True)
    return ds.isel(time=np.sort(first)), "RINEX clock file"


def run(args) -> dict:
    if not args.precise and not args.receiver_clocks:
        raise GnssrelInputError("give --precise SP3|CLK files and/or --receiver-clocks FILE.csv")
    common.check_outputs(args)
    letters = common.parse_systems(args.systems)
    systems = list(letters) if letters else None
    start, end = common.time_window(args)
    nav, _ = common.read_navigation_files(args.nav, letters)
    summary: dict = {}
    table = None
    if args.precise:
        from gnssrel.clocks.compare import compare_clocks

        precise, source = read_precise_clocks(args.precise, systems)
        table, summary = compare_clocks(nav, precise, systems=systems, start=start, end=end,
                                        step_s=args.step, datum_method=args.datum,
                                        include_unhealthy=args.include_unhealthy,
                                        precise_source=f"{source} ({', '.join(map(str, args.precise))})")
    if args.receiver_clocks:
        from gnssrel.clocks.firmware import check_receiver_clocks
        from gnssrel.io.receiver_clocks import read_receiver_clocks

        receiver = read_receiver_clocks(args.receiver_clocks)
        if start is not None:
            receiver = receiver[receiver["time"] >= start]
        if end is not None:
            receiver = receiver[receiver["time"] <= end]
        rows, check = check_receiver_clocks(receiver, nav, systems=systems)
        summary["receiver_clocks"] = check
        if table is None:
            table = rows
    return common.emit(args, summary, table, _print_text)


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
