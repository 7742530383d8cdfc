"""The command line: parse, call one job, print.  No physics here.

Each subcommand lives in ``gnssrel/jobs/<name>.py`` and provides ``HELP``,
``add_arguments(parser)`` and ``run(args) -> dict | None`` (the summary).
Exit status: see :data:`EXIT_STATUS_TEXT` (printed at the end of ``gnssrel --help``).
"""

from __future__ import annotations

import argparse
import importlib
import logging
import os
import sys

from gnssrel import __version__, progress
from gnssrel.errors import GnssrelInputError

# Subcommand name -> module in gnssrel.jobs, in the order `--help` lists them.
JOBS = ("orbits", "relativity", "clocks", "audit", "survey", "campaign", "report", "demo", "simulate", "info")

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT = 0, 1, 2
EXIT_SOME_FAILED = 3        # gnssrel.jobs.campaign.EXIT_SOME_FAILED (not imported: --help stays light)
EXIT_FAULT_FOUND = 4        # gnssrel.jobs.common.EXIT_FAULT_FOUND, with --fail-on-fault
EXIT_BROKEN_PIPE = 141
EXIT_STATUS_TEXT = (
    f"Exit status: {EXIT_OK} ok; {EXIT_INTERNAL} internal error (a bug: run again with -v for the "
    f"traceback); {EXIT_BAD_INPUT} bad input (one line on stderr naming the file); {EXIT_SOME_FAILED} campaign: "
    f"some station-days failed; {EXIT_FAULT_FOUND} with --fail-on-fault (audit, report, campaign): a "
    f"receiver's fixes or satellite-clock table follow a wrong hypothesis of the relativistic terms "
    f"(wins over {EXIT_SOME_FAILED}); 130 interrupted; {EXIT_BROKEN_PIPE} the reader of the output went away.")

VERBOSITY_HELP = {"quiet": "print only errors", "verbose": "more detail (twice: debug)"}


def _available_jobs():
    for name in JOBS:
        try:
            yield name, importlib.import_module(f"gnssrel.jobs.{name}")
        except ModuleNotFoundError as exc:
            if exc.name != f"gnssrel.jobs.{name}":
                raise


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="gnssrel",
        description="Relativistic corrections for GNSS satellite clocks and signals, "
                    "from RINEX, SP3 and clock files.",
        epilog=EXIT_STATUS_TEXT + " Times are GPST unless a scale is written after them (e.g. '... UTC'). "
               "-q and -v go before or after COMMAND (gnssrel -q info, gnssrel info -q).")
    parser.add_argument("--version", action="store_true", help="print the version and exit")
    _add_verbosity(parser, "_before")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, module in _available_jobs():
        p = sub.add_parser(name, help=module.HELP, description=getattr(module, "DESCRIPTION", module.HELP),
                           epilog=EXIT_STATUS_TEXT)
        _add_verbosity(p, "")
        module.add_arguments(p)
        p.set_defaults(_job=module)
    return parser


def _add_verbosity(parser, suffix: str) -> None:
    """-q/-v on the main parser (dest suffix "_before") and on each subcommand (no suffix): separate
    destinations, so a subcommand's default cannot overwrite what was given before it; :func:`parse`
    merges them."""
    parser.add_argument("-q", "--quiet", dest=f"quiet{suffix}", action="store_true", help=VERBOSITY_HELP["quiet"])
    parser.add_argument("-v", "--verbose", dest=f"verbose{suffix}", action="count", default=0,
                        help=VERBOSITY_HELP["verbose"])


def parse(argv=None, parser=None) -> argparse.Namespace:
    """Parse the command line; ``quiet``/``verbose`` merge the options given before and after COMMAND
    (-v counts add up: ``gnssrel -v audit -v`` is debug)."""
    parser = parser or build_parser()
    args = parser.parse_args(argv)
    args.quiet = bool(getattr(args, "quiet", False) or args.quiet_before)
    args.verbose = int(getattr(args, "verbose", 0) or 0) + int(args.verbose_before or 0)
    return args


class _LabelledFormatter(logging.Formatter):
    """``gnssrel: warning: ...`` for warnings, ``gnssrel: error: ...`` for errors, plain ``gnssrel: ...``
    for the information lines of -v: a warning reads as one on the terminal."""

    def format(self, record: logging.LogRecord) -> str:
        text = super().format(record)
        if record.levelno >= logging.ERROR:
            return f"gnssrel: error: {text}"
        if record.levelno >= logging.WARNING:
            return f"gnssrel: warning: {text}"
        return f"gnssrel: {text}"


def _configure_logging(level: int) -> None:
    handler = logging.StreamHandler()
    handler.setFormatter(_LabelledFormatter("%(message)s"))
    logging.basicConfig(level=level, handlers=[handler])


def main(argv=None) -> int:
    parser = build_parser()
    args = parse(argv, parser)
    if args.version:
        print(f"gnssrel {__version__}")
        return EXIT_OK
    if not getattr(args, "command", None):
        parser.print_help()
        return EXIT_BAD_INPUT
    level = logging.ERROR if args.quiet else (logging.INFO if args.verbose == 1 else
                                              logging.DEBUG if args.verbose > 1 else logging.WARNING)
    _configure_logging(level)
    progress.configure(False if args.quiet else None)
    try:
        args._job.run(args)
    except GnssrelInputError as exc:
        print(f"gnssrel {args.command}: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("gnssrel: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return _broken_pipe()
    except Exception as exc:  # an internal error: one line, traceback only on request
        if args.verbose:
            raise
        print(f"gnssrel {args.command}: internal error: {type(exc).__name__}: {exc} "
              f"(run again with -v for the traceback)", file=sys.stderr)
        return EXIT_INTERNAL
    try:
        sys.stdout.flush()
    except BrokenPipeError:
        return _broken_pipe()
    return getattr(args, "exit_status", EXIT_OK)   # a job may say more (campaign: 3, some tasks failed)


def _broken_pipe() -> int:
    """The reader of our output went away (``gnssrel demo --json | head``): stop quietly, as
    programs do, with the shell's code for a SIGPIPE death (128 + 13); no traceback, and no
    second error when Python flushes stdout at exit."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass
    return EXIT_BROKEN_PIPE


if __name__ == "__main__":
    sys.exit(main())
