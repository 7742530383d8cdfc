"""The command line: parse, call one job, print.  No physics here.

Each subcommand lives in ``gnssrel/jobs/<name>.py`` and provides ``HELP``,
``add_arguments(parser)`` and ``run(args) -> dict | None`` (the summary).
Exit status: 0 ok, 2 bad input (one line on stderr), 1 internal error.
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
JOBS = ("orbits", "relativity", "clocks", "audit", "campaign", "report", "demo", "simulate", "info")

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT = 0, 1, 2
EXIT_BROKEN_PIPE = 141


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
        epilog="Exit status: 0 ok, 1 internal error, 2 bad input. "
               "Times are GPST unless a scale is written after them (e.g. '... UTC').")
    parser.add_argument("--version", action="store_true", help="print the version and exit")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, module in _available_jobs():
        p = sub.add_parser(name, help=module.HELP, description=getattr(module, "DESCRIPTION", module.HELP))
        p.add_argument("-q", "--quiet", action="store_true", help="print only errors")
        p.add_argument("-v", "--verbose", action="count", default=0, help="more detail (twice: debug)")
        module.add_arguments(p)
        p.set_defaults(_job=module)
    return parser


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.version:
        print(f"gnssrel {__version__}")
        return EXIT_OK
    if not getattr(args, "command", None):
        parser.print_help()
        return EXIT_BAD_INPUT
    level = logging.ERROR if args.quiet else (logging.INFO if args.verbose == 1 else
                                              logging.DEBUG if args.verbose > 1 else logging.WARNING)
    logging.basicConfig(level=level, format="gnssrel: %(message)s")
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
