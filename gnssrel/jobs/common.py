"""What every subcommand shares: the common options, their checks, the window, the output.

A job calls :func:`add_time_window`, :func:`add_outputs` etc. in its
``add_arguments`` and :func:`check_outputs`, :func:`parse_systems`,
:func:`time_window` / :func:`navigation_window` and :func:`emit` in ``run``,
so option names, defaults, messages and checks are the same in every command.
Text formatting is in :mod:`gnssrel.text`, the navigation spans in
:mod:`gnssrel.orbits.spans`, the stages in :mod:`gnssrel.pipeline`.
"""

from __future__ import annotations

from gnssrel.constants import SYSTEM_ORDER
from gnssrel.errors import GnssrelInputError, NoDataError
from gnssrel.io import writers
from gnssrel.io.writers import check_output_suffix
from gnssrel.orbits.selection import DEFAULT_RULE, RULE_HELP, RULE_NAMES
from gnssrel.orbits.spans import describe_navigation_span, navigation_span
from gnssrel.timescales import parse_time

SYSTEMS_HELP = f"systems to use, letters of {SYSTEM_ORDER}, e.g. GE (default: every system in the files)"
START_HELP = ("first epoch, GPST unless a scale follows (e.g. '2020-06-25T06:00 UTC'); "
              "default: the start of the data")
END_HELP = "last epoch, same form as --start; default: the end of the data"
JSON_HELP = "print the summary as JSON on stdout instead of the text table"
SUMMARY_HELP = "write the summary as JSON to this file"


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
    parser.add_argument("--rule", choices=RULE_NAMES, default=DEFAULT_RULE, help=RULE_HELP)


def add_outputs(parser, table_help: str = "table to write (.csv, .parquet or .nc)") -> None:
    parser.add_argument("--output", metavar="FILE", help=table_help)
    parser.add_argument("--summary", metavar="FILE.json", help=SUMMARY_HELP)
    add_json(parser)


def add_json(parser, help_text: str = JSON_HELP) -> None:
    parser.add_argument("--json", action="store_true", help=help_text)


def check_outputs(args) -> None:
    """Refuse output names we cannot write before any work is done."""
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


def navigation_window(args, nav, systems: str):
    """(start, end) GPST from --start/--end, else the bulk of the navigation records' span;
    a window that misses the records' span altogether is refused naming both spans."""
    span = navigation_span(nav, systems)
    start = parse_time(args.start, "GPST") if getattr(args, "start", None) else span[0]
    end = parse_time(args.end, "GPST") if getattr(args, "end", None) else span[1]
    if (start > span[1] or end < span[0]) and not (getattr(args, "start", None) and getattr(args, "end", None)
                                                   and end < start):
        given = " and ".join(f"--{k} {getattr(args, k)}" for k in ("start", "end") if getattr(args, k, None))
        raise NoDataError(f"no overlap: the window asked for ({given}) and the navigation records, "
                          f"{describe_navigation_span(nav, systems)}, have no time in common")
    return time_window(args, span[0], span[1])


def time_window(args, default_start=None, default_end=None):
    """(start, end) in GPST from --start/--end, falling back to the defaults given."""
    start = parse_time(args.start, "GPST") if getattr(args, "start", None) else default_start
    end = parse_time(args.end, "GPST") if getattr(args, "end", None) else default_end
    if start is not None and end is not None and end < start:
        raise GnssrelInputError(f"--end ({end}) is before --start ({start})")
    return start, end


def emit(args, summary: dict, table=None, print_text=None) -> dict:
    """Write --output and --summary (atomically), then print JSON or the job's text table."""
    if getattr(args, "output", None) and table is not None:
        writers.write_table(table, args.output)
    if getattr(args, "summary", None):
        writers.write_json(summary, args.summary)
    if getattr(args, "json", False):
        print(writers.to_json_text(summary))
    elif print_text is not None and not getattr(args, "quiet", False):
        print_text(summary)
        print_accounting(summary, verbose=bool(getattr(args, "verbose", 0)))
    return summary


def print_accounting(summary: dict, verbose: bool = False) -> None:
    """Print the accounting block of a summary after a command's table (nothing when it has none)."""
    from gnssrel.pipeline.accounting import block_lines  # deferred: the pipeline pulls xarray (--help)

    for line in block_lines(summary.get("accounting"), verbose):
        print(line)
