"""Vectorized pieces for reading RINEX observation bodies: lines, fixed columns, numbers.

The whole decompressed body is one ``numpy.uint8`` array; lines are (start, length)
pairs into it.  Fixed-width columns of many lines are gathered at once into a 2-D
byte matrix (one row per line, blank-padded), and numbers are decoded from that
matrix with array operations: no Python loop per line or per observation.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

SPACE = 32
_DIGIT = np.zeros(256, bool)
_DIGIT[48:58] = True
# Characters an F14.3 observation field may hold (RINEX 3.05 table A13, RINEX 2.11 table A2).
_VALUE_CHAR = _DIGIT.copy()
_VALUE_CHAR[[SPACE, ord("."), ord("-"), ord("+")]] = True
NS_PER_S = 1_000_000_000
_BODY_CHAR = _VALUE_CHAR.copy()
_BODY_CHAR[10] = True   # line ends


def lost_lock(flags) -> np.ndarray:
    """Where bit 0 of a loss-of-lock indicator is set (lost lock since the previous observation:
    a cycle slip is possible; RINEX 3.05 5.3.1, RINEX 2.11 table A3); blank (NaN) is not set.
    ``flags``: the ``<phase>lli`` values of ``read_observations(..., with_flags=True)``."""
    return np.mod(np.nan_to_num(np.asarray(flags, float), nan=0.0).astype(np.int64), 2) == 1


@dataclass
class Lines:
    """The body's lines as (start, length) into ``raw`` (no line ends, no CR)."""

    raw: np.ndarray          # uint8, the body, blank-padded at the end by ``pad`` bytes
    starts: np.ndarray       # int64 (n_lines,)
    lengths: np.ndarray      # int64 (n_lines,)
    first_line_number: int   # file line number (1-based) of body line 0
    complete: bool           # False when the file does not end with a line end
    pad: int

    def __len__(self):
        return self.starts.size

    def numbers(self, index) -> np.ndarray:
        """File line numbers (1-based) of body lines ``index``."""
        return np.asarray(index) + self.first_line_number

    def text(self, i: int) -> str:
        s, n = int(self.starts[i]), int(self.lengths[i])
        return self.raw[s:s + n].tobytes().decode("ascii", "replace")


def split_lines(data: bytes, offset: int, first_line_number: int, pad: int = 400) -> Lines:
    """Index the lines of ``data[offset:]`` (LF or CRLF ends)."""
    body = data[offset:]
    if b"\r" in body:
        body = body.replace(b"\r", b"")
    complete = body.endswith(b"\n") or not body
    raw = np.frombuffer(body + b" " * pad, dtype=np.uint8)
    n = len(body)
    ends = np.flatnonzero(raw[:n] == 10)
    starts = np.concatenate(([0], ends + 1))
    ends = np.concatenate((ends, [n]))
    if complete:  # the empty piece after the last line end is not a line
        starts, ends = starts[:-1], ends[:-1]
    return Lines(raw, starts.astype(np.int64), (ends - starts).astype(np.int64),
                 first_line_number, complete, pad)


def columns(lines: Lines, index: np.ndarray, width: int) -> np.ndarray:
    """Columns 0..width-1 of lines ``index`` as a (n, width) uint8 matrix, blank beyond each line."""
    if width > lines.pad:
        raise ValueError("column window wider than the padding")
    index = np.asarray(index, dtype=np.int64)
    windows = sliding_window_view(lines.raw, width)
    m = windows[lines.starts[index]]  # fancy indexing copies: (n, width)
    m[np.arange(width)[None, :] >= lines.lengths[index][:, None]] = SPACE
    return m


def unsigned_field(m: np.ndarray, a: int, b: int) -> tuple[np.ndarray, np.ndarray]:
    """Right-aligned unsigned integer in columns a..b-1 of each row: (value int64, ok bool).

    ok is False for a blank field or any character other than leading blanks and digits.
    """
    chars = m[:, a:b]
    digit = _DIGIT[chars]
    blank = chars == SPACE
    seen_digit = np.cumsum(digit, axis=1) > 0
    ok = digit.any(axis=1) & (digit | (blank & ~seen_digit)).all(axis=1)
    weights = 10 ** np.arange(b - a - 1, -1, -1, dtype=np.int64)
    value = (np.where(digit, chars.astype(np.int64) - 48, 0) * weights).sum(axis=1)
    return value, ok


def seconds_field_ns(m: np.ndarray, a: int, b: int) -> tuple[np.ndarray, np.ndarray]:
    """F11.7 seconds in columns a..b-1 as int64 nanoseconds: (value, ok)."""
    chars = m[:, a:b]
    digit, blank, point = _DIGIT[chars], chars == SPACE, chars == ord(".")
    seen = np.cumsum(digit | point, axis=1) > 0  # no blank once the number has begun
    allowed = (digit | point | (blank & ~seen)).all(axis=1)
    allowed &= digit.any(axis=1) & (point.sum(axis=1) <= 1)
    text = np.ascontiguousarray(chars).view(f"S{b - a}").ravel()
    value = np.zeros(len(text), dtype=np.int64)
    if allowed.any():
        seconds = np.zeros(len(text))
        seconds[allowed] = text[allowed].astype(np.float64)
        # A second of a minute is below 61 (leap second): a longer one is refused here, before
        # the cast to int64 nanoseconds, which it could overflow (e.g. a field of eleven 9s).
        allowed &= seconds < 61.0
        value[allowed] = np.round(seconds[allowed] * NS_PER_S).astype(np.int64)
    return value, allowed


def civil_to_datetime64(year, month, day, hour, minute, ns, ok) -> tuple[np.ndarray, np.ndarray]:
    """Vectorized calendar date + time of day -> datetime64[ns]; ok is False for impossible dates."""
    ok = ok & (month >= 1) & (month <= 12) & (day >= 1) & (day <= 31) & (hour <= 23) \
        & (minute <= 59) & (ns >= 0) & (ns < 61 * NS_PER_S) & (year >= 1980) & (year <= 2200)
    y = np.where(ok, year, 2000)
    mo = np.where(ok, month, 1)
    d = np.where(ok, day, 1)
    month_start = np.datetime64("1970-01", "M") + ((y - 1970) * 12 + mo - 1).astype("timedelta64[M]")
    date = month_start.astype("datetime64[D]") + (d - 1).astype("timedelta64[D]")
    ok &= date.astype("datetime64[M]") == month_start  # rejects 31 April and the like
    t = date.astype("datetime64[ns]") + (np.where(ok, hour, 0) * 3600 + np.where(ok, minute, 0) * 60) \
        .astype(np.int64).astype("timedelta64[s]") + np.where(ok, ns, 0).astype("timedelta64[ns]")
    return t, ok


@dataclass
class DecodedFields:
    values: np.ndarray       # float64 (n_rows, n_fields), NaN where blank
    lli: np.ndarray | None   # float64 (n_rows, n_fields), NaN where blank
    ssi: np.ndarray | None
    bad_row: np.ndarray      # bool (n_rows,): a used field is not a number


def decode_observation_fields(m: np.ndarray, n_used: np.ndarray, with_flags: bool) -> DecodedFields:
    """Decode (n_rows, n_fields, 16) observation fields: F14.3 value, I1 LLI, I1 SSI.

    ``n_used[i]`` is how many leading fields row i's system declares; later fields
    are ignored.  RINEX 3.05 table A13 / RINEX 2.11 table A2 give the layout.
    """
    n_rows, n_fields, _ = m.shape
    used = np.arange(n_fields)[None, :] < n_used[:, None]
    chars = m[:, :, :14]
    blank = (chars == SPACE).all(axis=2)
    wanted = used & ~blank
    bad_row = _shape_bad(chars, wanted)
    wanted &= ~bad_row[:, None]
    text = np.ascontiguousarray(chars).view("S14")[:, :, 0]
    values = np.full((n_rows, n_fields), np.nan)
    try:
        values[wanted] = text[wanted].astype(np.float64)
    except ValueError:  # rare: e.g. "1.2.3"; find the culprits among the distinct strings only
        distinct, inverse = np.unique(text[wanted], return_inverse=True)
        good = np.array([_is_number(s) for s in distinct], dtype=bool)
        rows = np.nonzero(wanted)[0]
        bad_row[rows[~good[inverse]]] = True
        wanted &= ~bad_row[:, None]
        values[wanted] = text[wanted].astype(np.float64)
    values[bad_row] = np.nan
    lli = ssi = None
    if with_flags:
        lli = _flag_digit(m[:, :, 14], used & ~bad_row[:, None])
        ssi = _flag_digit(m[:, :, 15], used & ~bad_row[:, None])
    return DecodedFields(values, lli, ssi, bad_row)


def _shape_bad(chars: np.ndarray, wanted: np.ndarray) -> np.ndarray:
    """Rows where a wanted F14.3 field (``chars`` (n, k, 14)) is no number as written: bool (n,).

    Only digits, blanks, sign and point, the point in the 11th column; anything else (NaN,
    INF, '_', a value shifted out of its columns) makes the record damaged.
    """
    misplaced = chars[:, :, 10] != ord(".")
    return ((~_VALUE_CHAR[chars].all(axis=2) | misplaced) & wanted).any(axis=1)


def lines_with_odd_bytes(lines: Lines) -> np.ndarray:
    """Indices of the lines holding, after their first character (a system letter or '>'), a
    byte no observation record has (not a digit, blank, sign or point: '_', 'N' of NaN ...).

    One pass over the body, for records that are not decoded (systems not requested).
    """
    raw = lines.raw[:lines.raw.size - lines.pad]
    odd = np.flatnonzero(~_BODY_CHAR[raw])
    if not odd.size:
        return np.zeros(0, np.int64)
    owner = np.searchsorted(lines.starts, odd, side="right") - 1
    return np.unique(owner[odd != lines.starts[owner]])


def _flag_digit(chars: np.ndarray, used: np.ndarray) -> np.ndarray:
    out = np.where(_DIGIT[chars] & used, chars.astype(np.float64) - 48.0, np.nan)
    return out


def _is_number(s: bytes) -> bool:
    try:
        float(s)
    except ValueError:
        return False
    return True


def sv_names(m3: np.ndarray, blank_system: str = "", strict: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """Satellite names from (n, 3) byte rows like b'G05', b'G 5' or (RINEX 2) b' 5': (names 'U3', ok).

    ``strict`` (RINEX 3/4): a blank tens digit (b'G 5') is refused; number 00 always is.
    """
    m3 = m3.copy()
    m3[m3 >= 128] = ord("?")  # a non-ASCII byte is no satellite (and must not reach the text decoding)
    if blank_system:
        m3[m3[:, 0] == SPACE, 0] = ord(blank_system)
    tens_blank = m3[:, 1] == SPACE
    m3[tens_blank, 1] = ord("0")
    letter_ok = np.isin(m3[:, 0], np.frombuffer(b"GRECJSI", np.uint8))
    ok = letter_ok & _DIGIT[m3[:, 1]] & _DIGIT[m3[:, 2]]
    # No system has a satellite number 00 (PRNs and GLONASS slots start at 1): refused.
    ok &= ~((m3[:, 1] == ord("0")) & (m3[:, 2] == ord("0")))
    if strict:   # RINEX 3/4: satellite number A1,I2.2, so G05, never G 5 (RINEX 3.05 table A13)
        ok &= ~tens_blank
    names = np.ascontiguousarray(m3).view("S3")[:, 0].astype("U3")
    return names, ok


def repeated_in_epoch(owner: np.ndarray, names: np.ndarray) -> np.ndarray:
    """Records whose satellite appears twice in its epoch (bool, both copies): which of them holds
    the satellite's values cannot be told, so they damage their epoch like a bad name."""
    if names.size < 2:
        return np.zeros(names.size, bool)
    order = np.lexsort((names, owner))
    same = (owner[order][1:] == owner[order][:-1]) & (names[order][1:] == names[order][:-1])
    out = np.zeros(names.size, bool)
    out[order[1:][same]] = True
    out[order[:-1][same]] = True
    return out


def refused_ids(m3, name_ok, repeated, line_numbers, listed: int = 20) -> list:
    """(file line, id as written, why) of the first ``listed`` satellite ids refused, for the warnings."""
    out = []
    for i in np.flatnonzero(~name_ok | repeated)[:listed]:
        text = bytes(m3[i]).decode("ascii", "replace")
        if repeated[i] and name_ok[i]:
            why = "the satellite appears twice in its epoch"
        elif text[1:].replace(" ", "0") == "00" and text[:1] in "GRECJSI ":
            why = "satellite number 00 (no system has one)"
        elif text[1:2] == " " and text[2:].isdigit():
            why = "blank in the satellite number (RINEX 3 writes G05)"
        else:
            why = "not a satellite id"
        out.append((int(line_numbers[i]), text, why))
    return out
