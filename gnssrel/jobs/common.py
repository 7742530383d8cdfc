"""What every subcommand shares: the common options, their checks, the window, the output.

A job calls :func:`add_time_window`, :func:`add_outputs` etc. in its
``add_arguments`` and :func:`check_outputs`, :func:`parse_systems`,
:func:`time_window` / :func:`navigation_window` and :func:`emit` in ``run``,
so option names, defaults, messages and checks are the same in every command.
Text formatting is in :mod:`gnssrel.text`, the navigation spans in
:mod:`gnssrel.orbits.spans`, the stages in :mod:`gnssrel.pipeline`.
"""

from __future__ import annotations

import re

from gnssrel.constants import ALL_SYSTEM_ORDER, SYSTEM_ORDER, SYSTEMS
from gnssrel.errors import GnssrelInputError, NoDataError
from gnssrel.io import writers
from gnssrel.io.writers import check_output_suffix
from gnssrel.orbits.selection import DEFAULT_RULE, RULE_HELP, RULE_NAMES
from gnssrel.orbits.spans import describe_navigation_span, navigation_span
from gnssrel.text import fmt_span
from gnssrel.timescales import parse_time

SYSTEMS_HELP = (f"systems to use: letters of {ALL_SYSTEM_ORDER} (e.g. GE) or names, case-insensitive, separated by "
                f"commas (e.g. gps,galileo; {', '.join(SYSTEMS[s].name for s in ALL_SYSTEM_ORDER)}); "
                f"default: every system of {SYSTEM_ORDER} in the files (NavIC and SBAS only when named)")
WINDOW_RULE = ("the window every command shares: the --obs logs' span, else the period the navigation file "
               "name declares (e.g. _20201770000_01D_: that GPST day) or the day holding most records, cut to "
               "the --precise products; epochs on the --step grid counted from 00:00 GPST")
START_HELP = ("first epoch, inclusive, GPST unless a scale follows (e.g. '2020-06-25T06:00 UTC'); "
              f"default: {WINDOW_RULE}")
END_HELP = "last epoch, inclusive, same form as --start; default: the end of that window"
RECEIVER_CLOCKS_FORMAT = (
    "CSV text (plain or .gz), lines starting with # are comments, a header line naming the columns "
    "(any order): time (ISO 8601, e.g. 2020-06-25T06:00:00, no zone), time_scale (the scale of time: GPST, "
    "GST, BDT, QZSST, UTC or GLONASST), sv (RINEX name, e.g. G05), clock_correction_s (the satellite clock "
    "correction in seconds that the receiver subtracts from the transmit time, every term it applies "
    "included), optional flags (words); one row per satellite and epoch")
RECEIVER_FIXES_FORMAT = (
    "NMEA 0183 GGA sentences (the date from RMC/ZDA sentences or --fix-date; UTC), or CSV with a header "
    "line: time (ISO 8601), time_scale (GPST, UTC, ...) and x_m,y_m,z_m (ECEF WGS-84, metres) or "
    "lat_deg,lon_deg,height_m (WGS-84, degrees, ellipsoidal height in metres)")
JSON_HELP = "print the summary as JSON on stdout instead of the text table"
SUMMARY_HELP = "write the summary as JSON to this file"


def add_systems(parser) -> None:
    parser.add_argument("--systems", default=None, metavar="SYSTEMS", help=SYSTEMS_HELP)


def add_time_window(parser, step_default: float | None = 30.0, step_help: str | None = None) -> None:
    parser.add_argument("--start", metavar="TIME", help=START_HELP)
    parser.add_argument("--end", metavar="TIME", help=END_HELP)
    if step_help is not False:
        parser.add_argument("--step", type=float, default=step_default, metavar="SECONDS",
                            help=step_help or f"epoch interval (default {step_default:g} s)")


def add_include_unhealthy(parser) -> None:
    parser.add_argument("--include-unhealthy", action="store_true",
                        help="also use records flagged unhealthy and satellites excluded by rule "
                             "(e.g. the eccentric Galileo E14, E18; without it they are left out of broadcast "
                             "and precise products alike and counted as excluded by rule)")


def add_rule(parser) -> None:
    """``--rule post|receiver``: the broadcast record-selection rule (gnssrel.orbits.selection)."""
    parser.add_argument("--rule", choices=RULE_NAMES, default=DEFAULT_RULE, help=RULE_HELP)


def add_outputs(parser, table_help: str = "table to write (.csv, .parquet or .nc)") -> None:
    parser.add_argument("--output", metavar="FILE", help=table_help)
    parser.add_argument("--summary", metavar="FILE.json", help=SUMMARY_HELP)
    add_json(parser)


EXIT_FAULT_FOUND = 4
"""Exit status of audit/report/campaign with --fail-on-fault when a receiver's firmware is found at fault
(gnssrel.cli.EXIT_STATUS_TEXT lists every status)."""
FAIL_ON_FAULT_HELP = (f"exit with status {EXIT_FAULT_FOUND} (after writing every output) when a receiver's own "
                      "fixes or satellite-clock table follow a wrong hypothesis of the relativistic terms (term "
                      "omitted, reversed, doubled, ...), for automated checks; default: exit 0 and say so")


def add_fail_on_fault(parser) -> None:
    parser.add_argument("--fail-on-fault", action="store_true", help=FAIL_ON_FAULT_HELP)


def flag_faults(args, faulty: list[str]) -> None:
    """With --fail-on-fault and a receiver at fault (``faulty``: their names), set the exit status."""
    if faulty and getattr(args, "fail_on_fault", False):
        args.exit_status = EXIT_FAULT_FOUND


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
    """``"ge"``, ``"G,E"``, ``"gps,galileo"``, ``"GPS GE"`` -> ``"GE"``; None stays None (all systems).

    Entries are separated by commas or spaces; each is a full system name (case-insensitive, e.g.
    ``galileo``) or one or more system letters (``GE``).  Anything else is refused, naming the
    valid letters and names."""
    if text is None:
        return None
    by_name = {SYSTEMS[s].name.upper(): s for s in ALL_SYSTEM_ORDER}
    letters, unknown = [], []
    for entry in re.split(r"[\s,;+]+", text.strip()):
        if not entry:
            continue
        if entry.upper() in by_name:
            letters.append(by_name[entry.upper()])
            continue
        bad = [c for c in entry.upper() if c not in ALL_SYSTEM_ORDER]
        if not bad:
            letters += list(entry.upper())
        elif len(entry) <= len(SYSTEM_ORDER) and entry.isalpha() and len(bad) < len(entry):  # longer: a name
            unknown.append(f"unknown letters {''.join(dict.fromkeys(bad))} in '{entry}'")
        else:
            unknown.append(f"unknown system '{entry}'")
    if not letters and not unknown:
        unknown.append("no system given")
    if unknown:
        names = ", ".join(SYSTEMS[s].name for s in ALL_SYSTEM_ORDER)
        raise GnssrelInputError(f"--systems: {'; '.join(unknown)}; use letters of {ALL_SYSTEM_ORDER} or the names "
                                f"{names} (e.g. GE or gps,galileo)")
    return "".join(dict.fromkeys(letters))


def navigation_window(args, nav, systems: str, precise=()):
    """(start, end) GPST, inclusive, from --start/--end, else the window every command shares
    (:func:`gnssrel.pipeline.window.analysis_window`: the period the navigation file names declare,
    else the day holding most records, cut to the ``precise`` Datasets' span; not --systems);
    a window that misses the records' span altogether is refused naming both spans."""
    # deferred: the pipeline pulls xarray (start-up of `gnssrel --help`)
    from gnssrel.pipeline.window import analysis_window

    span = navigation_span(nav, systems)
    default = analysis_window(nav, systems, precise=precise)
    start = parse_time(args.start, "GPST") if getattr(args, "start", None) else default.start
    end = parse_time(args.end, "GPST") if getattr(args, "end", None) else default.end
    if (start > span[1] or end < span[0]) and not (getattr(args, "start", None) and getattr(args, "end", None)
                                                   and end < start):
        given = " and ".join(f"--{k} {getattr(args, k)}" for k in ("start", "end") if getattr(args, k, None))
        raise NoDataError(f"no overlap: the window asked for ({given}) and the navigation records, "
                          f"{describe_navigation_span(nav, systems)}, have no time in common")
    return time_window(args, default.start, default.end)


def window_epochs(args, nav, systems: str, precise=(), min_epochs: bool = True):
    """The GPST epochs of a command: :func:`navigation_window` on the --step grid counted from
    00:00 GPST (gnssrel.pipeline.window.aligned_grid); ``min_epochs=False`` allows fewer than 3."""
    # deferred: the pipeline pulls xarray (start-up of `gnssrel --help`)
    from gnssrel.orbits.broadcast import time_grid
    from gnssrel.pipeline.grid import check_grid_size
    from gnssrel.pipeline.window import aligned_bounds, aligned_grid, analysis_window

    start, end = navigation_window(args, nav, systems, precise)
    if getattr(args, "start", None) or getattr(args, "end", None):
        window = f"between --start and --end ({fmt_span(start, end)})"
    else:
        window = f"in the default window {analysis_window(nav, systems, precise=precise).describe()}"
    if min_epochs:
        return aligned_grid(start, end, args.step, window)
    first, last = aligned_bounds(start, end, args.step)
    check_grid_size(first, last, args.step)
    return time_grid(first, last, args.step)


def time_window(args, default_start=None, default_end=None):
    """(start, end) in GPST from --start/--end, falling back to the defaults given."""
    start = parse_time(args.start, "GPST") if getattr(args, "start", None) else default_start
    end = parse_time(args.end, "GPST") if getattr(args, "end", None) else default_end
    if start is not None and end is not None and end < start:
        raise GnssrelInputError(f"--end ({end}) is before --start ({start})")
    return start, end


POSITION_HELP = ("reference receiver position: ECEF metres X,Y,Z (e.g. 1202433.9,252632.2,6237772.5), or WGS-84 "
                 "latitude,longitude,height in degrees and metres (e.g. 78.93,11.87,80), or named "
                 "(\"lat=78.93 lon=11.87 h=80\" or \"x=... y=... z=...\"); three numbers are ECEF when they are "
                 "at least 6000 km from the Earth's centre, else latitude, longitude, height "
                 "(default: the observation file header's approximate position)")
_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")
_POSITION_KEYS = {"lat": "lat", "latitude": "lat", "lon": "lon", "longitude": "lon", "h": "h", "height": "h",
                  "x": "x", "y": "y", "z": "z"}
ECEF_MIN_RADIUS_M = 6.0e6
"""Three numbers at least this far from the Earth's centre (m) are ECEF; geodetic triples are far below it."""
HEIGHT_RANGE_M = (-1000.0, 100_000.0)
"""Ellipsoidal heights accepted in a latitude, longitude, height position, m (the Dead Sea to balloons)."""


def parse_position(text: str, option: str = "--position"):
    """(ECEF position (3,) in metres, how it was given) from the forms of POSITION_HELP.

    Numbers are read strictly (no underscores, NaN or INF); a latitude beyond +-90 degrees, a
    longitude beyond -180..360, a height outside HEIGHT_RANGE_M or an ECEF point inside the Earth
    are refused with the forms in the message.
    """
    import numpy as np  # deferred: numpy is light, but this module stays free of it at import

    from gnssrel.geodesy import geodetic_deg_to_ecef

    def refuse(why: str):
        raise GnssrelInputError(f"{option} {text!r}: {why}; give X,Y,Z in metres (ECEF), latitude,longitude,"
                                "height in degrees and metres (WGS-84), or \"lat=.. lon=.. h=..\"")

    fields = [f for f in re.split(r"[,\s;]+", text.strip()) if f]
    named = {}
    if any("=" in f for f in fields):
        for f in fields:
            key, _, value = f.partition("=")
            if key.strip().lower() not in _POSITION_KEYS or not _NUMBER.match(value.strip()):
                refuse(f"cannot read {f!r}")
            named[_POSITION_KEYS[key.strip().lower()]] = float(value)
        if set(named) == {"x", "y", "z"}:
            values, kind = [named[k] for k in "xyz"], "ecef"
        elif set(named) == {"lat", "lon", "h"}:
            values, kind = [named[k] for k in ("lat", "lon", "h")], "geodetic"
        else:
            refuse("name either x, y, z or lat, lon, h, each once")
    else:
        if len(fields) != 3:
            refuse("three numbers are needed")
        bad = [f for f in fields if not _NUMBER.match(f)]
        if bad:
            refuse(f"cannot read {bad[0]!r} as a number")
        values = [float(f) for f in fields]
        if not any(values):
            refuse("0,0,0 is no position (the Earth's centre in ECEF; latitude 0, longitude 0 is the usual "
                   "mark of an unset position)")
        kind = "ecef" if np.linalg.norm(values) >= ECEF_MIN_RADIUS_M else "geodetic"
    if kind == "ecef":
        xyz = np.array(values, float)
        if np.linalg.norm(xyz) < ECEF_MIN_RADIUS_M:
            refuse("an ECEF position must lie near the Earth's surface (6000 km or more from its centre)")
        return xyz, "ECEF"
    lat, lon, h = values
    if abs(lat) > 90 or not -180 <= lon <= 360:
        refuse(f"latitude {lat:g} or longitude {lon:g} out of range (-90..90, -180..360 degrees)")
    if not HEIGHT_RANGE_M[0] <= h <= HEIGHT_RANGE_M[1]:
        refuse(f"height {h:g} m outside {HEIGHT_RANGE_M[0]:g}..{HEIGHT_RANGE_M[1]:g} m "
               "(an ECEF position needs all three coordinates in metres)")
    return geodetic_deg_to_ecef(lat, lon, h), "latitude, longitude, height (WGS-84)"


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
