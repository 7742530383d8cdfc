"""Strict, vectorized reading of the fixed-width fields of navigation records.

Every function works on all records of one system at once (a ``(n_records, n_chars)``
uint8 matrix of their text) and returns, beside the values, a boolean mask of the
records that cannot be read, so that the caller drops those records only.

What "strict" means here (RINEX 3.05 section A.2 and RINEX 2.11 Table A4: the
numeric fields of navigation records are Fortran ``D19.12``; epoch fields are
``I4``/``I2.2``, RINEX 2 ``I2``/``I3``/``F5.1``):

* a filled ``D19.12`` field is right-aligned in its 19 columns with no blank inside,
  an optional sign, a mantissa with one ``.`` and at least one digit, then the
  exponent letter (``D``/``E``, either case), a sign and exactly two digits.  This
  refuses ``_`` (which numpy's float parse would take as a digit separator),
  ``NaN``, ``INF``, numbers cut short and numbers shifted out of their columns;
* an integer field holds digits after optional leading blanks, nothing else.
"""

from __future__ import annotations

import numpy as np

BLANK, DOT, PLUS, MINUS = 32, 46, 43, 45
_EXPONENT_LETTERS = (68, 69, 100, 101)  # D E d e


def char_matrix(records, lines, n_lines, width):
    """(n_records, n_lines * width) uint8 text of the records, lines padded to ``width``.

    ``records``: (first line index, number of lines, ...) per record.  A non-ASCII
    byte (already replaced by U+FFFD when the file was decoded) becomes ``?``, which
    no field accepts.
    """
    rows = []
    for start, count, *_ in records:
        rows += lines[start:start + count]
        if count < n_lines:
            rows += [""] * (n_lines - count)
    buf = "".join([ln.ljust(width)[:width] for ln in rows]).encode("ascii", "replace")
    return np.frombuffer(buf, dtype=np.uint8).reshape(len(records), n_lines * width)


def field_block(chars, starts, width):
    """(n_records, n_fields, width) characters of the fields starting at ``starts``."""
    cols = np.asarray(starts)[:, None] + np.arange(width)
    return np.ascontiguousarray(chars[:, cols])


# Character classes by byte value (one lookup for the whole block).
_OTHER, _BLANK, _DIGIT, _DOT, _SIGN, _EXP = range(6)
_CLASS = np.full(256, _OTHER, dtype=np.uint8)
_CLASS[BLANK], _CLASS[DOT], _CLASS[PLUS], _CLASS[MINUS] = _BLANK, _DOT, _SIGN, _SIGN
_CLASS[48:58] = _DIGIT
_CLASS[list(_EXPONENT_LETTERS)] = _EXP


def fortran_shape_bad(block):
    """(n_records, n_fields) True where a filled field is not a right-aligned ``D19.12``
    number (see the module docstring); blank fields are not bad."""
    return _shapes(block)[1]


def _shapes(block):
    """(exact, bad): fields of the exact shape Fortran writes (``sd.ddddddddddddEsdd``,
    s a blank or sign: almost every field of a real file), and bad fields.  Only the
    fields that are not exact go through the general check."""
    width = block.shape[-1]
    v = block[..., 1:]
    lo, hi = _template_bounds(width)
    exact = ((v >= lo) & (v <= hi)).all(axis=-1)          # digits, '.', 'D'..'e', '+'..'-'
    e = block[..., width - 4] | 32                       # exponent letter, lower case
    c0 = block[..., 0]
    exact &= ((e == 100) | (e == 101)) & (block[..., width - 3] != 44) \
        & ((c0 == BLANK) | (c0 == MINUS) | (c0 == PLUS))
    bad = np.zeros(exact.shape, dtype=bool)
    rest = ~exact
    if rest.any():
        bad[rest] = _general_shape_bad(_CLASS[block[rest]], width)
    return exact, bad


def _template_bounds(width):
    """Per-column byte bounds of columns 2..width of an exact ``D<width>.<width - 7>`` field
    (the exponent letter and sign columns are checked exactly by the caller)."""
    digit, dot, letter, sign = (48, 57), (46, 46), (68, 101), (43, 45)
    cols = [digit, dot] + [digit] * (width - 7) + [letter, sign, digit, digit]
    return (np.array([c[0] for c in cols], dtype=np.uint8), np.array([c[1] for c in cols], dtype=np.uint8))


def _general_shape_bad(cls, width):
    blank = cls == _BLANK
    filled = ~blank.all(axis=-1)
    bad = (cls == _OTHER).any(axis=-1)
    first = np.argmax(~blank, axis=-1)
    # blank inside or after the number: the blanks must be exactly the leading ones
    bad |= blank.sum(axis=-1) != first
    e = width - 4                                        # ...E+dd: letter, sign, two digits
    bad |= (cls[..., e] != _EXP) | (cls[..., e + 1] != _SIGN) | (cls[..., e + 2] != _DIGIT) \
        | (cls[..., e + 3] != _DIGIT)
    mantissa = cls[..., :e]
    bad |= (mantissa == _EXP).any(axis=-1) | ((mantissa == _DOT).sum(axis=-1) != 1)
    lead = np.minimum(first, e - 1)[..., None]  # a field blank up to its exponent has no mantissa
    lead_sign = np.take_along_axis(mantissa, lead, axis=-1)[..., 0] == _SIGN
    bad |= (mantissa == _SIGN).sum(axis=-1) != lead_sign
    bad |= ~(mantissa == _DIGIT).any(axis=-1)
    return bad & filled


# Exact powers of ten (10^0 ... 10^22 are exact doubles).
_POW10 = np.array([float(f"1e{k}") for k in range(23)])


def parse_numbers(block):
    """Values of ``D19.12`` fields: (values, blank, bad), each (n_records, n_fields).

    Blank fields are NaN; bad fields (wrong shape, see :func:`fortran_shape_bad`) are
    NaN and flagged.  Fields of the exact Fortran shape are converted by integer
    arithmetic: the 13 mantissa digits form an integer m < 2^53 and the value is
    m * 10^p or m / 10^p with |p| <= 22, one correctly rounded operation on exact
    operands, so the result equals the correctly rounded decimal (Clinger's fast
    path; W. D. Clinger, "How to read floating point numbers accurately", PLDI 1990).
    Other fields go through numpy's string-to-float conversion.
    """
    width = block.shape[-1]
    blank = (block == BLANK).all(axis=-1)
    exact, bad = _shapes(block)
    digits = np.concatenate([block[..., 1:2], block[..., 3:width - 4]], axis=-1).astype(np.int64) - 48
    n_digits = digits.shape[-1]
    mantissa = digits @ (10 ** np.arange(n_digits - 1, -1, -1, dtype=np.int64))
    exponent = (block[..., width - 2].astype(np.int64) - 48) * 10 + block[..., width - 1] - 48
    exponent = np.where(block[..., width - 3] == MINUS, -exponent, exponent) - (n_digits - 1)
    fast = exact & (np.abs(exponent) <= 22)
    power = _POW10[np.clip(np.abs(exponent), 0, 22)]
    values = np.where(exponent >= 0, mantissa * power, mantissa / power)
    values = np.where(block[..., 0] == MINUS, -values, values)
    slow = ~(fast | blank | bad)
    if slow.any():
        values[slow] = _parse_text(block[slow], bad, slow)
    values[~fast & ~slow] = np.nan
    return values, blank, bad


def _parse_text(fields, bad, where):
    """numpy's conversion of (m, width) well-shaped fields; a failure marks the field bad."""
    fields = fields.copy()
    fields[:, -4] = 69  # the exponent letter (Fortran 'D') -> 'E'; its column is checked
    text = fields.reshape(-1).view(f"S{fields.shape[-1]}")
    try:
        return text.astype(np.float64)
    except ValueError:  # a shape the check let through: find it field by field
        out = np.full(len(text), np.nan)
        positions = np.argwhere(where)
        for k, t in enumerate(text):
            try:
                out[k] = float(t)
            except ValueError:
                bad[tuple(positions[k])] = True
        return out


def parse_integers(chars, start, stop):
    """Integer field in columns [start, stop) of every record: (values, bad).

    Leading blanks then digits only (Fortran ``I``); blank, a sign, a letter or a
    blank inside the digits is bad (value 0).
    """
    return integer_fields(chars[:, start:stop])


def integer_fields(block):
    """:func:`parse_integers` on fields along the last axis of ``block`` (any leading shape)."""
    width = block.shape[-1]
    digit = (block >= 48) & (block <= 57)
    blank = block == BLANK
    any_digit = digit.any(axis=-1)
    first = np.where(any_digit, np.argmax(digit, axis=-1), width)
    after = np.arange(width) >= first[..., None]
    bad = ~any_digit | (after != (digit | (~after & ~blank))).any(axis=-1)
    weights = 10 ** np.arange(width - 1, -1, -1, dtype=np.int64)
    values = np.where(digit, block - 48, 0).astype(np.int64) @ weights
    return np.where(bad, 0, values), bad


def parse_seconds_f51(chars, start, stop):
    """RINEX 2 epoch seconds (``F5.1``, e.g. `` 0.0``, ``30.0``): (values, bad)."""
    block = field_block(chars, [start], stop - start)
    whole, bad_whole = parse_integers(block[:, 0, :], 0, stop - start - 2)
    tenth, bad_tenth = parse_integers(block[:, 0, :], stop - start - 1, stop - start)
    bad = bad_whole | bad_tenth | (block[:, 0, stop - start - 2] != DOT)
    return whole + tenth / 10.0, bad


def days_in_month(year, month):
    """Days of each (year, month) (Gregorian), vectorized; month outside 1-12 gives 0."""
    ok = (month >= 1) & (month <= 12)
    m = np.where(ok, month, 1)
    start = ((year - 1970) * 12 + m - 1).astype("datetime64[M]")
    days = ((start + 1).astype("datetime64[D]") - start.astype("datetime64[D]")).astype(np.int64)
    return np.where(ok, days, 0)
