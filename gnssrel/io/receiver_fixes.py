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
``lat_deg``, ``lon_deg``, ``height_m`` and ``line`` (the source line).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from gnssrel.errors import FileFormatError, TimeScaleError
from gnssrel.geodesy import ecef_to_geodetic, geodetic_to_ecef
from gnssrel.io.opening import read_text
from gnssrel.timescales import to_gpst

CSV_TIME_COLUMNS = ("time", "time_scale")
CSV_ECEF_COLUMNS = ("x_m", "y_m", "z_m")
CSV_GEODETIC_COLUMNS = ("lat_deg", "lon_deg", "height_m")


def nmea_checksum(body: str) -> int:
    """XOR of the characters between ``$`` and ``*`` (NMEA 0183)."""
    value = 0
    for ch in body:
        value ^= ord(ch)
    return value


def _split_sentence(text: str, path, line_no):
    s = text.strip()
    if not s.startswith(("$", "!")):
        return None
    if "*" not in s:
        raise FileFormatError("NMEA sentence without checksum ('*hh' expected at the end)", path, line_no, text)
    body, _, cs = s[1:].partition("*")
    try:
        expected = int(cs[:2], 16)
    except ValueError:
        raise FileFormatError("NMEA checksum is not two hex digits", path, line_no, text) from None
    if nmea_checksum(body) != expected:
        raise FileFormatError(f"NMEA checksum mismatch (computed {nmea_checksum(body):02X}, "
                              f"sentence says {cs[:2].upper()})", path, line_no, text)
    return body.split(",")


def _angle(value: str, hemisphere: str, degree_digits: int, path, line_no, text) -> float:
    try:
        deg = float(value[:degree_digits]) + float(value[degree_digits:]) / 60.0
    except ValueError:
        raise FileFormatError("NMEA latitude/longitude is not ddmm.mmmm / dddmm.mmmm", path, line_no,
                              text) from None
    if hemisphere not in ("N", "S", "E", "W"):
        raise FileFormatError(f"NMEA hemisphere {hemisphere!r} is not N/S/E/W", path, line_no, text)
    return -deg if hemisphere in ("S", "W") else deg


def read_nmea_gga(path: str | Path, date_utc: str | None = None) -> pd.DataFrame:
    """Position fixes from the GGA sentences of an NMEA 0183 log (see the module text)."""
    text = read_text(path)
    date = np.datetime64(date_utc, "D") if date_utc else None
    rows = []
    last_tod = None
    for line_no, raw in enumerate(text.splitlines(), start=1):
        fields = _split_sentence(raw, path, line_no)
        if not fields:
            continue
        kind = fields[0][-3:]
        if kind == "RMC" and len(fields) > 9 and len(fields[9]) == 6:
            d = fields[9]
            date = np.datetime64(f"20{d[4:6]}-{d[2:4]}-{d[0:2]}", "D")
        elif kind == "ZDA" and len(fields) > 4 and fields[2] and fields[3] and fields[4]:
            date = np.datetime64(f"{int(fields[4]):04d}-{int(fields[3]):02d}-{int(fields[2]):02d}", "D")
        if kind != "GGA":
            continue
        if len(fields) < 12:
            raise FileFormatError(f"GGA sentence with {len(fields)} fields, 15 expected", path, line_no, raw)
        if not fields[6] or fields[6] == "0" or not fields[2]:
            continue                                           # no fix
        if date is None:
            raise FileFormatError("GGA sentence before any date (no RMC/ZDA sentence yet); "
                                  "give the UTC date of the log", path, line_no, raw)
        hhmmss = fields[1]
        try:
            tod = int(hhmmss[0:2]) * 3600 + int(hhmmss[2:4]) * 60 + float(hhmmss[4:])
            altitude, separation = float(fields[9]), float(fields[11] or 0.0)
            n_sat = int(fields[7] or 0)
        except ValueError:
            raise FileFormatError("GGA time, altitude or geoid separation is not a number",
                                  path, line_no, raw) from None
        if last_tod is not None and tod < last_tod - 43_200:   # past midnight without a new date
            date = date + np.timedelta64(1, "D")
        last_tod = tod
        lat = _angle(fields[2], fields[3], 2, path, line_no, raw)
        lon = _angle(fields[4], fields[5], 3, path, line_no, raw)
        t_utc = date.astype("datetime64[ns]") + np.timedelta64(round(tod * 1e9), "ns")
        rows.append((t_utc, lat, lon, altitude + separation, int(fields[6]), n_sat, line_no))
    if not rows:
        raise FileFormatError("no valid GGA fix in the file", path)
    df = pd.DataFrame(rows, columns=["time_utc", "lat_deg", "lon_deg", "height_m", "quality", "n_sat", "line"])
    return _finish(df, to_gpst(df["time_utc"].to_numpy(), "UTC"))


def read_fixes_csv(path: str | Path) -> pd.DataFrame:
    """Position fixes from gnssrel's documented CSV layout (see the module text)."""
    lines = [(i, ln) for i, ln in enumerate(read_text(path).splitlines(), start=1)
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
    for line_no, ln in lines[1:]:
        cells = [c.strip() for c in ln.split(",")]
        if len(cells) != len(names):
            raise FileFormatError(f"{len(cells)} columns, the header has {len(names)}", path, line_no, ln)
        row = dict(zip(names, cells))
        try:
            t = to_gpst(np.datetime64(row["time"], "ns"), row["time_scale"])
            values.append([float(row[c]) for c in value_cols])
        except (ValueError, TimeScaleError) as exc:
            raise FileFormatError(f"bad time, scale or number ({exc})", path, line_no, ln) from None
        times.append(t)
        line_nos.append(line_no)
    v = np.asarray(values, dtype=float).reshape(-1, 3)
    cols = dict(zip(value_cols, v.T))
    df = pd.DataFrame(cols)
    df["line"] = line_nos
    return _finish(df, np.asarray(times, dtype="datetime64[ns]"))


def _finish(df: pd.DataFrame, t_gpst) -> pd.DataFrame:
    if "x_m" in df:
        lat, lon, h = ecef_to_geodetic(df[["x_m", "y_m", "z_m"]].to_numpy())
        df["lat_deg"], df["lon_deg"], df["height_m"] = np.degrees(lat), np.degrees(lon), h
    else:
        xyz = geodetic_to_ecef(np.radians(df["lat_deg"].to_numpy()), np.radians(df["lon_deg"].to_numpy()),
                               df["height_m"].to_numpy())
        df["x_m"], df["y_m"], df["z_m"] = xyz[:, 0], xyz[:, 1], xyz[:, 2]
    df.insert(0, "time", np.asarray(t_gpst, dtype="datetime64[ns]"))
    df = df.drop(columns=[c for c in ("time_utc",) if c in df])
    return df.sort_values("time", kind="stable").reset_index(drop=True)


def read_receiver_fixes(path: str | Path, date_utc: str | None = None) -> pd.DataFrame:
    """NMEA or CSV fixes, told apart by content (a ``$`` sentence vs a CSV header)."""
    head = read_text(path).lstrip()[:1]
    return read_nmea_gga(path, date_utc) if head in ("$", "!") else read_fixes_csv(path)
