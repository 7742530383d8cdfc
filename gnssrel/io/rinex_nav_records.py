"""Cut the body of a navigation file into records, counting every one.

A record that cannot be cut cleanly (wrong number of lines, unknown system letter,
a RINEX 4 marker that cannot be read) costs that record only: it is counted as
``damaged`` with a warning naming the file and line, and the others are read.
Every record kind of RINEX 2-4 is tabulated (GPS/QZSS LNAV, CNAV, CNV2; Galileo
I/NAV, F/NAV; BeiDou D1, D2, CNV1, CNV2; GLONASS; NavIC; SBAS) or, for STO, EOP
and ION records, read into the header (:mod:`gnssrel.io.rinex_nav_header4`); a
message type unknown to RINEX 4.00 (a later version's) is counted as ``not read: <type>``.

Line counts: RINEX 3.05 Tables A6-A14 and RINEX 4.00 section 5 (8 lines for the
legacy Keplerian records and NavIC, 9 for GPS/QZSS CNAV, 10 for CNV2 and BeiDou
CNV1/CNV2, 4 for SBAS, 4 or (3.05 on) 5 for GLONASS);
RINEX 4.00 markers ``> EPH Snn TYPE``, ``> STO``, ``> EOP``, ``> ION``.
"""

from __future__ import annotations

import re
from collections import Counter
from dataclasses import dataclass, field
from itertools import repeat

import numpy as np

from gnssrel.io import rinex_nav_layout as lay

ITEM = "navigation_records"
NO_SYSTEM = "-"
DAMAGED = "damaged"

# Reasons for records this reader does not tabulate (one short reason per kind).
NOT_READ = {("S", None): "not read: SBAS", ("I", None): "not read: NavIC LNAV"}
_MESSAGE_TYPE = re.compile(r"^[A-Z0-9]{2,4}$")


@dataclass
class Body:
    """The records of a file: tabulated ones by system, ION records, and the counts."""

    groups: dict = field(default_factory=dict)    # letter -> [(first line, n lines, nav type)]
    ion: list = field(default_factory=list)       # [(marker line, n lines, letter, type)]
    sto: list = field(default_factory=list)       # STO records, as ion
    eop: list = field(default_factory=list)       # EOP records, as ion
    counts: Counter = field(default_factory=Counter)  # (system, outcome) -> n, "read" included
    warnings: list = field(default_factory=list)  # (message, 1-based line)
    skipped: dict = field(default_factory=dict)   # header["skipped"] (compatibility)
    allowed: dict = field(default_factory=dict)   # letter -> allowed numbers of lines

    def drop(self, system, reason, line=None, message=None):
        self.counts[(system, "read")] += 1
        self.counts[(system, reason)] += 1
        if message is not None:
            self.warnings.append((message, line))

    def skip(self, key):
        self.skipped[key] = self.skipped.get(key, 0) + 1


def cut_records(lines, first, header, wanted):
    """Records of the body ``lines[first:]`` (trailing blank lines already removed)."""
    body = Body(allowed=lay.record_lines(header["version"]))
    if int(header["version"]) == 4:
        _cut_rinex4(lines, first, body, wanted)
    else:
        _cut_rinex23(lines, first, header, body, wanted)
    return body


def _orphans(body, first, start):
    """Lines between the header and the first record start: one damaged piece."""
    if start > first:
        body.drop(NO_SYSTEM, DAMAGED, first + 1,
                  f"{start - first} line(s) that belong to no record (expected a record's "
                  f"first line)")


def _cut_rinex23(lines, first, header, body, wanted):
    n = len(lines)
    if int(header["version"]) == 2:
        file_letter = header["file_system"]
        starts = [i for i in range(first, n) if lines[i][:2].strip()]
    else:
        file_letter = None
        starts = [i for i in range(first, n) if lines[i][:1] not in (" ", "")]
    _orphans(body, first, starts[0] if starts else n)
    allowed = body.allowed
    counts, groups, skips = body.counts, body.groups, Counter()
    for k, i in enumerate(starts):
        stop = starts[k + 1] if k + 1 < len(starts) else n
        letter = file_letter or lines[i][0]
        if letter not in allowed:
            body.drop(NO_SYSTEM, DAMAGED, i + 1,
                      f"unknown satellite system letter {letter!r} at a record start")
        elif stop - i not in allowed[letter]:
            body.drop(letter, DAMAGED, i + 1, _length_problem(allowed[letter], letter, stop - i, i))
        elif letter in wanted and letter in lay.RECORD_FIELDS:
            counts[(letter, "read")] += 1
            groups.setdefault(letter, []).append((i, stop - i, None))
        else:
            skips[letter] += 1
    for letter, count in skips.items():
        counts[(letter, "read")] += count
        if letter in lay.RECORD_FIELDS:
            counts[(letter, "system not requested")] += count
        else:
            counts[(letter, NOT_READ[(letter, None)])] += count
            key = f"{letter} {'SBAS' if letter == 'S' else 'LNAV'}"
            body.skipped[key] = body.skipped.get(key, 0) + count


def _marker_lines(lines, first):
    """Indices of the lines from ``first`` on that start with ``>`` (RINEX 4 record markers),
    found on the bytes of the joined text (one pass in C, not a Python loop over the lines)."""
    tail = lines[first:]
    if not tail:
        return np.zeros(0, dtype=np.int64)
    lengths = np.fromiter(map(len, tail), dtype=np.int64, count=len(tail))
    offsets = np.concatenate(([0], np.cumsum(lengths + 1)[:-1]))
    # one byte per character ("replace"), so the offsets of the text are those of the bytes
    text = np.frombuffer(("\n".join(tail) + "\n").encode("ascii", "replace"), dtype=np.uint8)
    return np.flatnonzero(text[offsets] == ord(">")) + first


def _cut_rinex4(lines, first, body, wanted):
    """Records of a RINEX 4 body, all records of one marker text (``> EPH G05 CNAV``) at once."""
    n = len(lines)
    starts = _marker_lines(lines, first)
    _orphans(body, first, int(starts[0]) if starts.size else n)
    sizes = np.diff(np.append(starts, n)) - 1          # lines after each marker
    index: dict = {}                                   # marker text -> its number
    ids = np.fromiter((index.setdefault(lines[i], len(index)) for i in starts.tolist()),
                      dtype=np.int64, count=starts.size)
    order = np.argsort(ids, kind="stable")
    bounds = np.searchsorted(ids[order], np.arange(len(index) + 1))
    groups, counts, skips = body.groups, body.counts, Counter()
    for marker, u in index.items():
        rows = order[bounds[u]:bounds[u + 1]]
        at, size = starts[rows], sizes[rows]
        action, letter, what = _classify(marker, wanted)
        if action == "table":
            allowed = lay.lines_of(letter, what, body.allowed)
            ok = (size == allowed[0]) | (size == allowed[-1])   # one or two allowed counts
            for i, c in zip(at[~ok].tolist(), size[~ok].tolist()):
                body.drop(letter, DAMAGED, i + 1, _length_problem(allowed, letter, c, i + 1))
            counts[(letter, "read")] += int(ok.sum())
            groups.setdefault(letter, []).extend(zip((at[ok] + 1).tolist(), size[ok].tolist(),
                                                     repeat(what)))
        elif action in ("ion", "sto", "eop"):
            getattr(body, action).extend(zip(at.tolist(), (size + 1).tolist(), repeat(letter), repeat(what)))
        elif action == "damaged":
            for i in at.tolist():
                body.drop(letter, DAMAGED, i + 1, what)
        else:  # not read: what = (reason, key of header["skipped"] or None)
            bad = size != 4 if letter == "S" else np.zeros(size.size, bool)
            for i, c in zip(at[bad].tolist(), size[bad].tolist()):
                body.drop(letter, DAMAGED, i + 1, _length_problem((4,), letter, c, i + 1))
            skips[(letter, what)] += int((~bad).sum())
    for records in (*groups.values(), body.ion, body.sto, body.eop):
        records.sort()                                 # file order, as the records come
    for (letter, (reason, key)), count in skips.items():
        if not count:
            continue
        counts[(letter, "read")] += count
        counts[(letter, reason)] += count
        if key:
            body.skipped[key] = body.skipped.get(key, 0) + count


def _classify(marker, wanted):
    """(action, system letter, detail) of a RINEX 4 record marker."""
    words = marker[1:].split()
    kind = words[0] if words else ""
    sv = words[1] if len(words) > 1 else ""
    letter = sv[:1] if sv[:1] in lay.RECORD_LINES else NO_SYSTEM
    msg = words[2] if len(words) > 2 else ""
    if kind in ("STO", "EOP", "ION"):
        if len(words) < 3:
            return "damaged", NO_SYSTEM, f"{kind} record marker must read '> {kind} Snn TYPE'"
        return kind.lower(), sv[:1], msg
    if kind != "EPH" or letter == NO_SYSTEM or not _MESSAGE_TYPE.match(msg) or len(words) != 3:
        return "damaged", letter, "record marker must read '> EPH Snn TYPE' (or STO, EOP, ION)"
    if (letter, msg) not in lay.RINEX4_TABLE_TYPES:
        reason = NOT_READ.get((letter, None), f"not read: {msg}") if msg in ("SBAS", "LNAV") \
            else f"not read: {msg}"
        return "skip", letter, (reason, f"EPH {letter} {msg}")
    if letter not in wanted:
        return "skip", letter, ("system not requested", None)
    return "table", letter, msg


def _length_problem(allowed, letter, count, start):
    """Why a record of ``count`` lines starting at index ``start`` cannot be read, or None."""
    if count in allowed:
        return None
    if count < min(allowed):
        return (f"truncated {letter} record: {count} of {min(allowed)} lines "
                f"(record starts at line {start + 1})")
    return (f"{letter} record has {count} lines, expected {' or '.join(map(str, allowed))} "
            f"(record starts at line {start + 1})")
