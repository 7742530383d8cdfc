"""Mutations of the values in a file's fields: the damage a strict reader must refuse.

Characters, underscores, NaN/INF/huge numbers, fields one column off, impossible
dates, counts larger than what follows, garbled satellite ids, CSV/NMEA fields,
navigation records missing lines.  Each is ``(rng, data, kind, ctx) -> Mutated | None``.
"""

from __future__ import annotations

import re

from .damage import (
    NUMBER,
    Mutated,
    finish_line,
    fit,
    line_end,
    lines_of,
    pick_line,
    replace_token,
)
from .seeds import EPOCH_LINE


def digit_sub(rng, data, kind, ctx):
    def make(rng, tok):
        k = rng.randrange(len(tok))
        ch = rng.choice(b"0123456789 -+.eEDxO,/")
        return tok[:k] + bytes([ch]) + tok[k + 1:]
    out = replace_token(rng, kind, lines_of(data), make, "character substitution in a number", False)
    if out is not None:
        new = out.what.rsplit("-> ", 1)[-1]
        out.refusable = bool(re.search(r"[xO,/]", new))
    return out


def underscore(rng, data, kind, ctx):
    def make(rng, tok):
        digits = [k for k in range(1, len(tok) - 1) if tok[k:k + 1].isdigit()]
        if not digits:
            return None
        k = rng.choice(digits)
        return tok[:k] + b"_" + tok[k + 1:]
    return replace_token(rng, kind, lines_of(data), make, "underscore inside a number", True)


def bad_number(rng, data, kind, ctx):
    choice = rng.choice(["NaN", "nan", "INF", "-Inf", "Infinity", "huge", "-huge", "1e400", "***"])

    def make(rng, tok):
        width = len(tok)
        if choice in ("huge", "-huge"):
            sign = "-" if choice == "-huge" else ""
            if b"." not in tok:
                return (sign + "9" * width).encode() if width > 1 else b"9"
            exp = b"D" if b"D" in tok else b"E"
            text = f"{sign}9.{'9' * max(1, width - 7 - len(sign))}{exp.decode()}+99"
            return fit(text, width)
        return fit(choice, width)
    return replace_token(rng, kind, lines_of(data), make, f"number replaced by {choice}", True)


def column_shift(rng, data, kind, ctx):
    lines = lines_of(data)
    i = pick_line(rng, kind, lines, "body", NUMBER)
    if i is None:
        return None
    line = lines[i]
    text, eol = line.rstrip(b"\r\n"), line_end(line)
    tokens = list(NUMBER.finditer(text))
    m = rng.choice(tokens)
    a, b = m.start(), m.end()
    if a > 0 and text[a - 1:a] == b" " and rng.random() < 0.5:
        new = text[:a - 1] + text[a:b] + b" " + text[b:]
        way = "left"
    elif b < len(text) and text[b:b + 1] == b" " or b == len(text):
        new = text[:a] + b" " + text[a:b] + text[b + 1:]
        way = "right"
    else:
        new = text[:a] + b" " + text[a:]
        way = "right (line grows)"
    new, note = finish_line(rng, kind, new + eol)
    lines[i] = new
    return Mutated(b"".join(lines), f"field {m.group().decode()!r} on line {i + 1} shifted one column {way}{note}",
                   True, line=i + 1)


# (start, end) columns of year, month, day, hour, minute, second on an epoch line
DATE_COLUMNS = {
    "nav3": [(4, 8), (8, 11), (11, 14), (14, 17), (17, 20), (20, 23)],
    "nav2": [(2, 5), (5, 8), (8, 11), (11, 14), (14, 17), (17, 22)],
    "obs3": [(1, 6), (6, 9), (9, 12), (12, 15), (15, 18), (18, 29)],
    "obs2": [(0, 3), (3, 6), (6, 9), (9, 12), (12, 15), (15, 26)],
    "sp3": [(2, 7), (7, 10), (10, 13), (13, 16), (16, 19), (19, 31)],
    "clk": [(12, 17), (17, 20), (20, 23), (23, 26), (26, 29), (29, 39)],
    "csv": [(0, 4), (5, 7), (8, 10), (11, 13), (14, 16), (17, 23)],
}
BAD_DATES = [("month", 1, "13"), ("month", 1, "0"), ("30 February", None, None), ("day", 2, "31"),
             ("day", 2, "0"), ("hour", 3, "24"), ("hour", 3, "25"), ("minute", 4, "60"),
             ("minute", 4, "61"), ("second", 5, "61"), ("year", 0, "1020"), ("year", 0, "2099"),
             ("year", 0, "0")]


def impossible_date(rng, data, kind, ctx):
    lines = lines_of(data)
    if kind == "nmea":
        return _nmea_bad_time(rng, lines)
    i = pick_line(rng, kind, lines, "body", EPOCH_LINE[kind])
    if i is None:
        return None
    line = bytearray(lines[i])
    cols = DATE_COLUMNS[kind]
    name, field_index, value = rng.choice(BAD_DATES)

    def put(k, text):
        a, b = cols[k]
        width = b - a
        sep = b"0" if kind == "csv" else b" "
        raw = text.encode()
        if kind == "csv" and k == 5:
            raw = raw.rjust(2, b"0") + b".000"
        elif kind == "csv":
            raw = raw.rjust(width, b"0") if len(raw) <= width else raw
        else:
            raw = raw.rjust(width, sep) if len(raw) <= width else raw
        line[a:b] = raw
    if name == "30 February":
        put(1, "2")
        put(2, "30")
    else:
        if field_index == 0 and kind in ("nav2", "obs2"):
            value = {"1020": "20", "2099": "99", "0": "0"}[value]
        put(field_index, value)
    lines[i] = bytes(line)
    now = lines[i].decode("latin-1").rstrip()
    return Mutated(b"".join(lines), f"impossible date ({name} {value or ''}) on line {i + 1}, now {now[:60]!r}",
                   True, line=i + 1)


def _nmea_bad_time(rng, lines):
    i = pick_line(rng, "nmea", lines, "any", EPOCH_LINE["nmea"])
    text = lines[i].rstrip(b"\r\n").decode("latin-1")
    fields = text.split(",")
    if "ZDA" in fields[0]:
        k, value = rng.choice([(2, "31"), (3, "13"), (2, "00"), (4, "1020"), (2, "xx"), (1, "256100.00")])
    else:
        k, value = 1, rng.choice(["256100.00", "096100.00", "095961.00", "xx", ""])
    fields[k] = value
    new, note = finish_line(rng, "nmea", ",".join(fields).encode() + line_end(lines[i]))
    lines[i] = new
    return Mutated(b"".join(lines), f"impossible NMEA time field {k} = {value!r} on line {i + 1}{note}",
                   True, line=i + 1)


# count fields that must not exceed what follows: kind -> [(line pattern, (start, end))]
COUNT_FIELDS = {
    "obs3": [(re.compile(rb"^> "), (32, 35)), (re.compile(rb"SYS / # / OBS TYPES"), (3, 6))],
    "obs2": [(EPOCH_LINE["obs2"], (29, 32)), (re.compile(rb"# / TYPES OF OBSERV"), (0, 6))],
    "sp3": [(re.compile(rb"^#[a-d]"), (32, 39)), (re.compile(rb"^\+ "), (3, 6))],
    "clk": [(re.compile(rb"# OF SOLN SATS"), (0, 6)), (re.compile(rb"# / TYPES OF DATA"), (0, 6))],
}


def count_too_large(rng, data, kind, ctx):
    lines = lines_of(data)
    pattern, (a, b) = rng.choice(COUNT_FIELDS[kind])
    i = pick_line(rng, kind, lines, "any", pattern)
    if i is None:
        return None
    old = lines[i][a:b]
    try:
        n = int(old)
    except ValueError:
        return None
    new_n = rng.choice([n + 1, n + 5, 10 ** (b - a) - 1])
    lines[i] = lines[i][:a] + str(new_n).rjust(b - a).encode() + lines[i][b:]
    return Mutated(b"".join(lines), f"count on line {i + 1} cols {a + 1}-{b} raised {n} -> {new_n}",
                   line=i + 1)


def short_record(rng, data, kind, ctx):
    """Navigation: a record with fewer lines than its type has."""
    lines = lines_of(data)
    i = pick_line(rng, kind, lines, "body", EPOCH_LINE[kind])
    if i is None:
        return None
    k = rng.randint(1, 7)
    del lines[i + 1:i + 1 + k]
    return Mutated(b"".join(lines), f"record at line {i + 1} lost {k} continuation line(s)", line=i + 1)


SV_GARBLE = [b"G0A", b"X01", b"G 1", b"G00", b"G99", b"g01", b"G1 ", b"   ", b"E\xe901", b"C-1"]
SV_ARGUABLE = (b"G 1", b"G99", b" 0", b"99")   # a blank digit (RINEX 2 allows it), a PRN no satellite has


def sv_garble(rng, data, kind, ctx):
    lines = lines_of(data)
    pattern = {"nav3": EPOCH_LINE["nav3"], "nav2": EPOCH_LINE["nav2"], "obs3": re.compile(rb"^[GEC]\d\d"),
               "obs2": EPOCH_LINE["obs2"], "sp3": re.compile(rb"^P[GEC]\d\d"), "clk": EPOCH_LINE["clk"],
               "csv": EPOCH_LINE["csv"]}[kind]
    i = pick_line(rng, kind, lines, "body", pattern)
    if i is None:
        return None
    line = lines[i]
    new_id = rng.choice(SV_GARBLE)
    if kind == "nav2":
        new_id = rng.choice([b"XX", b" 0", b"99", b"-1", b" A"])
        a = 0
    else:
        m = re.search(rb"[GEC][ \d]\d", line[:40] if kind != "obs2" else line[32:68])
        if m is None:
            return None
        a = m.start() + (32 if kind == "obs2" else 0)
    changed = line[:a] + new_id + line[a + len(new_id):]
    lines[i] = changed
    return Mutated(b"".join(lines), f"satellite id on line {i + 1} col {a + 1} -> {new_id!r}",
                   new_id not in SV_ARGUABLE, line=i + 1)


def csv_field(rng, data, kind, ctx):
    """CSV/NMEA: one comma-separated field replaced by text a strict reader refuses."""
    lines = lines_of(data)
    i = pick_line(rng, kind, lines, "body", re.compile(rb","))
    if i is None:
        return None
    text, eol = lines[i].rstrip(b"\r\n"), line_end(lines[i])
    fields = text.split(b",")
    k = rng.randrange(len(fields))
    value = rng.choice([b"", b"xx", b"NaN", b"1.5", b"A", b"-0", b"9" * 20, b"1e400", b" 1", b"1_0"])
    old = fields[k]
    fields[k] = value
    new, note = finish_line(rng, kind, b",".join(fields) + eol)
    lines[i] = new
    return Mutated(b"".join(lines), f"field {k + 1} on line {i + 1}: {old.decode('latin-1')!r} -> {value!r}{note}",
                   value not in (b"-0", b" 1"), line=i + 1)
