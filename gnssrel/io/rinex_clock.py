"""Reader for RINEX clock files, versions 2.x and 3.0x (AS and AR records).

Format: "RINEX Extensions to Handle Clock Information", J. Ray and W. Gurtner,
version 2.00 (1999), 3.00 (2006), 3.02 (2010) and 3.04 (2017).  Up to 3.02 a
data record reads ``A2,1X,A4,1X,I4,4(1X,I2),F10.6,I3,3X,2(E19.12,1X)`` (then
a continuation line ``4(E19.12,1X)`` when more than two values follow); 3.04
widens the name to ``A9`` (for 9-character station names) and the header
labels move from column 61 to column 66.  Both layouts are read; which one a
file uses is taken from its version and confirmed on its first data record.

Speed: the body is parsed with numpy on a padded fixed-width byte array, one
vectorized pass per column (a 216 000-record day in well under a second; see
``benchmarks/bench_clock_reader.py``).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import xarray as xr

from gnssrel.errors import FileFormatError, TimeScaleError
from gnssrel.io.opening import read_bytes
from gnssrel.timescales import to_gpst

__all__ = ["read_rinex_clock"]

RECORD_TYPES = (b"AR", b"AS", b"CR", b"DR", b"MS")
"""Data record types of the format (section 'Data record types')."""

# Columns after the name field, relative to where the year starts (0-based, end exclusive).
_AFTER_NAME = {"year": (0, 4), "month": (5, 7), "day": (8, 10), "hour": (11, 13),
               "minute": (14, 16), "second": (16, 26), "count": (26, 29),
               "bias": (32, 51), "sigma": (52, 71)}
# Year column for each name width: A2,1X,A4,1X -> 8; A2,1X,A9,1X -> 13.
_YEAR_COLUMN = {4: 8, 9: 13}

# TIME SYSTEM ID values (3.x header) -> gnssrel scale; 2.x files are GPS time.
_TIME_SYSTEMS = {"GPS": "GPST", "GAL": "GST", "QZS": "QZSST", "BDT": "BDT", "BDS": "BDT",
                 "GLO": "GLONASST", "UTC": "UTC", "TAI": "TAI", "IRN": "GPST"}


def read_rinex_clock(path, systems=None, kinds=("AS",)) -> xr.Dataset:
    """Read a RINEX clock file (2.x, 3.00-3.04).

    Parameters
    ----------
    path : the file (plain or compressed, see :mod:`gnssrel.io.opening`).
    systems : RINEX system letters of the satellites to keep ("GE", ["G"]), or None for all.
    kinds : record types to read: "AS" (satellite clocks) and/or "AR" (station clocks).

    Returns
    -------
    xarray.Dataset.  With "AS": ``clock_s`` and ``clock_sigma_s`` on (time, sv).
    With "AR": ``station_clock_s`` and ``station_clock_sigma_s`` on (time, station).
    Times are datetime64[ns] on GPST, converted from the header TIME SYSTEM ID
    (GPS when absent).  A sigma is NaN where the record gives only the bias.
    attrs: ``time_scale``, ``source_time_system``, ``version``, ``agency``, ``path``.
    """
    path = Path(path)
    kinds = tuple(k.upper() for k in kinds)
    for kind in kinds:
        if kind not in ("AS", "AR"):
            raise FileFormatError(f"record kind {kind!r} not supported (AS and AR are)", path)
    raw = read_bytes(path)
    lines = raw.splitlines()
    header, body_start = _parse_header(lines, path)
    body = lines[body_start:]
    if not body:
        raise FileFormatError("RINEX clock file has no data records after END OF HEADER",
                              path, body_start)

    records = _parse_body(body, body_start, header, path)
    scale = _TIME_SYSTEMS[header["time_system"]]
    try:
        records["time"] = to_gpst(records["time"], scale, header.get("leap_seconds"))
    except TimeScaleError as exc:
        raise FileFormatError(exc.message, path) from None

    data = {}
    coords = {}
    wanted = None if systems is None else [s.upper().encode() for s in systems]
    times_all = []
    blocks = []
    for kind, dim, prefix in (("AS", "sv", "clock"), ("AR", "station", "station_clock")):
        if kind not in kinds:
            continue
        sel = records["type"] == kind.encode()
        if kind == "AS" and wanted is not None:
            sel &= np.isin(_first_char(records["name"]), wanted)
        blocks.append((dim, prefix, sel))
        times_all.append(records["time"][sel])
    times = np.unique(np.concatenate(times_all)) if times_all else np.array([], "datetime64[ns]")
    for dim, prefix, sel in blocks:
        names, col = np.unique(records["name"][sel], return_inverse=True)
        row = np.searchsorted(times, records["time"][sel])
        bias = np.full((len(times), len(names)), np.nan)
        sigma = np.full((len(times), len(names)), np.nan)
        bias[row, col] = records["bias"][sel]
        sigma[row, col] = records["sigma"][sel]
        data[f"{prefix}_s"] = (("time", dim), bias)
        data[f"{prefix}_sigma_s"] = (("time", dim), sigma)
        coords[dim] = np.array([n.decode().strip() for n in names], dtype=str)
    coords["time"] = times
    attrs = {"time_scale": "GPST", "source_time_system": header["time_system"],
             "version": header["version"], "agency": header.get("agency", ""),
             "path": str(path)}
    return xr.Dataset(data, coords=coords, attrs=attrs)


def _first_char(names: np.ndarray) -> np.ndarray:
    return names.view(np.uint8).reshape(len(names), -1)[:, :1].copy().view("S1").ravel()


def _parse_header(lines: list[bytes], path: Path) -> tuple[dict, int]:
    if not lines or not lines[0].strip():
        raise FileFormatError("empty file: not a RINEX clock file", path, 1)
    first = lines[0].decode("ascii", errors="replace")
    try:
        version = float(first[:9])
    except ValueError:
        raise FileFormatError("RINEX clock: version expected in columns 1-9 of line 1",
                              path, 1, first) from None
    kind = first[9:40].split()
    if "RINEX VERSION / TYPE" not in first or not kind or not kind[0].startswith("C"):
        raise FileFormatError("not a RINEX clock file (line 1 must be 'RINEX VERSION / TYPE' "
                              "with file type 'C' after the version)", path, 1, first)
    if not (2.0 <= version < 4.0):
        raise FileFormatError(f"RINEX clock version {version:.2f} not supported (2.x and 3.0x are)",
                              path, 1, first)
    header = {"version": f"{version:.2f}", "time_system": "GPS",
              "name_width": 9 if version >= 3.04 - 1e-9 else 4}
    for i, raw in enumerate(lines[1:], start=1):
        line = raw.decode("ascii", errors="replace")
        label = line[60:].strip()
        if "END OF HEADER" in label:
            return header, i + 1
        if "TIME SYSTEM ID" in label:
            header["time_system"] = line[3:6].strip() or "GPS"
            if header["time_system"] not in _TIME_SYSTEMS:
                raise FileFormatError(f"RINEX clock header: unknown time system "
                                      f"{header['time_system']!r}", path, i + 1, line)
        elif "LEAP SECONDS" in label and line[:6].strip():
            try:
                header["leap_seconds"] = int(line[:6])
            except ValueError:
                raise FileFormatError("RINEX clock header: LEAP SECONDS expects an integer in "
                                      "columns 1-6", path, i + 1, line) from None
        elif "ANALYSIS CENTER" in label:
            header["agency"] = line[:3].strip()
    raise FileFormatError("RINEX clock header has no END OF HEADER line", path, len(lines),
                          lines[-1].decode("ascii", errors="replace"))


def _field(fixed: np.ndarray, start: int, end: int) -> np.ndarray:
    width = fixed.dtype.itemsize
    raw = fixed.view(np.uint8).reshape(len(fixed), width)[:, start:end]
    return np.ascontiguousarray(raw).view(f"S{end - start}").ravel()


def _numbers(field, kind, path, line_numbers, body, what):
    try:
        return field.astype(kind)
    except ValueError:
        for i, value in enumerate(field):  # error path only: find the bad line
            try:
                kind(value)
            except ValueError:
                raise FileFormatError(f"RINEX clock record: {what} is not a number "
                                      f"({value.decode(errors='replace').strip()!r})",
                                      path, int(line_numbers[i]),
                                      body[i].decode(errors="replace")) from None
        raise


def _layout(body, year_column) -> bool:
    """Whether the first data record has a year where this layout puts it."""
    for line in body:
        if line[:2] in RECORD_TYPES:
            year = line[year_column:year_column + 4]
            bias_start = year_column + _AFTER_NAME["bias"][0]
            bias = line[bias_start:year_column + _AFTER_NAME["bias"][1]]
            return (year.isdigit() and line[year_column - 1:year_column] == b" "
                    and line[bias_start - 1:bias_start] == b" " and b" " not in bias.strip())
    return True


def _parse_body(body: list[bytes], body_start: int, header: dict, path: Path) -> dict:
    width = header["name_width"]
    if not _layout(body, _YEAR_COLUMN[width]):
        other = 4 if width == 9 else 9
        if not _layout(body, _YEAR_COLUMN[other]):
            first = next(i for i, line in enumerate(body) if line[:2] in RECORD_TYPES)
            raise FileFormatError("RINEX clock record: columns fit neither the A4-name layout "
                                  "(2.x-3.02) nor the A9-name layout (3.04)", path,
                                  body_start + first + 1, body[first].decode(errors="replace"))
        width = other
    y0 = _YEAR_COLUMN[width]
    line_numbers_all = np.arange(body_start + 1, body_start + 1 + len(body))
    fixed_all = np.array(body, dtype=f"S{y0 + _AFTER_NAME['sigma'][1]}")
    types = _field(fixed_all, 0, 2)
    is_record = np.isin(types, RECORD_TYPES)
    lengths = np.fromiter(map(len, body), dtype=np.int64, count=len(body))

    rec = np.flatnonzero(is_record)
    fixed = fixed_all[rec]
    line_numbers = line_numbers_all[rec]
    rec_lines = _Lines(body, rec)

    def col(name, kind=np.float64):
        a, b = _AFTER_NAME[name]
        return _numbers(_field(fixed, y0 + a, y0 + b), kind, path, line_numbers, rec_lines, name)

    minimum = y0 + _AFTER_NAME["bias"][1]
    too_short = lengths[rec] < minimum
    if too_short.any():
        i = int(np.flatnonzero(too_short)[0])
        raise FileFormatError(f"RINEX clock record truncated: line ends at column "
                              f"{int(lengths[rec][i])}, the clock bias ends at column {minimum}",
                              path, int(line_numbers[i]), rec_lines[i].decode(errors="replace"))
    count = col("count", np.int64)
    need = np.where(count >= 2, y0 + _AFTER_NAME["sigma"][1], y0 + _AFTER_NAME["bias"][1])
    short = lengths[rec] < need
    if short.any():
        i = int(np.flatnonzero(short)[0])
        raise FileFormatError(f"RINEX clock record truncated: {int(count[i])} values announced, "
                              f"line ends at column {int(lengths[rec][i])}", path,
                              int(line_numbers[i]), rec_lines[i].decode(errors="replace"))
    # Lines that are not records must be the continuation of a record with > 2 values.
    other = np.flatnonzero(~is_record & (lengths > 0))
    if len(other):
        prev_count = np.zeros(len(body), dtype=np.int64)
        prev_count[rec] = count
        ok = (other > 0) & (prev_count[np.maximum(other - 1, 0)] > 2)
        if not ok.all():
            i = int(other[~ok][0])
            raise FileFormatError("RINEX clock body: line is neither a data record "
                                  "(AR, AS, CR, DR, MS) nor a continuation line",
                                  path, int(line_numbers_all[i]), body[i].decode(errors="replace"))
    if count.size and (count < 1).any():
        i = int(np.flatnonzero(count < 1)[0])
        raise FileFormatError("RINEX clock record announces no value", path,
                              int(line_numbers[i]), rec_lines[i].decode(errors="replace"))

    ymdhm = [col(k, np.int64) for k in ("year", "month", "day", "hour", "minute")]
    second = col("second")
    bias = col("bias")
    sigma_field = _field(fixed, y0 + _AFTER_NAME["sigma"][0], y0 + _AFTER_NAME["sigma"][1])
    sigma_field = np.where(count >= 2, sigma_field, b"nan")
    sigma = _numbers(sigma_field, np.float64, path, line_numbers, rec_lines, "sigma")
    time = _compose_time(*ymdhm, second, path, line_numbers, rec_lines)
    return {"type": types[rec], "name": _field(fixed, 3, 3 + width), "time": time,
            "bias": bias, "sigma": sigma}


def _compose_time(year, month, day, hour, minute, second, path, line_numbers, lines):
    bad = (month < 1) | (month > 12) | (day < 1) | (day > 31) | (hour > 24) | (minute > 59) \
        | (second < 0) | (second >= 61)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise FileFormatError("RINEX clock record: epoch out of range", path,
                              int(line_numbers[i]), lines[i].decode(errors="replace"))
    months = (year - 1970) * 12 + (month - 1)
    dates = months.astype("datetime64[M]").astype("datetime64[D]") + (day - 1).astype("timedelta64[D]")
    ns = (hour * 3600 + minute * 60) * 1_000_000_000 + np.rint(second * 1e9).astype(np.int64)
    return dates.astype("datetime64[ns]") + ns.astype("timedelta64[ns]")


class _Lines:
    """Index into the record lines without copying them (error messages only)."""

    def __init__(self, body, rec):
        self._body, self._rec = body, rec

    def __getitem__(self, i):
        return self._body[self._rec[i]]
