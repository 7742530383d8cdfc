"""What every mutation of the campaign shares: the result type and the line/field helpers."""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from .seeds import header_length

NUMBER = re.compile(rb"[-+]?(?:\d+\.\d*|\.\d+|\d+)(?:[EeDd][-+]?\d+)?")


@dataclass
class Mutated:
    data: bytes
    what: str                       # e.g. "underscore: line 14 cols 42-60 '5.153684913820E+03' -> ..."
    refusable: bool = False         # a strict reader must refuse the changed value
    suffix: str = ""                # appended to the file name (".gz", ".zip")
    rename: str | None = None       # a new file name (Hatanaka: .crx / .25d)
    line: int | None = None         # 1-based line changed, where there is one
    tags: dict = field(default_factory=dict)


def lines_of(data: bytes) -> list[bytes]:
    return data.splitlines(keepends=True)


def body_range(kind, lines):
    h = header_length(kind, lines)
    return (h, len(lines)) if h < len(lines) else (0, len(lines))


def pick_line(rng, kind, lines, where="body", pattern=None):
    """Index of a line: in the body (or header, or anywhere), optionally matching ``pattern``."""
    h = header_length(kind, lines)
    lo, hi = {"body": (h, len(lines)), "header": (0, h), "any": (0, len(lines))}[where]
    candidates = [i for i in range(lo, hi) if pattern is None or pattern.search(lines[i])]
    if not candidates:
        candidates = [i for i in range(len(lines)) if pattern is None or pattern.search(lines[i])]
    return rng.choice(candidates) if candidates else None


def line_end(line: bytes) -> bytes:
    return line[len(line.rstrip(b"\r\n")):]


def nmea_fix_checksum(line: bytes) -> bytes:
    """Recompute the checksum of an NMEA sentence so that a deeper check is reached."""
    text, eol = line.rstrip(b"\r\n"), line_end(line)
    if not text.startswith(b"$") or b"*" not in text:
        return line
    body = text[1:text.rindex(b"*")]
    check = 0
    for b in body:
        check ^= b
    return b"$" + body + b"*" + f"{check:02X}".encode() + eol


def finish_line(rng, kind, line):
    if kind == "nmea" and rng.random() < 0.7:
        return nmea_fix_checksum(line), " (checksum recomputed)"
    return line, ""


def replace_token(rng, kind, lines, make, what, refusable, where=None):
    """Replace a numeric token of a line by ``make(rng, token) -> bytes``."""
    where = where or ("header" if rng.random() < 0.2 and header_length(kind, lines) else "body")
    i = pick_line(rng, kind, lines, where, NUMBER)
    if i is None:
        return None
    line = lines[i]
    tokens = list(NUMBER.finditer(line.rstrip(b"\r\n")))
    m = rng.choice(tokens)
    new = make(rng, m.group())
    if new is None:
        return None
    changed = line[:m.start()] + new + line[m.end():]
    changed, note = finish_line(rng, kind, changed)
    lines = lines[:i] + [changed] + lines[i + 1:]
    desc = f"{what}: line {i + 1} cols {m.start() + 1}-{m.end()} {m.group().decode()!r} -> {new.decode('latin-1')!r}{note}"
    return Mutated(b"".join(lines), desc, refusable, line=i + 1)


def fit(text: str, width: int) -> bytes:
    return text.rjust(width).encode() if len(text) <= width else text.encode()
