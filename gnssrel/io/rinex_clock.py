"""Reader for RINEX clock files, versions 2.x and 3.0x (AS and AR records).

Format: "RINEX Extensions to Handle Clock Information", J. Ray and W. Gurtner,
version 2.00 (1999), 3.00 (2006), 3.02 (2010) and 3.04 (2017, with M. Coleman).
A data record is ``A2,1X,A4,1X,I4,4(1X,I2),F10.6,I3,3X,2(E19.12,1X)`` up to
3.02 (then a continuation line ``4(E19.12,1X)`` when more than two values
follow); 3.04 widens the name to ``A9`` and the header labels move from column
61 to column 66.  Which layout a file uses is taken from its version and
confirmed on its first data records.

The fixed prefix (type, name, epoch, number of values) is read at its columns.
The values after it are E19.12 reals each followed by one blank ("2(E19.12,1X)",
data record table of the format, 3.04 included; from memory, the text of
rinex_clock304.txt was not at hand): a list of blank-separated reals, read as
such.  A value standing a column off its nominal place is thus read whole,
never cut at a fixed column and mis-scaled (the 3.04 sigmas one column right
used to come out x10-x100 wrong); a token that is not a strict E-format real
(point, digits, a two-digit exponent) refuses the record.  Lines whose every
column has the class of the canonical layout are parsed vectorized; only the
others go through the token reader.

A damaged record costs that record: it is skipped, counted in
``ds.attrs["accounting"]`` (item ``clock_records``: AS records per system;
other record types under system "-") and warned about with file and line.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import xarray as xr

from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError, TimeScaleError
from gnssrel.io import precise_fields as pf
from gnssrel.io.opening import read_bytes
from gnssrel.io.rinex_clock_header import TIME_SYSTEMS, parse_header
from gnssrel.timescales import to_gpst

__all__ = ["read_rinex_clock"]

ITEM = "clock_records"
RECORD_TYPES = {b"AR": "receiver clock", b"AS": "satellite clock", b"CR": "calibration",
                b"DR": "discontinuity", b"MS": "monitor"}
"""Data record types of the format (section 'Data record types')."""

# Columns after the name field, relative to where the year starts (0-based, end exclusive).
_INTS = {"year": (0, 4), "month": (5, 7), "day": (8, 10), "hour": (11, 13), "minute": (14, 16),
         "count": (26, 29)}
_SECOND = (16, 26, 6)             # F10.6
_BLANKS = (-1, 4, 7, 10, 13, 29, 30, 31)
_BIAS, _SIGMA = (32, 51), (52, 71)  # nominal places of the two values (E19.12, 1X)
_YEAR_COLUMN = {4: 8, 9: 13}      # A2,1X,A4,1X -> 8; A2,1X,A9,1X -> 13
MAX_VALUES = 6                    # bias, sigma, rate, sigma, acceleration, sigma
MAX_ABS_S = 1.0                   # |clock bias| and sigma below 1 s (common practice: ms-level clocks)
_SAT_LETTERS = b"GRECJIS"
REASONS = ("", "non-ASCII byte", "damaged epoch or name field", "impossible number of values",
           "impossible epoch", "damaged number", "number of values disagrees with the line",
           "value outside physical range")
"""Why a record is refused; ``rec["reason"]`` holds the index into this tuple (0: not refused)."""
_R = {name: code for code, name in enumerate(REASONS)}


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
    attrs: ``time_scale``, ``source_time_system``, ``version``, ``agency``, ``path``,
    ``accounting`` (:meth:`gnssrel.accounting.Ledger.as_dict`).
    """
    path = Path(path)
    kinds = tuple(k.upper() for k in kinds)
    for kind in kinds:
        if kind not in ("AS", "AR"):
            raise FileFormatError(f"record kind {kind!r} not supported (AS and AR are)", path)
    ledger = Ledger()
    raw = read_bytes(path)
    lines = raw.splitlines()
    header, body_start = parse_header(lines, path, ledger)
    body = lines[body_start:]
    if not any(line.strip() for line in body):
        raise FileFormatError("RINEX clock file has no data records after END OF HEADER", path, body_start)

    rec = _parse_body(body, body_start, header, path, ledger, raw.isascii())
    if not len(rec["line"]):
        first = next(i for i, line in enumerate(body) if line.strip())
        raise FileFormatError("RINEX clock body holds no data record (AR, AS, CR, DR or MS lines)", path,
                              body_start + first + 1, body[first].decode("ascii", errors="replace"))
    wanted = None if systems is None else {s.upper() for s in systems}
    ok = rec["ok"]
    is_as = rec["type"] == b"AS"
    is_ar = rec["type"] == b"AR"
    system = np.where(is_as & rec["sv_ok"], rec["letter"], b"-")
    read_here = is_as | is_ar if "AR" in kinds else is_as
    drop = _Drops(ledger, path)
    drop.read(system[read_here])
    for code, label in RECORD_TYPES.items():  # record types not read: counted under "-"
        if code == b"AS" or (code == b"AR" and "AR" in kinds):
            continue
        n = int(np.count_nonzero(rec["type"] == code))
        if n:
            ledger.read(ITEM, "-", n)
            ledger.drop(ITEM, "-", f"not read: {code.decode()} {label}", n)
    alive = read_here.copy()
    alive = drop(is_as & ~rec["sv_ok"], system, rec["line"], "damaged satellite name", alive)
    # No system has a satellite number 00 (PRNs and slots start at 1): a garbled name.
    alive = drop(is_as & rec["sv_ok"] & rec["sv_zero"], system, rec["line"], "satellite number 00", alive)
    for code in np.unique(rec["reason"][rec["reason"] > 0]):
        alive = drop(rec["reason"] == code, system, rec["line"], REASONS[code], alive)
    alive &= ok
    if wanted is not None:
        alive = drop(is_as & ~np.isin(system, [w.encode() for w in wanted]), system, rec["line"],
                     "system not selected", alive)
    times = rec["time"]
    if alive.any():
        far = np.zeros(len(alive), bool)
        far[alive] = pf.far_off(times[alive])
        alive = drop(far, system, rec["line"], "epoch far from the file's other epochs", alive)
        grid = np.zeros(len(alive), bool)
        grid[alive] = pf.off_grid(times[alive])
        alive = drop(grid, system, rec["line"], "epoch off the file's sampling grid", alive)
    all_names, name_index = np.unique(rec["name"], return_inverse=True)
    copy, conflict = _duplicates(rec, times, name_index, len(all_names), alive)
    alive = drop(conflict, system, rec["line"], "conflicting duplicates", alive)
    alive = drop(copy, system, rec["line"], "duplicate", alive)
    drop.used(system[alive])
    if not alive.any() and drop.damaged:
        raise FileFormatError(f"no usable clock record: every record is damaged or refused "
                              f"({', '.join(sorted(ledger.dropped(ITEM)))})", path, drop.first_line)
    try:
        gps = np.full(len(times), np.datetime64("NaT"), "datetime64[ns]")
        gps[alive] = to_gpst(times[alive], TIME_SYSTEMS[header["time_system"]], header.get("leap_seconds"))
    except TimeScaleError as exc:
        raise FileFormatError(exc.message, path) from None

    data, coords = {}, {}
    blocks = [(is_as, "sv", "clock")] if "AS" in kinds else []
    if "AR" in kinds:
        blocks.append((is_ar, "station", "station_clock"))
    sel_all = np.zeros(len(alive), bool)
    for sel, _, _ in blocks:
        sel_all |= sel & alive
    grid = np.unique(gps[sel_all])
    for sel, dim, prefix in blocks:
        sel = sel & alive
        present = np.bincount(name_index[sel], minlength=len(all_names)) > 0
        names, col = all_names[present], (np.cumsum(present) - 1)[name_index[sel]]
        row = np.searchsorted(grid, gps[sel])
        bias = np.full((len(grid), len(names)), np.nan)
        sigma = np.full((len(grid), len(names)), np.nan)
        bias[row, col] = rec["bias"][sel]
        sigma[row, col] = rec["sigma"][sel]
        data[f"{prefix}_s"] = (("time", dim), bias)
        data[f"{prefix}_sigma_s"] = (("time", dim), sigma)
        coords[dim] = np.array([n.decode().strip() for n in names], dtype=str)
    coords["time"] = grid
    attrs = {"time_scale": "GPST", "source_time_system": header["time_system"],
             "version": header["version"], "agency": header.get("agency", ""),
             "path": str(path), "accounting": ledger.as_dict()}
    return xr.Dataset(data, coords=coords, attrs=attrs)


def _duplicates(rec, times, name_index, n_names, alive):
    """Records repeating a (time, type, name) key: (exact copy after the first, disagreeing copies).

    Cells of the (time, name) grid counted with bincount; only keys found more than once
    go to the full comparison (pf.duplicates).
    """
    none = np.zeros(len(alive), bool)
    if not alive.any():
        return none, none
    _epochs, row = np.unique(times[alive], return_inverse=True)
    cell = (row.astype(np.int64) * n_names + name_index[alive]) * 2 + (rec["type"][alive] == b"AR")
    counts = np.bincount(cell)
    if counts.max() < 2:
        return none, none
    again = np.flatnonzero(alive)[counts[cell] > 1]
    copy, conflict = none.copy(), none.copy()
    c, k = pf.duplicates([times[again].astype(np.int64), rec["type"][again].view(np.uint16).astype(np.int64),
                          name_index[again]], np.column_stack([rec["bias"][again], rec["sigma"][again]]))
    copy[again], conflict[again] = c, k
    return copy, conflict


class _Drops:
    """Per-record refusals: count per system and reason, warn with file and line."""

    def __init__(self, ledger: Ledger, path: Path):
        self.ledger, self.path = ledger, path
        self.damaged = 0
        self.first_line = None

    def _count(self, systems, outcome):
        counts = np.bincount(systems.view(np.uint8), minlength=256)
        for code in np.flatnonzero(counts):
            self.ledger.add(ITEM, chr(code), outcome, int(counts[code]))

    def read(self, systems):
        self._count(systems, "read")

    def used(self, systems):
        self._count(systems, "used")

    def __call__(self, mask, systems, lines, reason, alive):
        hit = mask & alive
        if hit.any():
            self._count(systems[hit], reason)
            if reason != "system not selected":
                self.damaged += int(hit.sum())
                first = int(lines[hit][0])
                self.first_line = first if self.first_line is None else min(self.first_line, first)
                for n in lines[hit][:20]:
                    self.ledger.warn(f"RINEX clock record skipped: {reason}", self.path, int(n))
        return alive & ~mask


def _layout_width(body, types, header) -> int:
    """Name width (4 or 9) that fits most of the first data records (a damaged one does not decide)."""
    votes = {4: 0, 9: 0}
    for i in np.flatnonzero(types)[:25]:
        line = body[i]
        for width, y0 in _YEAR_COLUMN.items():
            year = line[y0:y0 + 4]
            if year.isdigit() and line[y0 - 1:y0] == b" " and line[y0 + 4:y0 + 5] == b" ":
                votes[width] += 1
    best = max(votes, key=lambda w: (votes[w], w == header["name_width"]))
    return best if votes[best] else header["name_width"]


# Character classes for the canonical record layout (one bit each; NUL padding counts as blank).
_SP, _DG, _DT, _MI, _PL, _EX = 1, 2, 4, 8, 16, 32
_CLASS = np.zeros(256, np.uint8)
_CLASS[[0, 32]] = _SP
_CLASS[48:58] = _DG
_CLASS[[46, 45, 43, 69]] = [_DT, _MI, _PL, _EX]
_I2 = [_SP | _DG, _DG]
_E19 = [_SP | _MI, _DG, _DT] + [_DG] * 12 + [_EX, _MI | _PL, _DG, _DG]  # E19.12 as Fortran writes it
_PREFIX = [_SP] + [_DG] * 4 + ([_SP] + _I2) * 4 \
    + [_SP, _SP | _DG, _DG, _DT] + [_DG] * 6 + [_SP, _SP, _DG] + [_SP] * 3  # 1X,I4,4(1X,I2),F10.6,I3,3X
_TWO = np.array(_PREFIX + _E19 + [_SP] + _E19 + [_SP], np.uint8)      # columns y0-1 .. y0+71
_ONE = np.array(_PREFIX + _E19 + [_SP] + [_SP] * 19 + [_SP], np.uint8)


def _canonical(u, y0, lengths):
    """Records in the canonical layout (every column of its class): (one value, two values)."""
    cls = _CLASS[u[:, y0 - 1:y0 + 72]]
    short = lengths <= y0 + 72
    prefix = ((cls[:, :52] & _TWO[:52]) != 0).all(axis=1) & short & (u[:, 2] == pf.SPACE)
    two = prefix & ((cls[:, 52:] & _TWO[52:]) != 0).all(axis=1)
    one = prefix & ~two & (cls[:, 52:] == _SP).all(axis=1)
    return one, two


def _sfield(u, start, end):
    return np.ascontiguousarray(u[:, start:end]).view(f"S{end - start}").ravel()


def _digits_value(u, start, end):
    """Digits and leading blanks of checked columns as an integer."""
    block = u[:, start:end].astype(np.int32) - 48
    np.maximum(block, 0, out=block)  # a blank counts as a leading zero
    return (block @ (10 ** np.arange(end - start - 1, -1, -1, dtype=np.int32))).astype(np.int64)


def _read_canonical(u, y0, two):
    """Fields of canonical records: every character is already checked.

    Integers and the F10.6 second from their digits (an exact integer over the exact
    10**6 is the double a decimal parser gives); the E19.12 values parsed by numpy.
    """
    out = {k: _digits_value(u, y0 + a, y0 + b) for k, (a, b) in _INTS.items()}
    a, b, d = _SECOND
    whole = _digits_value(u, y0 + a, y0 + b - d - 1)
    out["second"] = (whole * 10**d + _digits_value(u, y0 + b - d, y0 + b)) / 10.0**d
    out["bias"] = _sfield(u, y0 + _BIAS[0], y0 + _BIAS[1]).astype(np.float64)
    sigma = np.full(len(u), np.nan)
    if two.any():
        sigma[two] = _sfield(u[two], y0 + _SIGMA[0], y0 + _SIGMA[1]).astype(np.float64)
    out["sigma"] = sigma
    return out


def _read_strict(m, y0, lines, ascii_ok):
    """Fields of other records, column by column (pf validators) and the values token by token."""
    n = len(m)
    reason = np.zeros(n, np.int8)
    ints = {k: pf.integer(m, y0 + a, y0 + b) for k, (a, b) in _INTS.items()}
    second, sec_ok, _ = pf.fixed_float(m, y0 + _SECOND[0], y0 + _SECOND[1], _SECOND[2])
    prefix_ok = sec_ok & np.all([v for _, v in ints.values()], axis=0) \
        & np.all([m[:, y0 + c] == pf.SPACE for c in _BLANKS], axis=0) & (m[:, 2] == pf.SPACE)
    reason[~prefix_ok] = _R["damaged epoch or name field"]
    reason[~ascii_ok] = _R["non-ASCII byte"]
    out = {k: v for k, (v, _) in ints.items()}
    out["second"] = second
    bias, sigma = np.full(n, np.nan), np.full(n, np.nan)
    count = out["count"]
    for i in np.flatnonzero(reason == 0):
        values = pf.strict_tokens(lines[i][y0 + _INTS["count"][1]:])
        if values is None:
            reason[i] = _R["damaged number"]
        elif not 1 <= count[i] <= MAX_VALUES:
            reason[i] = _R["impossible number of values"]
        elif len(values) != min(int(count[i]), 2):
            reason[i] = _R["number of values disagrees with the line"]
        else:
            bias[i] = values[0]
            sigma[i] = values[1] if len(values) > 1 else np.nan
    out.update(bias=bias, sigma=sigma, reason=reason)
    return out


def _parse_body(body, body_start, header, path, ledger, all_ascii) -> dict:
    n_lines = len(body)
    nums_all = np.arange(body_start + 1, body_start + 1 + n_lines)
    u_all = np.array(body, dtype="S85").view(np.uint8).reshape(n_lines, 85)
    types2 = _sfield(u_all, 0, 2)
    is_record = np.isin(types2, list(RECORD_TYPES)) & ((u_all[:, 2] == pf.SPACE) | (u_all[:, 2] == 0))
    width = _layout_width(body, is_record, header)
    if width != header["name_width"]:
        ledger.warn(f"RINEX clock records use the A{width} name layout, not the one of version "
                    f"{header['version']}", path, int(nums_all[np.flatnonzero(is_record)[0]]))
    y0 = _YEAR_COLUMN[width]
    idx = np.flatnonzero(is_record)
    lengths_all = np.fromiter(map(len, body), dtype=np.int64, count=n_lines)
    _other_lines(body, is_record, idx, y0, nums_all, lengths_all, path, ledger)
    n = len(idx)
    u = u_all if n == n_lines else u_all[idx]
    lengths = lengths_all[idx]
    ascii_ok = np.ones(n, bool) if all_ascii else np.fromiter((body[i].isascii() for i in idx), bool, count=n)

    name = _sfield(u, 3, 3 + width)
    sv_ok = np.isin(u[:, 3], np.frombuffer(_SAT_LETTERS, np.uint8)) & pf.digits(u[:, 4]) \
        & pf.digits(u[:, 5]) & ((u[:, 6:3 + width] == pf.SPACE) | (u[:, 6:3 + width] == 0)).all(axis=1)
    one, two = _canonical(u, y0, lengths)
    fast = (one | two) & ascii_ok
    fields = {k: np.zeros(n, np.int64) for k in _INTS}
    fields.update(second=np.zeros(n), bias=np.full(n, np.nan), sigma=np.full(n, np.nan))
    reason = np.zeros(n, np.int8)
    if fast.any():
        every = fast.all()
        got = _read_canonical(u if every else u[fast], y0, two if every else two[fast])
        for k, v in got.items():
            fields[k][fast] = v
        # the count must agree with the values on the line; else the record goes the strict way
        agree = np.where(two, (fields["count"] >= 2) & (fields["count"] <= MAX_VALUES), fields["count"] == 1)
        fast &= agree
    slow = ~fast
    if slow.any():
        sub = np.asfortranarray(u[slow])
        sub[sub == 0] = pf.SPACE
        got = _read_strict(sub, y0, [body[i] for i in idx[slow]], ascii_ok[slow])
        reason[slow] = got.pop("reason")
        for k, v in got.items():
            fields[k][slow] = v
        _warn_off_columns(body, idx, slow & (reason == 0) & (fields["count"] <= 2), y0, nums_all, path, ledger)
    ok = reason == 0
    y, mo, d, h, mi = (fields[k] for k in ("year", "month", "day", "hour", "minute"))
    max_second = 61.0 if header["time_system"] in ("UTC", "GLO") else 60.0  # a leap second in UTC
    date_ok = pf.valid_date(y, mo, d, h, mi, fields["second"], max_second)
    reason[ok & ~date_ok] = _R["impossible epoch"]
    ok &= date_ok
    bias, sigma = fields["bias"], fields["sigma"]
    out_of_range = ok & ((np.abs(bias) >= MAX_ABS_S) | (sigma < 0) | (sigma >= MAX_ABS_S))
    reason[out_of_range] = _R["value outside physical range"]
    ok &= ~out_of_range
    time = np.full(n, np.datetime64("NaT"), "datetime64[ns]")
    if ok.any():
        time[ok] = pf.compose(y[ok], mo[ok], d[ok], h[ok], mi[ok], fields["second"][ok])
    sv_zero = (u[:, 4] == ord("0")) & (u[:, 5] == ord("0"))
    return {"type": types2[idx], "name": name, "letter": u[:, 3].copy().view("S1"), "sv_ok": sv_ok,
            "sv_zero": sv_zero,
            "time": time, "bias": bias, "sigma": sigma, "ok": ok, "reason": reason, "line": nums_all[idx]}


def _warn_off_columns(body, idx, read_by_blanks, y0, nums_all, path, ledger, listed: int = 20):
    """Say where a record with one or two values was read by its blank-separated fields because a
    field is off the columns of the format (A2,1X,A4/A9,1X,I4,4(1X,I2),F10.6,I3,3X,2(E19.12,1X));
    trailing blanks alone do not count.  The values are unambiguous, so the record is kept."""
    rows = np.flatnonzero(read_by_blanks)
    if not rows.size:
        return
    lines = [body[i].rstrip() for i in idx[rows]]
    u = np.array(lines, dtype="S85").view(np.uint8).reshape(len(lines), 85)
    one, two = _canonical(u, y0, np.fromiter(map(len, lines), np.int64, count=len(lines)))
    off = rows[~(one | two)]
    for r in off[:listed]:
        ledger.warn("RINEX clock record: a field is off its columns; read by its blank-separated values",
                    path, int(nums_all[idx[r]]))
    if off.size > listed:
        ledger.warn(f"RINEX clock file: {off.size - listed} more records off their columns", path)


def _other_lines(body, is_record, idx, y0, nums_all, lengths_all, path, ledger):
    """Lines that are not records: continuation lines are skipped, the rest counted and warned about."""
    other = np.flatnonzero(~is_record & (lengths_all > 0))
    if not len(other):
        return
    # a continuation line follows a record announcing more than two values (4(E19.12,1X))
    counts = {int(i): body[i][y0 + 26:y0 + 29].strip() for i in other - 1 if i >= 0 and is_record[i]}
    unknown: dict = {}
    for i in other:
        line = body[i]
        if not line.strip():
            continue
        prev = counts.get(int(i) - 1, b"")
        if prev.isdigit() and int(prev) > 2 and pf.strict_tokens(line) is not None:
            continue
        code = line[:2]
        if code.isalpha() and code.isupper() and line[2:3] == b" " and line.isascii():
            label = f"not read: {code.decode()} (record type unknown to the format)"
        else:
            label = "damaged line (not a record)"
        unknown[label] = unknown.get(label, 0) + 1
        if sum(unknown.values()) <= 20:
            ledger.warn(f"RINEX clock line skipped: {label}", path, int(nums_all[i]))
    for label, n in unknown.items():
        ledger.read(ITEM, "-", n)
        ledger.drop(ITEM, "-", label, n)
