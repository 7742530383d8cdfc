"""A receiver's own position fixes: NMEA 0183 GGA sentences, or a documented CSV.

NMEA 0183 (NMEA 0183 Standard v4.x, "GGA - Global Positioning System Fix Data"):

    $--GGA,hhmmss.ss,llll.ll,a,yyyyy.yy,a,q,nn,h.h,A.A,M,G.G,M,age,ref*CS

fields: UTC time, latitude ddmm.mmmm + N/S, longitude dddmm.mmmm + E/W, fix
quality (0 = invalid), satellites used, HDOP, altitude above mean sea level
(metres), geoid separation (metres), ...; the checksum CS is the hex XOR of all
characters between ``$`` and ``*``.  Ellipsoidal height = altitude + separation.
GGA carries no date: it is taken from RMC (field 9, ddmmyy) or ZDA sentences
in the same file, or from ``date_utc``; midnight roll-overs advance the date.
Times are UTC in the file and returned in GPST (leap seconds from
``gnssrel.timescales``).  Fixes with quality 0 are skipped.

CSV (gnssrel's own layout): a header line with ``time,time_scale`` and either
``x_m,y_m,z_m`` (WGS-84 ECEF) or ``lat_deg,lon_deg,height_m`` (WGS-84 geodetic,
ellipsoidal height); ``time`` is ISO 8601 (``2024-05-03T12:00:00``) and
``time_scale`` one of gnssrel's scales (GPST, UTC, ...).  Lines starting with ``#``
are comments.  Example::

    # receiver fixes, ECEF WGS-84
    time,time_scale,x_m,y_m,z_m
    2024-05-03T00:00:00,GPST,1202434.1,252632.2,6237772.4

Both readers return a DataFrame with ``time`` (GPST), ``x_m``, ``y_m``, ``z_m``,
``lat_deg``, ``lon_deg``, ``height_m`` and ``line`` (the source line), and
``attrs["accounting"]``: a :class:`gnssrel.accounting.Ledger` as a dict, item ``fixes``
(system "-"): every GGA sentence or CSV row read, "used" = returned, dropped by reason
("quality 0 (no fix)", "bad checksum", "no checksum", "garbled field", "no date yet",
"wrong number of columns", "value out of range").  A damaged sentence or row costs that
fix only and is warned about with its line; a number is read only when a strict reading
of its field takes it (no '_', NaN, INF, no digits where letters belong), else the fix
is refused.  A file without any usable fix is a ``FileFormatError`` naming the file.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd

from gnssrel.accounting import NO_SYSTEM, Ledger
from gnssrel.errors import FileFormatError, TimeScaleError
from gnssrel.geodesy import ecef_to_geodetic, geodetic_to_ecef
from gnssrel.io.opening import read_text
from gnssrel.timescales import to_gpst

CSV_TIME_COLUMNS = ("time", "time_scale")
CSV_ECEF_COLUMNS = ("x_m", "y_m", "z_m")
CSV_GEODETIC_COLUMNS = ("lat_deg", "lon_deg", "height_m")
ITEM = "fixes"
_WARNED = 50  # warnings kept per reason

# Strict field shapes (NMEA 0183 GGA/RMC/ZDA field formats; ISO 8601 for the CSV).
_HHMMSS = re.compile(r"^(\d\d)(\d\d)(\d\d(?:\.\d+)?)$")
_LAT = re.compile(r"^(\d\d)(\d\d(?:\.\d+)?)$")
_LON = re.compile(r"^(\d\d\d)(\d\d(?:\.\d+)?)$")
_DECIMAL = re.compile(r"^[+-]?\d+(?:\.\d*)?$")
_NUMBER = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")   # no '_', NaN, INF
_ISO_TIME = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d(?::\d\d(?:\.\d{1,9})?)?$")
MAX_ECEF_M = 1e8        # far beyond any receiver on or near the Earth
HEIGHT_RANGE_M = (-1e4, 1e7)


class Refused(Exception):
    """One sentence or row refused: ``reason`` is its ledger outcome, ``detail`` the warning."""

    def __init__(self, reason: str, detail: str = ""):
        super().__init__(reason)
        self.reason, self.detail = reason, detail or reason


def nmea_checksum(body: str) -> int:
    """XOR of the characters between ``$`` and ``*`` (NMEA 0183)."""
    value = 0
    for ch in body:
        value ^= ord(ch)
    return value


def _split_sentence(text: str):
    """The fields of one NMEA sentence, None for a line that is no sentence; Refused when its
    checksum is missing or wrong."""
    s = text.strip()
    if not s.startswith(("$", "!")):
        return None
    if "*" not in s:
        raise Refused("no checksum", "NMEA sentence without checksum ('*hh' expected at the end)")
    body, _, cs = s[1:].partition("*")
    if not re.fullmatch(r"[0-9A-Fa-f]{2}", cs[:2]):
        raise Refused("bad checksum", "NMEA checksum is not two hex digits")
    if nmea_checksum(body) != int(cs[:2], 16):
        raise Refused("bad checksum", f"NMEA checksum mismatch (computed {nmea_checksum(body):02X}, "
                                      f"sentence says {cs[:2].upper()})")
    return body.split(",")


def _angle(value: str, hemisphere: str, pattern, limit: float, what: str) -> float:
    m = pattern.match(value)
    if not m:
        shape = "ddmm.mmmm" if limit == 90 else "dddmm.mmmm"
        raise Refused("garbled field", f"NMEA {what} {value!r} is not {shape}")
    deg, minutes = int(m.group(1)), float(m.group(2))
    if minutes >= 60 or deg + minutes / 60 > limit:
        raise Refused("value out of range", f"NMEA {what} {value!r} is beyond {limit:g} degrees")
    if hemisphere not in (("N", "S") if limit == 90 else ("E", "W")):
        letters = "N/S" if limit == 90 else "E/W"
        raise Refused("garbled field", f"NMEA hemisphere {hemisphere!r} is not {letters}")
    deg = deg + minutes / 60.0
    return -deg if hemisphere in ("S", "W") else deg


def _date(year: str, month: str, day: str):
    """A calendar date from digit fields, or None when they are not one (30 February...)."""
    if not (year.isdigit() and month.isdigit() and day.isdigit() and (year + month + day).isascii()):
        return None
    try:
        return np.datetime64(f"{int(year):04d}-{int(month):02d}-{int(day):02d}", "D")
    except ValueError:
        return None


def _gga(fields):
    """(seconds of day, lat, lon, ellipsoidal height, quality, satellites) of one GGA sentence."""
    if len(fields) < 12:
        raise Refused("garbled field", f"GGA sentence with {len(fields)} fields, 15 expected")
    quality = fields[6]
    if not (len(quality) == 1 and quality in "012345678"):
        raise Refused("garbled field", f"GGA fix quality {quality!r} is not a digit 0-8")
    if quality == "0":
        raise Refused("quality 0 (no fix)")
    m = _HHMMSS.match(fields[1])
    if not m or int(m.group(1)) > 23 or int(m.group(2)) > 59 or float(m.group(3)) >= 61:
        raise Refused("garbled field", f"GGA time {fields[1]!r} is not hhmmss.ss")
    tod = int(m.group(1)) * 3600 + int(m.group(2)) * 60 + float(m.group(3))
    lat = _angle(fields[2], fields[3], _LAT, 90.0, "latitude")
    lon = _angle(fields[4], fields[5], _LON, 180.0, "longitude")
    if not _DECIMAL.match(fields[9]) or fields[11] and not _DECIMAL.match(fields[11]):
        raise Refused("garbled field", f"GGA altitude {fields[9]!r} or geoid separation {fields[11]!r} "
                                       "is not a decimal number")
    if fields[7] and not fields[7].isdigit():
        raise Refused("garbled field", f"GGA satellite count {fields[7]!r} is not a number")
    height = float(fields[9]) + float(fields[11] or 0.0)
    if not HEIGHT_RANGE_M[0] <= height <= HEIGHT_RANGE_M[1]:
        raise Refused("value out of range", f"GGA height {height:g} m is beyond any receiver")
    return tod, lat, lon, height, int(quality), int(fields[7] or 0)


def read_nmea_gga(path: str | Path, date_utc: str | None = None) -> pd.DataFrame:
    """Position fixes from the GGA sentences of an NMEA 0183 log (see the module text)."""
    ledger = Ledger()
    text = read_text(path, ledger)
    date = np.datetime64(date_utc, "D") if date_utc else None
    rows = []
    last_tod = None
    warned: dict[str, int] = {}
    first_refused = (None, None)
    for line_no, raw in enumerate(text.splitlines(), start=1):
        is_gga = raw.strip()[3:6] == "GGA"
        try:
            fields = _split_sentence(raw)
            if not fields:
                if raw.strip():   # not blank, not a sentence ('$' lost): said, counted when a GGA
                    _not_a_sentence(ledger, path, line_no, raw, warned)
                continue
            kind = fields[0][-3:]
            if kind in ("RMC", "ZDA"):
                new = None
                if kind == "RMC" and len(fields) > 9 and fields[9]:
                    d = fields[9]
                    new = _date("20" + d[4:6], d[2:4], d[0:2]) if len(d) == 6 else None
                    bad = new is None
                elif kind == "ZDA" and len(fields) > 4 and (fields[2] or fields[3] or fields[4]):
                    new = _date(fields[4], fields[3], fields[2])
                    bad = new is None
                else:
                    bad = False
                if bad:
                    ledger.warn(f"{kind} date is not a calendar date; sentence ignored", path, line_no)
                elif new is not None:
                    date = new
                continue
            if kind != "GGA":
                continue
            ledger.read(ITEM, NO_SYSTEM)
            tod, lat, lon, height, quality, n_sat = _gga(fields)
            if date is None:
                raise Refused("no date yet", "GGA sentence before any date (no RMC/ZDA sentence yet); "
                                             "give the UTC date of the log")
        except Refused as refused:
            if not is_gga and refused.reason in ("bad checksum", "no checksum"):
                ledger.warn(f"{refused.detail}; sentence ignored", path, line_no)
                continue
            if is_gga and refused.reason in ("bad checksum", "no checksum"):
                ledger.read(ITEM, NO_SYSTEM)
            ledger.drop(ITEM, NO_SYSTEM, refused.reason)
            warned[refused.reason] = warned.get(refused.reason, 0) + 1
            if first_refused[0] is None and refused.reason != "quality 0 (no fix)":
                first_refused = (line_no, raw)
            if refused.reason != "quality 0 (no fix)" and warned[refused.reason] <= _WARNED:
                ledger.warn(f"fix refused: {refused.detail}", path, line_no)
            continue
        if last_tod is not None and tod < last_tod - 43_200:   # past midnight without a new date
            date = date + np.timedelta64(1, "D")
        last_tod = tod
        t_utc = date.astype("datetime64[ns]") + np.timedelta64(round(tod * 1e9), "ns")
        rows.append((t_utc, lat, lon, height, quality, n_sat, line_no))
        ledger.used(ITEM, NO_SYSTEM)
    if not rows:
        raise FileFormatError(_nothing_usable("no valid GGA fix in the file", ledger), path, *first_refused)
    df = pd.DataFrame(rows, columns=["time_utc", "lat_deg", "lon_deg", "height_m", "quality", "n_sat",
                                     "line"])
    return _finish(df, to_gpst(df["time_utc"].to_numpy(), "UTC"), ledger)


def _not_a_sentence(ledger: Ledger, path, line_no: int, raw: str, warned: dict) -> None:
    """A line that is no NMEA sentence (no leading '$' or '!'): a fix when it holds "GGA,"."""
    reason = "not an NMEA sentence"
    if "GGA," in raw:
        ledger.read(ITEM, NO_SYSTEM)
        ledger.drop(ITEM, NO_SYSTEM, reason)
    warned[reason] = warned.get(reason, 0) + 1
    if warned[reason] <= _WARNED:
        ledger.warn(f"line is {reason} (no leading '$'); ignored", path, line_no)


def _nothing_usable(message: str, ledger: Ledger) -> str:
    dropped = ledger.dropped(ITEM)
    if dropped:
        message += " (refused: " + ", ".join(f"{n} {why}" for why, n in sorted(dropped.items())) + ")"
    if "no date yet" in dropped:
        message += "; give the UTC date of the log"
    return message


def read_fixes_csv(path: str | Path) -> pd.DataFrame:
    """Position fixes from gnssrel's documented CSV layout (see the module text)."""
    ledger = Ledger()
    lines = [(i, ln) for i, ln in enumerate(read_text(path, ledger).splitlines(), start=1)
             if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise FileFormatError("empty fixes file", path)
    header_no, header = lines[0]
    names = [c.strip() for c in header.split(",")]
    has_ecef = all(c in names for c in CSV_ECEF_COLUMNS)
    has_geo = all(c in names for c in CSV_GEODETIC_COLUMNS)
    if not all(c in names for c in CSV_TIME_COLUMNS) or not (has_ecef or has_geo):
        raise FileFormatError("fixes CSV header must hold time,time_scale and x_m,y_m,z_m or "
                              "lat_deg,lon_deg,height_m", path, header_no, header)
    value_cols = CSV_ECEF_COLUMNS if has_ecef else CSV_GEODETIC_COLUMNS
    times, values, line_nos = [], [], []
    warned: dict[str, int] = {}
    first_refused = (None, None)
    for line_no, ln in lines[1:]:
        ledger.read(ITEM, NO_SYSTEM)
        try:
            t, v = _csv_row(ln, names, value_cols, has_ecef)
        except Refused as refused:
            ledger.drop(ITEM, NO_SYSTEM, refused.reason)
            warned[refused.reason] = warned.get(refused.reason, 0) + 1
            if first_refused[0] is None:
                first_refused = (line_no, ln)
            if warned[refused.reason] <= _WARNED:
                ledger.warn(f"fix refused: {refused.detail}", path, line_no)
            continue
        ledger.used(ITEM, NO_SYSTEM)
        times.append(t)
        values.append(v)
        line_nos.append(line_no)
    if not times:
        raise FileFormatError(_nothing_usable("no valid fix in the file", ledger), path, *first_refused)
    v = np.asarray(values, dtype=float).reshape(-1, 3)
    cols = dict(zip(value_cols, v.T))
    df = pd.DataFrame(cols)
    df["line"] = line_nos
    return _finish(df, np.asarray(times, dtype="datetime64[ns]"), ledger)


def _csv_row(ln: str, names, value_cols, has_ecef):
    cells = [c.strip() for c in ln.split(",")]
    if len(cells) != len(names):
        raise Refused("wrong number of columns", f"{len(cells)} columns, the header has {len(names)}")
    row = dict(zip(names, cells))
    if not _ISO_TIME.match(row["time"]):
        raise Refused("garbled field", f"time {row['time']!r} is not ISO 8601 (2024-05-03T12:00:00)")
    try:
        t = to_gpst(np.datetime64(row["time"], "ns"), row["time_scale"])
    except (ValueError, TimeScaleError) as exc:
        raise Refused("garbled field", f"bad time or scale ({exc})") from None
    if not all(_NUMBER.match(row[c]) for c in value_cols):
        raise Refused("garbled field", "a coordinate is not a plain number")
    v = [float(row[c]) for c in value_cols]
    if has_ecef and not np.all(np.abs(v) < MAX_ECEF_M) or not has_ecef and not (
            -90 <= v[0] <= 90 and -180 <= v[1] <= 360 and HEIGHT_RANGE_M[0] <= v[2] <= HEIGHT_RANGE_M[1]):
        raise Refused("value out of range", "a coordinate is beyond any receiver position")
    return t, v


def _finish(df: pd.DataFrame, t_gpst, ledger: Ledger) -> pd.DataFrame:
    if "x_m" in df:
        lat, lon, h = ecef_to_geodetic(df[["x_m", "y_m", "z_m"]].to_numpy())
        df["lat_deg"], df["lon_deg"], df["height_m"] = np.degrees(lat), np.degrees(lon), h
    else:
        xyz = geodetic_to_ecef(np.radians(df["lat_deg"].to_numpy()), np.radians(df["lon_deg"].to_numpy()),
                               df["height_m"].to_numpy())
        df["x_m"], df["y_m"], df["z_m"] = xyz[:, 0], xyz[:, 1], xyz[:, 2]
    df.insert(0, "time", np.asarray(t_gpst, dtype="datetime64[ns]"))
    df = df.drop(columns=[c for c in ("time_utc",) if c in df])
    df = df.sort_values("time", kind="stable").reset_index(drop=True)
    df.attrs["accounting"] = ledger.as_dict()
    return df


def read_receiver_fixes(path: str | Path, date_utc: str | None = None) -> pd.DataFrame:
    """NMEA or CSV fixes, told apart by content (a ``$`` sentence vs a CSV header)."""
    head = read_text(path).lstrip()[:1]
    return read_nmea_gga(path, date_utc) if head in ("$", "!") else read_fixes_csv(path)
