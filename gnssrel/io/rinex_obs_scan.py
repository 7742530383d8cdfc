"""Find the epochs and satellite records of a RINEX observation body, vectorized.

RINEX 3/4 (RINEX 3.05 table A13, RINEX 4.00 table A12): every epoch record starts with
a line beginning ``>``; columns 32 (flag) and 33-35 (count) say what follows:
flags 0/1 (1 = power failure since the previous epoch) are followed by ``count``
satellite lines ``Snn`` + 16-character fields; flags 2-5 by ``count`` special
records (header lines, or nothing for an external event); flag 6 by ``count``
cycle-slip records (consumed, not returned).

RINEX 2.11 (table A2): the epoch line is " yy mm dd hh mm ss.sssssss  f nnn" with up to
12 satellites in columns 33-68 and continuation lines for more; each satellite then
takes ceil(n_types / 5) lines of five 16-character fields.  Flags as in RINEX 3.

A damaged epoch (unreadable epoch line, count that disagrees with the lines that
follow, a satellite line that is not a satellite, a field that is not a number, or a
last epoch cut short by the end of the file) is skipped as a whole and its line
number reported; the rest of the file is read.
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass, field

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from gnssrel.io.rinex_obs_fields import (
    DecodedFields,
    Lines,
    civil_to_datetime64,
    columns,
    decode_observation_fields,
    lines_with_odd_bytes,
    refused_ids,
    repeated_in_epoch,
    seconds_field_ns,
    sv_names,
    unsigned_field,
)


@dataclass
class Scan:
    """What the body held: kept data epochs and their satellite records."""

    epoch_time: np.ndarray        # datetime64[ns] GPST of kept data epochs (n_epoch,)
    epoch_flag: np.ndarray        # int (n_epoch,): 0, or 1 = power failure before this epoch
    epoch_line: np.ndarray        # file line number of each kept epoch line
    record_epoch: np.ndarray      # int (n_rec,): index into the epoch arrays
    record_sv: np.ndarray         # 'U3' (n_rec,)
    decoded: DecodedFields        # (n_rec, n_fields)
    all_data_times: np.ndarray    # datetime64[ns] file scale of every readable data epoch (no window)
    damaged_lines: list = field(default_factory=list)   # file line numbers of skipped epochs
    event_counts: dict = field(default_factory=dict)    # flag -> number of epoch records
    special_lines: list = field(default_factory=list)   # (line, flag) of flag 2-5 records
    undeclared_systems: set = field(default_factory=set)
    ends_with_line_end: bool = True     # False: the file's last line has no line end
    cut_line: int | None = None         # line number of the last epoch when its last line is cut short
    lines_before_first_epoch: int = 0  # non-blank lines between header and first epoch (ignored)
    refused_ids: list = field(default_factory=list)  # (line, id as written, why) of refused satellite ids
    unread_damage_lines: list = field(default_factory=list)  # records not requested holding a non-number
    n_epoch_records: int = 0            # every epoch record found, damaged and special ones included
    n_event_records: int = 0            # flag 2-6 records (consumed, not data)
    n_outside_window: int = 0           # data epochs outside start/end
    # Records of declared systems not requested: not decoded, only their pseudoranges counted.
    skipped_epoch: np.ndarray | None = None   # int: index into the epoch arrays, -1 = epoch not kept
    skipped_letter: np.ndarray | None = None  # 'U1'
    skipped_pseudoranges: np.ndarray | None = None  # int: non-blank pseudorange fields of the record
    missing_blank_lines: int = 0        # RINEX 2: last satellite's lines absent at the end (read blank)


def _record_index(first_line, counts):
    """Line indices first_line[k] + j for j < counts[k], concatenated, and their k."""
    counts = np.asarray(counts, dtype=np.int64)
    total = int(counts.sum())
    owner = np.repeat(np.arange(counts.size), counts)
    offset = np.arange(total) - np.repeat(np.cumsum(counts) - counts, counts)
    return np.asarray(first_line, dtype=np.int64)[owner] + offset, owner


def _strip_trailing_blank(lines: Lines) -> int:
    nonblank = np.flatnonzero(lines.lengths > 0)
    return int(nonblank[-1]) + 1 if nonblank.size else 0


def _last_line_cut(lines: Lines, v3: bool) -> bool:
    """Is the file's last line (when it has no line end) shorter than its record needs?

    A line may legitimately end early (trailing blank fields are left out), so only a
    line that ends inside an F14.3 value (RINEX 3.05 table A13, RINEX 2.11 table A2:
    value in the first 14 of 16 columns), or a RINEX 3 epoch line shorter than its
    35 fixed columns, is taken as cut.  A line without line end that is complete is read.
    """
    if lines.complete or len(lines) == 0:
        return False
    text = lines.text(len(lines) - 1).rstrip()
    if not text:
        return False
    if v3 and text.startswith(">"):
        return len(text) < 35
    if v3 and len(text) < 3:
        return True
    rest = (len(text) - (3 if v3 else 0)) % 16
    return 1 <= rest <= 13


def _with_blank_lines(lines: Lines, k: int) -> Lines:
    """``lines`` with ``k`` empty lines appended (the lines a record needs beyond the file's end)."""
    if k <= 0:
        return lines
    end = np.full(k, lines.raw.size - lines.pad, dtype=np.int64)
    return Lines(lines.raw, np.concatenate((lines.starts, end)),
                 np.concatenate((lines.lengths, np.zeros(k, np.int64))),
                 lines.first_line_number, lines.complete, lines.pad)


def _in_window(t_gpst, start, end):
    keep = np.ones(t_gpst.shape, dtype=bool)
    if start is not None:
        keep &= t_gpst >= start
    if end is not None:
        keep &= t_gpst <= end
    return keep


def nonblank_fields(lines: Lines, line_index: np.ndarray, offset: np.ndarray) -> np.ndarray:
    """How many of the 14-column value fields at (``line_index``, ``offset``), both (n, k),
    hold something: int (n,), vectorized."""
    line_index = np.asarray(line_index, dtype=np.int64)
    if line_index.size == 0:
        return np.zeros(line_index.shape[0], np.int64)
    windows = sliding_window_view(lines.raw, 14)
    m = windows[np.minimum(lines.starts[line_index] + offset, windows.shape[0] - 1)]   # (n, k, 14)
    inside = np.arange(14) < (lines.lengths[line_index] - offset)[..., None]
    return ((m != 32) & inside).any(axis=2).sum(axis=1)


def _finish(lines, epoch_idx, flag, t_gpst, data_ok, damaged, rec_owner, names, rec_m, n_used,
            with_flags, special, skipped=None):
    """Shared tail of both scanners: decode fields, drop damaged epochs, build the Scan.

    ``skipped``: (epoch index, letter, pseudorange count) of the records of systems not
    requested, renumbered here like the kept records.
    """
    decoded = decode_observation_fields(rec_m, n_used, with_flags)
    bad_owner = np.unique(rec_owner[decoded.bad_row])
    damaged[bad_owner] = True
    data_ok &= ~damaged
    keep_rec = data_ok[rec_owner]
    # Renumber the kept epochs 0..n-1.
    kept = np.flatnonzero(data_ok)
    new_index = np.full(epoch_idx.size, -1)
    new_index[kept] = np.arange(kept.size)
    sel = np.flatnonzero(keep_rec)
    decoded = DecodedFields(decoded.values[sel], None if decoded.lli is None else decoded.lli[sel],
                            None if decoded.ssi is None else decoded.ssi[sel], decoded.bad_row[sel])
    if skipped is None:
        skipped = (np.zeros(0, np.int64), np.zeros(0, "U1"), np.zeros(0, np.int64))
    return Scan(skipped_epoch=new_index[skipped[0]], skipped_letter=skipped[1],
                skipped_pseudoranges=skipped[2], ends_with_line_end=lines.complete,
                epoch_time=t_gpst[kept], epoch_flag=flag[kept],
                epoch_line=lines.numbers(epoch_idx[kept]), record_epoch=new_index[rec_owner[sel]],
                record_sv=names[sel], decoded=decoded, all_data_times=np.array([]),
                damaged_lines=lines.numbers(epoch_idx[damaged]).tolist(),
                event_counts={int(f): int(n) for f, n in zip(*np.unique(flag[~damaged], return_counts=True))},
                special_lines=list(zip(lines.numbers(epoch_idx[special & ~damaged]).tolist(),
                                       flag[special & ~damaged].tolist())))


def scan_v3(lines: Lines, fields: dict, letters, start, end, to_gpst, with_flags) -> Scan:
    """Scan a RINEX 3/4 body.  ``fields``: {letter: [codes]}; ``letters``: systems to keep or None."""
    n = _strip_trailing_blank(lines)
    first = np.where(lines.lengths[:n] > 0, lines.raw[lines.starts[:n]], 0)
    epoch_idx = np.flatnonzero(first == ord(">"))
    em = columns(lines, epoch_idx, 35)
    flag, flag_ok = unsigned_field(em, 31, 32)
    count, count_ok = unsigned_field(em, 32, 35)
    cols = [unsigned_field(em, a, b) for a, b in ((2, 6), (7, 9), (10, 12), (13, 15), (16, 18))]
    ns, ns_ok = seconds_field_ns(em, 18, 29)
    ok = ns_ok & (em[:, 1] == 32)
    for _, c_ok in cols:
        ok &= c_ok
    t_file, t_ok = civil_to_datetime64(*(c for c, _ in cols), ns, ok)
    available = np.append(epoch_idx[1:], n) - epoch_idx - 1
    structural = flag_ok & count_ok & (flag <= 6) & (count <= available)
    # Lines beyond the declared count (e.g. an epoch line that lost its '>') form one
    # damaged epoch of their own: reported, and the records before them still read.
    excess = structural & (count < available)
    extra_damage = lines.numbers(epoch_idx[excess] + count[excess] + 1).tolist()
    data = structural & (flag <= 1) & t_ok
    special = structural & (flag >= 2) & (flag <= 5)
    slip = structural & (flag == 6)
    damaged = ~(data | special | slip)
    cut = _last_line_cut(lines, v3=True) and epoch_idx.size > 0
    if cut:
        damaged[-1] = True  # the last line was cut short
        data[-1] = special[-1] = slip[-1] = False
    t_gpst = to_gpst(t_file)
    all_data_times = t_file[data]
    in_window = _in_window(t_gpst, start, end)
    n_outside = int(np.count_nonzero(data & ~in_window))
    data &= in_window

    # Satellite records of the data epochs in the window.
    rec_lines, rec_owner = _record_index(epoch_idx[data] + 1, count[data])
    rec_owner = np.flatnonzero(data)[rec_owner]
    m3 = columns(lines, rec_lines, 3)
    names, name_ok = sv_names(m3, strict=True)
    repeated = repeated_in_epoch(rec_owner, names)
    bad_ids = refused_ids(m3, name_ok, repeated, lines.numbers(rec_lines))
    name_ok &= ~repeated
    letter = np.array([s[:1] for s in fields], dtype="U1")
    rec_letter = names.astype("U1")
    declared = np.isin(rec_letter, letter)
    undeclared = set(np.unique(rec_letter[name_ok & ~declared]).tolist())
    wanted = declared if letters is None else declared & np.isin(rec_letter, list(letters))
    # Records of undeclared systems are not decoded (no types to decode them with); those of
    # systems not requested only have their pseudoranges counted.  Bad names damage their epoch.
    damaged[np.unique(rec_owner[~name_ok])] = True
    other = declared & name_ok & ~wanted
    other_lines = rec_lines[other]
    skipped = _count_skipped(rec_owner[other], rec_letter[other], lambda sel, js: nonblank_fields(
        lines, np.repeat(other_lines[sel, None], js.size, axis=1), 3 + 16 * js), fields)
    take = wanted & name_ok
    rec_lines, rec_owner, names = rec_lines[take], rec_owner[take], names[take]
    n_types = {s: len(codes) for s, codes in fields.items()}
    unread = lines.numbers(np.intersect1d(other_lines, lines_with_odd_bytes(lines))).tolist() \
        if other_lines.size else []
    n_used = np.array([n_types[s[0]] for s in names], dtype=np.int64) if names.size \
        else np.zeros(0, np.int64)
    n_max = max([n_types[s] for s in fields if letters is None or s in letters] or [0])
    m = columns(lines, rec_lines, 3 + 16 * n_max)[:, 3:].reshape(names.size, n_max, 16)
    scan = _finish(lines, epoch_idx, flag, t_gpst, data, damaged, rec_owner, names, m, n_used,
                   with_flags, special, skipped)
    scan.damaged_lines = sorted(scan.damaged_lines + extra_damage)
    scan.n_epoch_records = int(epoch_idx.size + len(extra_damage))
    scan.n_event_records = int(np.count_nonzero((special | slip) & ~damaged))
    scan.n_outside_window = n_outside
    scan.cut_line = int(lines.numbers(epoch_idx[-1])) if cut else None
    scan.all_data_times = all_data_times
    scan.undeclared_systems = undeclared
    scan.refused_ids = bad_ids
    scan.unread_damage_lines = unread
    scan.lines_before_first_epoch = _nonblank_before(lines, epoch_idx[0] if epoch_idx.size else n)
    return scan


def _v2_epoch_lines(lines: Lines, n: int):
    """Fixed columns of every line that can start a RINEX 2 epoch record (RINEX 2.11 table A2)."""
    m = columns(lines, np.arange(n), 32)
    flag, flag_ok = unsigned_field(m, 28, 29)
    count, count_ok = unsigned_field(m, 29, 32)
    cols = [unsigned_field(m, a, b) for a, b in ((1, 3), (4, 6), (7, 9), (10, 12), (13, 15))]
    ns, ns_ok = seconds_field_ns(m, 15, 26)
    ok = ns_ok & (m[:, 18] == ord(".")) & (m[:, 0] == 32)
    for c in (3, 6, 9, 12, 26, 27):
        ok &= m[:, c] == 32
    for _, c_ok in cols:
        ok &= c_ok
    year = cols[0][0] + np.where(cols[0][0] < 80, 2000, 1900)
    t_file, t_ok = civil_to_datetime64(year, *(c for c, _ in cols[1:]), ns, ok)
    timed = t_ok & flag_ok & count_ok & (flag <= 6)
    # Flags 2-5 may leave the epoch fields blank (RINEX 2.11 table A2).
    untimed = (m[:, :28] == 32).all(axis=1) & flag_ok & count_ok & (flag >= 2) & (flag <= 5)
    return timed | untimed, t_file, t_ok, flag, count


def scan_v2(lines: Lines, codes: list, letters, start, end, to_gpst, with_flags) -> Scan:
    """Scan a RINEX 2 body; ``codes`` is the header's one list of observation types."""
    n = _strip_trailing_blank(lines)
    n_per_sat = -(-len(codes) // 5)
    candidate, t_file, t_ok, flag, count = _v2_epoch_lines(lines, n)
    cand = np.flatnonzero(candidate)
    is_obs = flag <= 1
    n_cont = np.where((flag <= 1) | (flag == 6), np.maximum(-(-count // 12) - 1, 0), 0)
    length = 1 + np.where((flag <= 1) | (flag == 6), n_cont + count * n_per_sat, count)
    cut = _last_line_cut(lines, v3=False)
    # Blank data lines at the end of the last satellite are allowed (RINEX 2.11 table A2: a
    # satellite takes ceil(n_types / 5) lines, blank where it has no value): the record may end
    # among the trailing blank lines, or even past the file's last line, by up to the last
    # satellite's own lines after its first (those are then read as blank, with a warning).
    avail = len(lines) + max(n_per_sat - 1, 0)
    starts, damaged_starts = _v2_chain(cand, length, n, avail, cut, is_obs)
    missing = max(0, (int(starts[-1] + length[starts[-1]]) if starts else 0) - len(lines))
    lines = _with_blank_lines(lines, missing)
    epoch_idx = np.array(sorted(starts + damaged_starts), dtype=np.int64)
    damaged = np.isin(epoch_idx, damaged_starts)
    f, c, k = flag[epoch_idx], count[epoch_idx], n_cont[epoch_idx]
    data = ~damaged & is_obs[epoch_idx] & t_ok[epoch_idx]
    special = ~damaged & (f >= 2) & (f <= 5)
    tf = t_file[epoch_idx]
    t_gpst = to_gpst(tf)
    all_data_times = tf[data]
    in_window = _in_window(t_gpst, start, end)
    n_outside = int(np.count_nonzero(data & ~in_window))
    data &= in_window

    # Satellite lists: epoch line plus continuation lines, 12 names of 3 characters from column 33.
    d = np.flatnonzero(data)
    list_lines, list_owner = _record_index(epoch_idx[d], k[d] + 1)
    slots = columns(lines, list_lines, 68)[:, 32:68].reshape(-1, 12, 3)
    slot_no = (list_lines - epoch_idx[d][list_owner])[:, None] * 12 + np.arange(12)[None, :]
    used = slot_no < c[d][list_owner][:, None]
    names, name_ok = sv_names(slots[used], blank_system="G")  # RINEX 2.11 5.1: blank = GPS
    rec_owner = d[np.repeat(list_owner, used.sum(axis=1))]
    repeated = repeated_in_epoch(rec_owner, names)
    bad_ids = refused_ids(slots[used], name_ok, repeated, lines.numbers(np.repeat(list_lines, used.sum(axis=1))))
    name_ok &= ~repeated
    rec_no = slot_no[used]  # position of the satellite in its epoch's list
    first_data_line = epoch_idx[rec_owner] + 1 + k[rec_owner] + rec_no * n_per_sat
    damaged[np.unique(rec_owner[~name_ok])] = True
    letter = names.astype("U1")
    other = name_ok if letters is None else name_ok & ~np.isin(letter, list(letters))
    if letters is None:
        other = np.zeros(names.size, bool)
    other_first = first_data_line[other]
    skipped = _count_skipped(rec_owner[other], letter[other], lambda sel, js: nonblank_fields(
        lines, other_first[sel, None] + js // 5, 16 * (js % 5)), {s: codes for s in set(letter)})
    take = name_ok & ~other
    names, rec_owner, first_data_line = names[take], rec_owner[take], first_data_line[take]
    data_lines = (first_data_line[:, None] + np.arange(n_per_sat)[None, :]).ravel()
    m = columns(lines, data_lines, 80).reshape(names.size, n_per_sat * 5, 16)
    # A satellite's last line holds only its remaining types: anything beyond them means the
    # lines are out of place (a line moved or lost), so the epoch is damaged.
    overfull = (m[:, len(codes):] != 32).any(axis=(1, 2))
    damaged[np.unique(rec_owner[overfull])] = True
    m = m[:, :len(codes)]
    n_used = np.full(names.size, len(codes), dtype=np.int64)
    scan = _finish(lines, epoch_idx, f, t_gpst, data, damaged, rec_owner, names, m, n_used,
                   with_flags, special, skipped)
    scan.all_data_times = all_data_times
    scan.n_epoch_records = int(epoch_idx.size)
    scan.n_event_records = int(np.count_nonzero(~damaged & (f >= 2) & (f <= 6)))
    scan.n_outside_window = n_outside
    scan.missing_blank_lines = missing
    if cut and damaged_starts and max(damaged_starts) == epoch_idx[-1]:
        scan.cut_line = int(lines.numbers(epoch_idx[-1]))
    scan.lines_before_first_epoch = _nonblank_before(lines, cand[0] if cand.size else n)
    scan.refused_ids = bad_ids
    return scan


def is_pseudorange(code: str) -> bool:
    """RINEX 3.05 5.1 / 4.00: C = code (pseudorange); RINEX 2.11 table A1: C1..C8, P1, P2."""
    return code[:1] == "C" or code[:1] == "P" and len(code) == 2


def _count_skipped(owner, letter, nonblank, fields):
    """(owner, letter, pseudorange count) of records not decoded; ``nonblank(sel, js)`` counts
    the fields ``js`` (a list of type positions) of the records ``sel`` that hold a value."""
    count = np.zeros(owner.size, np.int64)
    for s in np.unique(letter):
        sel = np.flatnonzero(letter == s)
        js = np.array([j for j, code in enumerate(fields.get(s, ())) if is_pseudorange(code)], np.int64)
        if js.size:
            count[sel] = nonblank(sel, js)
    return owner, letter, count


def _nonblank_before(lines: Lines, stop: int) -> int:
    return int(np.count_nonzero(lines.lengths[:stop]))


def _v2_chain(cand: np.ndarray, length: np.ndarray, n: int, avail: int, cut: bool, is_obs: np.ndarray):
    """Follow the epoch records from the first candidate line: (good starts, damaged starts).

    ``n``: lines up to the last non-blank one; ``avail``: lines a record may reach (trailing
    blank lines, and the last satellite's lines the file may leave out).  A record is damaged
    when another epoch line falls inside it, it runs past ``avail``, or it holds the file's
    last line and that line is cut short; a line where an epoch should start but that is
    none is a damaged epoch line.  Fast path: when every record ends where the next
    candidate starts, no loop is needed.
    """
    if cand.size == 0:
        return [], []
    ends = cand + length[cand]
    if np.array_equal(ends[:-1], cand[1:]) and n <= ends[-1] <= avail and not cut \
            and (ends[-1] <= n or is_obs[cand[-1]]):
        return cand.tolist(), []
    good, bad = [], []
    cand_list = cand.tolist()
    pos = cand_list[0]
    while pos < n:
        j = bisect.bisect_right(cand_list, pos)
        next_cand = cand_list[j] if j < len(cand_list) else n
        if not (j > 0 and cand_list[j - 1] == pos):  # not an epoch line where one should be
            bad.append(pos)
            pos = next_cand
            continue
        end = pos + int(length[pos])
        blocked = j < len(cand_list) and cand_list[j] < end  # another epoch line inside the record
        past = end > n and not (end <= avail and is_obs[pos])
        if past or blocked or (end >= n and cut):
            bad.append(pos)
            pos = next_cand
            continue
        good.append(pos)
        pos = end
    return good, bad
