"""What every subcommand shares: the common options, their checks, the navigation input, output.

A job calls :func:`add_time_window`, :func:`add_outputs` etc. in its
``add_arguments`` and :func:`check_outputs`, :func:`parse_systems`,
:func:`read_navigation_files`, :func:`time_window` and :func:`emit` in ``run``,
so option names, defaults, messages and checks are the same in every command.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import SYSTEM_ORDER
from gnssrel.errors import GnssrelInputError, NoDataError

SYSTEMS_HELP = f"systems to use, letters of {SYSTEM_ORDER}, e.g. GE (default: every system in the files)"
START_HELP = ("first epoch, GPST unless a scale follows (e.g. '2020-06-25T06:00 UTC'); "
              "default: the start of the data")
END_HELP = "last epoch, same form as --start; default: the end of the data"
JSON_HELP = "print the summary as JSON on stdout instead of the text table"
SUMMARY_HELP = "write the summary as JSON to this file"
SIGMA_FLOOR = 0.001
"""Uncertainties below this print as '< 0.001' rather than as a misleading 0.000."""


def add_systems(parser) -> None:
    parser.add_argument("--systems", default=None, metavar="LETTERS", help=SYSTEMS_HELP)


def add_time_window(parser, step_default: float | None = 30.0, step_help: str | None = None) -> None:
    parser.add_argument("--start", metavar="TIME", help=START_HELP)
    parser.add_argument("--end", metavar="TIME", help=END_HELP)
    if step_help is not False:
        parser.add_argument("--step", type=float, default=step_default, metavar="SECONDS",
                            help=step_help or f"epoch interval (default {step_default:g} s)")


def add_include_unhealthy(parser) -> None:
    parser.add_argument("--include-unhealthy", action="store_true",
                        help="also use records flagged unhealthy and satellites excluded by rule "
                             "(e.g. the eccentric Galileo E14, E18)")


def add_rule(parser) -> None:
    """``--rule post|receiver``: the broadcast record-selection rule (gnssrel.orbits.selection)."""
    from gnssrel.orbits.selection import DEFAULT_RULE, RULE_HELP, RULE_NAMES

    parser.add_argument("--rule", choices=RULE_NAMES, default=DEFAULT_RULE, help=RULE_HELP)


def add_outputs(parser, table_help: str = "table to write (.csv, .parquet or .nc)") -> None:
    parser.add_argument("--output", metavar="FILE", help=table_help)
    parser.add_argument("--summary", metavar="FILE.json", help=SUMMARY_HELP)
    add_json(parser)


def add_json(parser, help_text: str = JSON_HELP) -> None:
    parser.add_argument("--json", action="store_true", help=help_text)


def check_outputs(args) -> None:
    """Refuse output names we cannot write before any work is done."""
    from gnssrel.io.writers import check_output_suffix

    for name in ("output", "positions"):
        if getattr(args, name, None):
            check_output_suffix(getattr(args, name))
    if getattr(args, "summary", None):
        check_output_suffix(args.summary, allowed=(".json",))
    step = getattr(args, "step", None)
    if step is not None and not step > 0:
        raise GnssrelInputError(f"--step must be a positive number of seconds, not {step:g}")


def parse_systems(text: str | None) -> str | None:
    """``"ge"`` -> ``"GE"``; None stays None (all systems); unknown letters are refused."""
    if text is None:
        return None
    systems = "".join(text.split()).upper()
    unknown = sorted(set(systems) - set(SYSTEM_ORDER))
    if not systems or unknown:
        raise GnssrelInputError(f"--systems: unknown letters {''.join(unknown) or '(none given)'}; "
                                f"use some of {SYSTEM_ORDER}")
    return "".join(dict.fromkeys(systems))


def read_navigation_files(paths, systems: str | None = None):
    """Read and merge navigation files; return (nav, the requested systems present in it)."""
    from gnssrel.io.rinex_nav import NavigationData, read_navigation

    wanted = systems or SYSTEM_ORDER
    items = [read_navigation(p, systems=list(wanted)) for p in paths]
    nav = items[0] if len(items) == 1 else NavigationData.merge(items)
    present = "".join(s for s in wanted if s in nav.ephemerides and len(nav.ephemerides[s]))
    if not present:
        raise NoDataError(f"no records of systems {wanted} in the navigation data", paths[0])
    return nav, present


MAX_GRID_EPOCHS = 11_520
"""Largest epoch grid a command builds (4 days at 30 s); beyond it the user is asked for --step."""
ADJACENT_DAY_SHARE = 0.02
"""A day next to the densest one belongs to the bulk of the records when it holds at least this share
of the densest day's records (a daily file's records of 00:00 the next day do; one garbled record does not)."""


def _reference_times(nav, systems: str) -> np.ndarray:
    refs = [np.asarray(nav.ephemerides[s]["toe" if s != "R" else "toc"]).astype("datetime64[ns]")
            for s in systems if s in nav.ephemerides]
    refs = np.concatenate(refs) if refs else np.array([], dtype="datetime64[ns]")
    return refs[~np.isnat(refs)]


def _bulk_days(refs: np.ndarray) -> np.ndarray:
    """The days holding the bulk of the reference times: the densest day and its neighbours
    in an unbroken run, each with at least ADJACENT_DAY_SHARE of the densest day's records."""
    days, counts = np.unique(refs.astype("datetime64[D]"), return_counts=True)
    best = int(np.argmax(counts))
    floor = max(1.0, ADJACENT_DAY_SHARE * counts[best])
    lo = hi = best
    one = np.timedelta64(1, "D")
    while lo > 0 and days[lo - 1] == days[lo] - one and counts[lo - 1] >= floor:
        lo -= 1
    while hi < days.size - 1 and days[hi + 1] == days[hi] + one and counts[hi + 1] >= floor:
        hi += 1
    return days[lo:hi + 1]


def navigation_span(nav, systems: str) -> tuple[np.datetime64, np.datetime64]:
    """First and last reference time (toe; t_b for GLONASS) of the bulk of the records, GPST.

    The bulk: the day holding most records and the adjacent days that hold a fair
    share (:func:`_bulk_days`), so a single record with a garbled week or date does
    not stretch the default window over months; records outside are not used (the
    accounting counts them as outside the time window).
    """
    refs = _reference_times(nav, systems)
    if refs.size == 0:
        raise NoDataError(f"no record of systems {systems} has a reference time", getattr(nav, "path", None))
    days = _bulk_days(refs)
    bulk = refs[np.isin(refs.astype("datetime64[D]"), days)]
    return bulk.min(), bulk.max()


def describe_navigation_span(nav, systems: str) -> str:
    """'2020-06-25 00:00:00 to 23:59:44 GPST (the bulk of the records of FILE)' for messages."""
    start, end = navigation_span(nav, systems)
    return f"{fmt_span(start, end)} (the bulk of the records' reference times in {nav_files(nav)})"


def nav_files(nav) -> str:
    """The navigation file name(s) for a message."""
    paths = (getattr(nav, "header", {}) or {}).get("merged_from") or [getattr(nav, "path", None)]
    return ", ".join(str(p) for p in paths if p is not None) or "the navigation data"


def navigation_window(args, nav, systems: str):
    """(start, end) GPST from --start/--end, else the bulk of the navigation records' span;
    a window that misses the records' span altogether is refused naming both spans."""
    from gnssrel.timescales import parse_time

    span = navigation_span(nav, systems)
    start = parse_time(args.start, "GPST") if getattr(args, "start", None) else span[0]
    end = parse_time(args.end, "GPST") if getattr(args, "end", None) else span[1]
    if (start > span[1] or end < span[0]) and not (getattr(args, "start", None) and getattr(args, "end", None)
                                                   and end < start):
        given = " and ".join(f"--{k} {getattr(args, k)}" for k in ("start", "end") if getattr(args, k, None))
        raise NoDataError(f"no overlap: the window asked for ({given}) and the navigation records, "
                          f"{describe_navigation_span(nav, systems)}, have no time in common")
    return time_window(args, span[0], span[1])


def check_grid_size(start, end, step_s: float, what: str = "the window") -> None:
    """Refuse a grid of more than MAX_GRID_EPOCHS epochs, with the way out in the message."""
    span_s = (np.datetime64(end, "ns") - np.datetime64(start, "ns")) / np.timedelta64(1, "s")
    n = int(span_s // step_s) + 1 if span_s >= 0 else 0
    if n > MAX_GRID_EPOCHS:
        raise GnssrelInputError(
            f"{what} ({fmt_span(start, end)}) at {step_s:g} s would be {n} epochs, more than the "
            f"{MAX_GRID_EPOCHS} gnssrel computes at once: give a larger --step (e.g. "
            f"{np.ceil(span_s / MAX_GRID_EPOCHS / 30) * 30:g}) or a shorter --start/--end")


def time_window(args, default_start=None, default_end=None):
    """(start, end) in GPST from --start/--end, falling back to the defaults given."""
    from gnssrel.timescales import parse_time

    start = parse_time(args.start, "GPST") if getattr(args, "start", None) else default_start
    end = parse_time(args.end, "GPST") if getattr(args, "end", None) else default_end
    if start is not None and end is not None and end < start:
        raise GnssrelInputError(f"--end ({end}) is before --start ({start})")
    return start, end


def emit(args, summary: dict, table=None, print_text=None) -> dict:
    """Write --output and --summary (atomically), then print JSON or the job's text table."""
    from gnssrel.io import writers

    if getattr(args, "output", None) and table is not None:
        writers.write_table(table, args.output)
    if getattr(args, "summary", None):
        writers.write_json(summary, args.summary)
    if getattr(args, "json", False):
        print(writers.to_json_text(summary))
    elif print_text is not None and not getattr(args, "quiet", False):
        from gnssrel.jobs.accounting import print_block

        print_text(summary)
        print_block(summary, verbose=bool(getattr(args, "verbose", 0)))
    return summary


def fmt(value, spec: str = ".2f") -> str:
    """A number for a text table, or '-' where there is none."""
    try:
        if value is None or (isinstance(value, float) and np.isnan(value)):
            return "-"
        text = format(value, spec)
    except (TypeError, ValueError):
        return "-"
    if text.startswith("-") and text[1:2].isdigit():
        try:
            if float(text) == 0:
                return text[1:]                      # '-0.000' reads as a sign that is not there
        except ValueError:
            pass
    return text


def fmt_sigma(sigma, digits: int = 3) -> str:
    """An uncertainty: '-' when unknown, '< 0.001' when it would print as zero."""
    if sigma is None or not np.isfinite(sigma):
        return "-"
    floor = 10.0 ** -digits
    return f"< {floor:.{digits}f}" if abs(sigma) < floor / 2 else f"{abs(sigma):.{digits}f}"


def fmt_k(k, sigma, digits: int = 3) -> str:
    """A fitted factor with its uncertainty: '1.095 ± 0.093', '1.000 (σ < 0.001)', '0.200 (σ -)'."""
    value = fmt(None if k is None else round(float(k), digits) + 0.0, f".{digits}f")  # no '-0.000'
    text = fmt_sigma(sigma, digits)
    return f"{value} ± {text}" if text[0].isdigit() else f"{value} (σ {text})"


def fmt_span(start, end) -> str:
    """'2020-06-25 06:00:00 to 2020-06-25 08:00:00 GPST' (the date once when both share it)."""
    a, b = fmt_time(start).replace("T", " "), fmt_time(end).replace("T", " ")
    if a[:10] == b[:10]:
        b = b[11:]
    return f"{a} to {b} GPST"


def fmt_time(t) -> str:
    """A GPST instant for the terminal: to the second, or to the ns where it has a fraction."""
    t = np.datetime64(t, "ns")
    whole = t.astype("datetime64[s]")
    return str(whole) if whole == t else str(t)


def in_system_order(letters) -> list[str]:
    """System letters in the order gnssrel shows them (G E C J R)."""
    return sorted(letters, key=lambda s: SYSTEM_ORDER.index(s) if s in SYSTEM_ORDER else 99)


def system_label(letter: str) -> str:
    """'G GPS' for the first column of the text tables."""
    from gnssrel.constants import SYSTEMS

    system = SYSTEMS.get(letter)
    return f"{letter} {system.name}" if system else letter


def _numeric(cell: str) -> bool:
    try:
        float(cell.removeprefix("< "))
        return True
    except ValueError:
        return cell == "-"


def text_table(headers, rows) -> str:
    """Aligned columns for the terminal: numeric columns right-aligned, text left-aligned.

    ``rows`` hold cells already formatted (see :func:`fmt`); the headers carry the units.
    """
    cells = [list(map(str, headers))] + [list(map(str, r)) for r in rows]
    n = len(headers)
    widths = [max(len(row[k]) for row in cells) for k in range(n)]
    right = [bool(rows) and all(_numeric(row[k]) for row in cells[1:]) for k in range(n)]
    lines = ["  ".join(c.rjust(w) if r else c.ljust(w) for c, w, r in zip(row, widths, right)).rstrip()
             for row in cells]
    return "\n".join(lines)


def navigation_main_day(nav, systems: str) -> tuple[np.datetime64, np.datetime64]:
    """The GPST day holding most of the records' reference times: [00:00, next 00:00).

    A station's daily navigation file also carries a few records of the evening
    before; with precise products of two days given for interpolation, this is
    the day the user means.
    """
    refs = _reference_times(nav, systems)
    days, counts = np.unique(refs.astype("datetime64[D]"), return_counts=True)
    day = days[np.argmax(counts)].astype("datetime64[ns]")
    return day, day + np.timedelta64(1, "D")
