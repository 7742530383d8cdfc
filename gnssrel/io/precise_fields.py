"""Strict reading of the fixed-width fields of SP3 and RINEX clock records, all records at once.

A field is accepted only when a strict reading of its Fortran edit descriptor
would accept it: ``Fw.d`` has its decimal point exactly ``d`` places from the
right end and digits after it, ``Iw`` is right-justified digits, and both allow
leading blanks and one sign only.  So ``1_000.5``, ``NaN``, ``INF``, a stray
letter, a field shifted by one column or cut short are refused, where numpy's
and Python's float parsers would accept some of them (``float("1_0")`` is 10).

Shared checks: calendar dates (no 30 February), epochs far from the bulk of a
file's epochs, and duplicate keys (exact copies kept once, disagreeing copies
refused).  Everything works on ``(n, width)`` uint8 matrices, one vectorized
pass per field.
"""

from __future__ import annotations

import re

import numpy as np

SPACE, DOT, MINUS, PLUS = 32, 46, 45, 43
FAR_OFF_MARGIN_NS = 6 * 3600 * 10**9
"""Epochs more than this beyond the span of the bulk of a file's epochs are refused (see far_off)."""
PLAUSIBLE_YEARS = (1980, 2100)
"""GNSS products exist from the GPS epoch (1980-01-06) on; later than 2100 is a garbled year."""

STRICT_NUMBER = re.compile(rb"[+-]?(?:\d+\.\d*|\.\d+)(?:[Ee][+-]?\d{1,3})?")
"""A free-standing Fortran real (F or E edit descriptor): a decimal point is required."""


def matrix(lines, width: int) -> np.ndarray:
    """Lines (bytes) as an (n, width) uint8 matrix, padded (and NULs replaced) with blanks.

    Column-major, so that each field column is one contiguous vector.
    """
    fixed = np.array(lines, dtype=f"S{width}") if len(lines) else np.zeros(0, dtype=f"S{width}")
    m = np.asfortranarray(fixed.view(np.uint8).reshape(len(lines), width))
    m[m == 0] = SPACE
    return m


def digits(col: np.ndarray) -> np.ndarray:
    """Which bytes are ASCII digits."""
    return (col - np.uint8(48)) <= 9  # uint8 arithmetic wraps below '0'


def _prefix(m: np.ndarray, start: int, end: int):
    """Columns of the form blanks, optional sign, digits: (valid, all blank, negative, digits as int)."""
    n = m.shape[0]
    valid = np.ones(n, bool)
    started = np.zeros(n, bool)
    negative = np.zeros(n, bool)
    value = np.zeros(n, np.int64)
    for c in range(start, end):
        col = m[:, c]
        digit = digits(col)
        space = col == SPACE
        minus = col == MINUS
        sign = minus | (col == PLUS)
        valid &= digit | ((space | sign) & ~started)
        negative |= minus
        started |= ~space
        value = value * 10 + np.where(digit, col, 48).astype(np.int64) - 48
    return valid, ~started, negative, value


def _all_digits(m: np.ndarray, start: int, end: int, value=None):
    valid = np.ones(m.shape[0], bool)
    for c in range(start, end):
        col = m[:, c]
        digit = digits(col)
        valid &= digit
        if value is not None:
            value = value * 10 + np.where(digit, col, 48).astype(np.int64) - 48
    return valid, value


def blank(m: np.ndarray, start: int, end: int) -> np.ndarray:
    out = np.ones(m.shape[0], bool)
    for c in range(start, end):
        out &= m[:, c] == SPACE
    return out


def integer(m: np.ndarray, start: int, end: int) -> tuple[np.ndarray, np.ndarray]:
    """An ``Iw`` field (unsigned, right-justified): (value, valid)."""
    valid, _, negative, value = _prefix(m, start, end)
    return value, valid & ~negative & (m[:, start:end] != PLUS).all(axis=1) & digits(m[:, end - 1])


def fixed_float(m: np.ndarray, start: int, end: int, decimals: int):
    """An ``Fw.d`` field: (value, valid, blank).  Invalid and blank fields give NaN.

    The digits form one exact integer (at most 15 of them) divided by the exact
    10**d: the correctly rounded quotient is the double a decimal parser gives.
    """
    dot = end - decimals - 1
    valid, prefix_blank, negative, value = _prefix(m, start, dot)
    frac_ok, value = _all_digits(m, dot + 1, end, value)
    valid &= (m[:, dot] == DOT) & frac_ok
    is_blank = prefix_blank & blank(m, dot, end)
    if end - start - 1 > 15:
        return _parse(m[:, start:end], valid), valid, is_blank
    out = np.where(negative, -value, value) / float(10 ** decimals)
    return np.where(valid, out, np.nan), valid, is_blank


def _parse(sub: np.ndarray, valid: np.ndarray) -> np.ndarray:
    out = np.full(len(sub), np.nan)
    if valid.any():
        text = np.ascontiguousarray(sub[valid]).view(f"S{sub.shape[1]}").ravel()  # row-major copy
        out[valid] = text.astype(np.float64)  # only text already checked character by character
    return out


STRICT_E = re.compile(rb"[+-]?\d*\.\d+[ED][+-]\d\d")
"""A free-standing Fortran ``Ew.d`` real as written: point, digits, a two-digit exponent.

A value cut short (``0.70646203``, ``0.706462030878E-1``) is thus refused, not read."""


def strict_tokens(text: bytes, pattern=STRICT_E) -> list[float] | None:
    """Blank-separated strict reals, or None when any token is not one."""
    out = []
    for token in text.split():
        if not pattern.fullmatch(token):
            return None
        out.append(float(token.replace(b"D", b"E")))
    return out


def valid_date(year, month, day, hour, minute, second, max_second=60.0) -> np.ndarray:
    """Calendar check: no 30 February, hours 0-23, minutes 0-59, 0 <= seconds < max_second."""
    leap = ((year % 4 == 0) & (year % 100 != 0)) | (year % 400 == 0)
    mdays = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])[np.clip(month - 1, 0, 11)] \
        + ((month == 2) & leap)
    return (year >= PLAUSIBLE_YEARS[0]) & (year <= PLAUSIBLE_YEARS[1]) & (month >= 1) & (month <= 12) \
        & (day >= 1) & (day <= mdays) & (hour <= 23) & (minute <= 59) & (second >= 0) & (second < max_second)


def compose(year, month, day, hour, minute, second) -> np.ndarray:
    """Validated calendar fields -> datetime64[ns] (no time scale conversion)."""
    months = (year - 1970) * 12 + (month - 1)
    dates = months.astype("datetime64[M]").astype("datetime64[D]") + (day - 1).astype("timedelta64[D]")
    ns = (hour * 3600 + minute * 60) * 1_000_000_000 + np.rint(second * 1e9).astype(np.int64)
    return dates.astype("datetime64[ns]") + ns.astype("timedelta64[ns]")


def far_off(times: np.ndarray) -> np.ndarray:
    """Epochs far from the bulk of the file's epochs (a garbled year, month or day).

    The bulk is the median epoch and the median absolute deviation (for epochs
    spread evenly over a span S the MAD is S/4, so 2 MAD is the half-span); an
    epoch further than 3 MAD + 6 h from the median is refused.  A day file
    thus keeps everything within about 24 h of its midday (common practice:
    robust outlier rule; the margin is ours).
    """
    if len(times) == 0:
        return np.zeros(0, dtype=bool)
    t = times.astype("datetime64[ns]").astype(np.int64)
    med = np.median(t)
    mad = np.median(np.abs(t - med))
    return np.abs(t - med) > 3 * mad + FAR_OFF_MARGIN_NS


def duplicates(keys: list[np.ndarray], values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Records sharing a key: (exact copy after the first, member of a disagreeing group).

    ``keys``: arrays of equal length (e.g. time as int64, name index); ``values``
    (n, k) floats compared with NaN equal to NaN.  The first of exact copies is
    kept; when copies disagree, every record of the key is refused.
    """
    n = len(values)
    copy = np.zeros(n, dtype=bool)
    conflict = np.zeros(n, dtype=bool)
    if n < 2:
        return copy, conflict
    order = np.lexsort(tuple([np.arange(n)] + list(keys[::-1])))
    same_key = np.ones(n - 1, dtype=bool)
    for k in keys:
        ks = k[order]
        same_key &= ks[1:] == ks[:-1]
    if not same_key.any():
        return copy, conflict
    v = values[order]
    equal = ((v[1:] == v[:-1]) | (np.isnan(v[1:]) & np.isnan(v[:-1]))).all(axis=1)
    group = np.concatenate([[0], np.cumsum(~same_key)])
    bad_groups = np.unique(group[1:][same_key & ~equal])
    in_bad = np.isin(group, bad_groups)
    later = np.concatenate([[False], same_key])
    conflict[order] = in_bad
    copy[order] = later & ~in_bad
    return copy, conflict


def off_grid(times: np.ndarray, share: float = 0.75) -> np.ndarray:
    """Epochs off the file's sampling grid (a garbled second or minute: 00:01:02 in a 30 s file).

    The step is the most common spacing of the distinct epochs, the phase their most
    common remainder; judged only when at least ``share`` of the epochs lie on
    that grid (an irregularly sampled file has no grid to judge by).
    """
    t = times.astype("datetime64[ns]").astype(np.int64)
    distinct = np.unique(t)
    if len(distinct) < 3:
        return np.zeros(len(t), dtype=bool)
    steps, counts = np.unique(np.diff(distinct), return_counts=True)
    step = steps[np.argmax(counts)]
    phases, counts = np.unique(distinct % step, return_counts=True)
    on = (t - phases[np.argmax(counts)]) % step == 0
    return ~on if on.mean() >= share else np.zeros(len(t), dtype=bool)
