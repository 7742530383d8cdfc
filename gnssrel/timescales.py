"""Time scales: GPST (the package's working scale), GST, QZSST, BDT, GLONASST, UTC, TAI, TT.

Convention: every time inside gnssrel is ``numpy.datetime64[ns]`` on GPST,
converted at the readers' edge.  Differences of times are taken in integer
nanoseconds and only then turned into float seconds (:func:`seconds_between`),
so nanoseconds survive across a GPS week.

Relations used (sources beside each):

* GST = GPST and QZSST = GPST (Galileo OS SIS ICD 5.1.2; IS-QZSS-PNT 3.1.1.4):
  the few-ns steering offsets are broadcast separately and are not applied here.
* BDT = GPST - 14 s (BDS-SIS-ICD-B1I 3.0, 5.2.2: BDT week 0 starts 2006-01-01 00:00:00 UTC,
  when GPST - UTC was 14 s).
* GLONASST = UTC(SU) + 3 h (GLONASS ICD 2008, 3.3.3).
* UTC = GPST - leap seconds (IERS Bulletin C; table below), TAI = GPST + 19 s,
  TT = TAI + 32.184 s (IERS Conventions 2010, ch. 10).
"""

from __future__ import annotations

import re
from datetime import datetime

import numpy as np

from gnssrel.errors import TimeScaleError

NS_PER_S = 1_000_000_000
SECONDS_PER_WEEK = 604_800

SCALES = ("GPST", "GST", "QZSST", "BDT", "GLONASST", "UTC", "TAI", "TT")
"""Time scale names gnssrel understands."""

GPS_EPOCH = np.datetime64("1980-01-06T00:00:00", "ns")  # IS-GPS-200 6.2.4: week 0 starts here
GST_WEEK_ORIGIN = np.datetime64("1999-08-22T00:00:00", "ns")  # Galileo OS SIS ICD 5.1.2 (= GPS week 1024)
BDT_WEEK_ORIGIN_GPST = np.datetime64("2006-01-01T00:00:14", "ns")  # BDS-SIS-ICD 5.2.2, in GPST

# RINEX system letter -> the system's own time scale.
SYSTEM_TIME_SCALE = {"G": "GPST", "E": "GST", "J": "QZSST", "C": "BDT", "R": "GLONASST",
                     "S": "GPST", "I": "GPST"}

# GPST - UTC in whole seconds, from the UTC date it takes effect (IERS Bulletin C,
# leap seconds since 1980; from memory, checked against the RINEX headers in refdata).
_LEAP_TABLE_UTC = (
    ("1981-07-01", 1), ("1982-07-01", 2), ("1983-07-01", 3), ("1985-07-01", 4),
    ("1988-01-01", 5), ("1990-01-01", 6), ("1991-01-01", 7), ("1992-07-01", 8),
    ("1993-07-01", 9), ("1994-07-01", 10), ("1996-01-01", 11), ("1997-07-01", 12),
    ("1999-01-01", 13), ("2006-01-01", 14), ("2009-01-01", 15), ("2012-07-01", 16),
    ("2015-07-01", 17), ("2017-01-01", 18),
)
_LEAP_START_UTC = np.array([np.datetime64(d, "ns") for d, _ in _LEAP_TABLE_UTC])
_LEAP_VALUE_S = np.array([n for _, n in _LEAP_TABLE_UTC], dtype=np.int64)
_LEAP_START_GPST = _LEAP_START_UTC + _LEAP_VALUE_S.astype("timedelta64[s]")
LEAP_TABLE_VALID_UNTIL = np.datetime64("2026-12-28", "ns")
"""IERS Bulletin C has announced no leap second up to this date (from memory)."""


def as_datetime64(t) -> np.ndarray:
    """``t`` as a datetime64[ns] array, refusing timezone-aware or non-time input."""
    arr = np.asarray(t)
    if arr.dtype.kind == "M":
        return arr.astype("datetime64[ns]")
    if arr.dtype == object and arr.size and isinstance(arr.flat[0], datetime) \
            and arr.flat[0].tzinfo is not None:
        raise TimeScaleError("timezone-aware datetimes are not accepted: give numpy datetime64 "
                             "on a named scale (see gnssrel.timescales.to_gpst)")
    try:
        return arr.astype("datetime64[ns]")
    except (TypeError, ValueError):
        raise TimeScaleError(f"not a time: {t!r}") from None


def _leap_seconds(t, starts: np.ndarray) -> np.ndarray:
    idx = np.searchsorted(starts, as_datetime64(t), side="right") - 1
    return np.where(idx >= 0, _LEAP_VALUE_S[np.clip(idx, 0, None)], 0)


def leap_seconds_gpst(t_gpst) -> np.ndarray:
    """GPST - UTC in seconds (int64) at GPST times ``t_gpst`` (built-in table)."""
    return _leap_seconds(t_gpst, _LEAP_START_GPST)


def leap_seconds_utc(t_utc) -> np.ndarray:
    """GPST - UTC in seconds (int64) at UTC times ``t_utc`` (built-in table)."""
    return _leap_seconds(t_utc, _LEAP_START_UTC)


def _check_scale(scale: str) -> str:
    s = scale.upper()
    aliases = {"GPS": "GPST", "GAL": "GST", "QZS": "QZSST", "BDS": "BDT", "GLO": "GLONASST",
               "UTC(SU)": "UTC"}
    s = aliases.get(s, s)
    if s not in SCALES:
        raise TimeScaleError(f"unknown time scale {scale!r}; known: {', '.join(SCALES)}")
    return s


def to_gpst(t, scale: str, leap_seconds: int | None = None) -> np.ndarray:
    """Convert times read on ``scale`` to GPST.

    ``leap_seconds`` (GPST - UTC) overrides the built-in table for UTC and
    GLONASST inputs, e.g. with the value from a RINEX header.
    """
    t = as_datetime64(t)
    s = _check_scale(scale)
    if s in ("GPST", "GST", "QZSST"):
        return t
    if s == "BDT":
        return t + np.timedelta64(14, "s")
    if s == "TAI":
        return t - np.timedelta64(19, "s")
    if s == "TT":
        return t - np.timedelta64(19, "s") - np.timedelta64(32_184, "ms")
    utc = t - np.timedelta64(3, "h") if s == "GLONASST" else t
    leap = leap_seconds_utc(utc) if leap_seconds is None else np.int64(leap_seconds)
    return utc + np.asarray(leap).astype("timedelta64[s]")


def from_gpst(t_gpst, scale: str, leap_seconds: int | None = None) -> np.ndarray:
    """Convert GPST times to ``scale`` (inverse of :func:`to_gpst`)."""
    t = as_datetime64(t_gpst)
    s = _check_scale(scale)
    if s in ("GPST", "GST", "QZSST"):
        return t
    if s == "BDT":
        return t - np.timedelta64(14, "s")
    if s == "TAI":
        return t + np.timedelta64(19, "s")
    if s == "TT":
        return t + np.timedelta64(19, "s") + np.timedelta64(32_184, "ms")
    leap = leap_seconds_gpst(t) if leap_seconds is None else np.int64(leap_seconds)
    utc = t - np.asarray(leap).astype("timedelta64[s]")
    return utc + np.timedelta64(3, "h") if s == "GLONASST" else utc


def seconds_between(t, t0) -> np.ndarray:
    """``t - t0`` in float seconds, differenced in integer nanoseconds first."""
    d = as_datetime64(t) - as_datetime64(t0)
    return d.astype("int64") / NS_PER_S


def week_origin_gpst(scale: str) -> np.datetime64:
    """GPST instant at which week 0 of ``scale``'s week count starts."""
    s = _check_scale(scale)
    return {"GPST": GPS_EPOCH, "QZSST": GPS_EPOCH, "GST": GST_WEEK_ORIGIN,
            "BDT": BDT_WEEK_ORIGIN_GPST}.get(s) or _no_weeks(scale)


def _no_weeks(scale):
    raise TimeScaleError(f"time scale {scale} has no week count")


def from_week_seconds(week, seconds_of_week, scale: str = "GPST") -> np.ndarray:
    """GPST time of (full week number, seconds of week) counted on ``scale``.

    ``seconds_of_week`` may be float; it is rounded to the nanosecond.
    """
    week = np.asarray(week, dtype=np.int64)
    sow_ns = np.round(np.asarray(seconds_of_week, dtype=np.float64) * NS_PER_S).astype(np.int64)
    origin = week_origin_gpst(scale)
    return origin + (week * SECONDS_PER_WEEK * NS_PER_S + sow_ns).astype("timedelta64[ns]")


def to_week_seconds(t_gpst, scale: str = "GPST") -> tuple[np.ndarray, np.ndarray]:
    """(full week, seconds of week) on ``scale`` for GPST times."""
    ns = (as_datetime64(t_gpst) - week_origin_gpst(scale)).astype("int64")
    week_ns = SECONDS_PER_WEEK * NS_PER_S
    week = np.floor_divide(ns, week_ns)
    return week, (ns - week * week_ns) / NS_PER_S


def resolve_week_rollover(week_mod, near_gpst, modulus: int = 1024, scale: str = "GPST") -> np.ndarray:
    """Full week number from a truncated one (``week mod modulus``), taking the
    candidate nearest to ``near_gpst`` (e.g. the file's date).

    GPS legacy navigation messages carry 10 bits (IS-GPS-200 20.3.3.3.1.1),
    so ``modulus=1024``; BDT and GST weeks are 13 and 12 bits.
    """
    near_week, _ = to_week_seconds(near_gpst, scale)
    week_mod = np.asarray(week_mod, dtype=np.int64) % modulus
    base = near_week - np.mod(near_week, modulus)
    cand = base + week_mod
    cand = np.where(cand - near_week > modulus // 2, cand - modulus, cand)
    cand = np.where(near_week - cand > modulus // 2, cand + modulus, cand)
    return cand


def week_crossover(dt_s) -> np.ndarray:
    """Fold a time difference into +-half a week (IS-GPS-200 20.3.3.3.3.1 'tk' rule)."""
    dt = np.asarray(dt_s, dtype=np.float64)
    half = SECONDS_PER_WEEK / 2
    return dt - SECONDS_PER_WEEK * np.round(dt / SECONDS_PER_WEEK) * (np.abs(dt) > half)


_SCALE_SUFFIX = re.compile(r"^\s*(?P<time>[0-9T:\-\. ]+?)\s*(?P<scale>Z|[A-Za-z()]+)?\s*$")


def parse_time(text: str, default_scale: str | None = None) -> np.datetime64:
    """Parse an ISO time with its scale (``2020-06-25T06:00 GPST``, ``...Z`` = UTC) to GPST.

    Without a scale in the text, ``default_scale`` is used; with neither, the
    time is refused rather than guessed.
    """
    m = _SCALE_SUFFIX.match(text or "")
    if not m:
        raise TimeScaleError(f"cannot read time {text!r}; write e.g. '2020-06-25T06:00:00 GPST'")
    scale = m.group("scale")
    if scale is None:
        if default_scale is None:
            raise TimeScaleError(f"time {text!r} has no time scale; append one, e.g. "
                                 f"'{m.group('time').strip()} GPST' (or Z for UTC)")
        scale = default_scale
    if scale == "Z":
        scale = "UTC"
    try:
        t = np.datetime64(m.group("time").strip().replace(" ", "T"), "ns")
    except ValueError:
        raise TimeScaleError(f"cannot read time {text!r}; write e.g. '2020-06-25T06:00:00 GPST'") from None
    return to_gpst(t, scale)[()]


def check_leap_seconds(value: int, near_gpst=None) -> str | None:
    """Why a header's LEAP SECONDS value cannot be right, or None when it is plausible.

    GPS - UTC was 0 at 1980-01-06 and has only grown, one second at a time (IERS
    Bulletin C); it cannot be negative, and no value above the table's latest
    plus a few seconds can be true before the table expires.  With ``near_gpst``
    (an epoch of the file) the value is compared with the built-in table
    (:data:`_LEAP_TABLE_UTC`): a disagreement is returned as a reason too, so the
    caller can warn and keep the table's value.
    """
    value = int(value)
    latest = int(_LEAP_VALUE_S[-1])
    if value < 0:
        return f"LEAP SECONDS {value} is negative (GPS - UTC has never been below 0)"
    if value > latest + 5:
        return f"LEAP SECONDS {value} is far above the latest known value {latest} s"
    if near_gpst is not None:
        expected = int(np.asarray(leap_seconds_gpst(np.asarray([near_gpst], "datetime64[ns]")))[0])
        t = np.datetime64(near_gpst, "ns")
        if value != expected and t <= LEAP_TABLE_VALID_UNTIL:
            return (f"LEAP SECONDS {value} disagrees with the built-in table ({expected} s at "
                    f"{t.astype('datetime64[s]')!s} GPST)")
    return None
