"""Read RINEX observation files (2.11, 3.0x, 4.00) fast, into the georinex layout.

The whole file is decompressed once (:mod:`gnssrel.io.opening`: .gz, .Z, .zip and
Hatanaka), its epochs are found with array operations on the bytes, and all the
16-character observation fields of all satellite lines are decoded at once
(:mod:`gnssrel.io.rinex_obs_scan`, :mod:`gnssrel.io.rinex_obs_fields`).  Times are
converted from the file's scale to GPST here, at the reader's edge.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import xarray as xr

from gnssrel import timescales
from gnssrel.accounting import NO_SYSTEM, Ledger
from gnssrel.errors import GnssrelInputError
from gnssrel.io.opening import open_log
from gnssrel.io.rinex_obs_fields import split_lines
from gnssrel.io.rinex_obs_header import parse_obs_header
from gnssrel.io.rinex_obs_scan import is_pseudorange, scan_v2, scan_v3

SYSTEM_LETTERS = "GRECJSI"
_LONG_NAME_SPAN = re.compile(r"_\d{11}_(\d{2})([MHDY])_")     # RINEX 3.05 appendix A1 file names
_SHORT_NAME_SESSION = re.compile(r"^.{4}\d{3}([0a-xA-X])\.\d{2}[oOdD]")  # RINEX 2.11 4.: ssssdddf.yyt
_SPAN_S = {"M": 60, "H": 3600, "D": 86400, "Y": 365 * 86400}
_LISTED = 8  # how many line numbers or times a warning lists before "..."


def read_observations(path, systems=None, start=None, end=None, observables=None,
                      with_flags: bool = False) -> xr.Dataset:
    """Read a RINEX 2.11 / 3.0x / 4.00 observation file (plain, .gz, .Z, .zip, Hatanaka).

    Parameters
    ----------
    path : file name.
    systems : satellite systems to keep, as letters ("GE", "G,R", ["G", "E"]); None = all.
    start, end : numpy.datetime64 on GPST (inclusive bounds) or None; epochs outside
        are not decoded at all.
    observables : observation codes to keep ("C1C", ["C1", "L1"]); a code is kept when
        it starts with one of them (so "C1" keeps C1C and C1W); None = all.
    with_flags : also return ``<code>lli`` (loss of lock indicator, for carrier-phase
        codes ``L*``) and ``<code>ssi`` (signal strength, every code) as float (NaN blank).

    Returns
    -------
    xarray.Dataset with dims (``time``, ``sv``), laid out as georinex lays it out:
    one float64 variable per observation code (RINEX 3/4 ``C1C``, ``L1C``, ``S1C``...;
    RINEX 2 ``C1``, ``P2``, ``L1``...), NaN where the satellite has no such value.
    ``time`` is datetime64[ns] on GPST (converted from the file's scale: GPS, GAL, QZS
    unchanged; BDT + 14 s; GLO via UTC + leap seconds from the header, else the
    built-in table), sorted; it holds the epochs (event flag 0 or 1) that have at least
    one record of the selected systems.  ``sv`` (sorted, "G05") holds the satellites seen.

    attrs: ``version``, ``rinextype`` ("obs"), ``filename``, ``marker_name``,
    ``marker_number``, ``receiver`` {number, type, version}, ``antenna`` {number, type},
    ``position`` [x, y, z] m ECEF (header APPROX POSITION XYZ, or None),
    ``antenna_delta_hen_m``, ``fields`` {letter: [codes]}, ``interval`` (s, header, else
    the median spacing of the epochs), ``time_of_first_obs`` / ``time_of_last_obs``
    (header values converted to GPST, or None), ``time_scale`` ("GPST"),
    ``source_time_scale`` (the file's scale, e.g. "GPST", "GLONASST"), ``leap_seconds``
    (header, or None), ``glonass_slots`` {"R01": channel}, ``receiver_clock_offset_applied``,
    ``event_counts`` {flag: number of epoch records}, ``skipped_epochs`` (number of
    damaged epochs skipped), ``skipped_epoch_lines``, and ``warnings``: a list of
    sentences on header/body disagreements (TIME OF FIRST/LAST OBS, INTERVAL, the span a
    standard file name claims), skipped epochs, power failures (flag 1, data kept) and
    special records (flags 2-5, consumed).  Cycle-slip records (flag 6) are skipped.
    ``accounting``: a :class:`gnssrel.accounting.Ledger` as a dict, with item ``epochs``
    (system "-": every epoch record read, "used" = returned, dropped by reason: "damaged",
    "cut by end of file", "event record" (flags 2-6), "repeated time", "outside the
    requested time span", "no satellite of the requested systems", "lost in Hatanaka
    decompression") and item ``observations`` per system (the pseudoranges, codes C* and
    RINEX 2 P*, of the epochs kept: "used" = returned, dropped "system not requested",
    "observable not requested", "SYS / SCALE FACTOR unreadable"), and the warnings naming
    file and line.

    A damaged epoch in the body (including a last epoch cut short by the end of the
    file, and an epoch with a satellite id that cannot be: number 00, a RINEX 3 "G 5",
    a satellite twice; each such id is warned about at its line) is skipped and counted; an optional header line that cannot be read is left
    aside with a warning; a bad header (empty file, unknown version, no END OF HEADER,
    ...) raises :class:`gnssrel.errors.FileFormatError` naming the file and line.
    """
    letters = _parse_systems(systems)
    start = None if start is None else timescales.as_datetime64(start)
    end = None if end is None else timescales.as_datetime64(end)
    wanted_codes = _parse_observables(observables)
    ledger = Ledger()
    opened = open_log(path, ledger)
    data = opened.data
    hdr, offset = parse_obs_header(data, path)
    n_types = max([len(c) for c in hdr.get("fields", {}).values()] + [len(hdr.get("fields_v2", []))])
    lines = split_lines(data, offset, hdr["header_lines"] + 1, pad=max(400, 16 * n_types + 64))
    inserted = data.count(b"Some epochs are skipped by CRX2RNX") if opened.hatanaka_epochs is not None else 0
    del data, opened.data
    warnings: list[str] = []
    for message, line in hdr["notes"]:
        ledger.warn(message, path, line)
        warnings.append(f"line {line}: {message}")
    scan_letters = letters
    if hdr["unscalable_systems"]:
        scan_letters = (set(SYSTEM_LETTERS) if letters is None else letters) - hdr["unscalable_systems"]

    def to_gpst(t):
        return timescales.to_gpst(t, hdr["source_time_scale"], leap_seconds=hdr["leap_seconds"])

    if int(hdr["version"]) == 2:
        scan = scan_v2(lines, hdr["fields_v2"], scan_letters, start, end, to_gpst, with_flags)
    else:
        scan = scan_v3(lines, hdr["fields"], scan_letters, start, end, to_gpst, with_flags)
    keep_epoch = _order_epochs(scan, warnings)
    keep_epoch, suspect = _drop_epoch_before_hatanaka_damage(scan, keep_epoch, opened, path, ledger, warnings)
    if int(hdr["version"]) == 2:
        seen = sorted(set(np.unique(scan.record_sv.astype("U1")).tolist()) | _v2_letter(hdr)
                      | set(np.unique(scan.skipped_letter).tolist()))
        all_fields = {s: list(hdr["fields_v2"]) for s in seen}
    else:
        all_fields = dict(hdr["fields"])
    fields = {s: c for s, c in all_fields.items() if scan_letters is None or s in scan_letters}
    ds = _to_dataset(scan, keep_epoch, fields, hdr["scale_factors"], wanted_codes, with_flags)
    _header_body_checks(hdr, scan, Path(path).name, to_gpst, warnings)
    _account_epochs(ledger, scan, keep_epoch, ds, opened, path, warnings, suspect, inserted)
    _account_observations(ledger, scan, keep_epoch, all_fields, wanted_codes, hdr["unscalable_systems"])
    ds.attrs = _attrs(hdr, scan, Path(path).name, fields, to_gpst, warnings)
    ds.attrs["accounting"] = ledger.as_dict()
    return ds


def _drop_epoch_before_hatanaka_damage(scan, keep_epoch, opened, path, ledger, warnings):
    """When the Hatanaka decompressor gave up on the rest of the file, its last written epoch
    is not trusted (the damaged line sits in it or just after it): dropped and counted."""
    if not opened.hatanaka_gave_up or scan.epoch_line.size == 0:
        return keep_epoch, 0
    last = int(np.argmax(scan.epoch_line))
    if scan.damaged_lines and max(scan.damaged_lines) > scan.epoch_line[last] or last not in keep_epoch:
        return keep_epoch, 0
    line = int(scan.epoch_line[last])
    sentence = ("the last epoch written by the Hatanaka decompressor before it gave up may hold values "
                "of the wrong satellites; skipped")
    ledger.warn(sentence, path, line)
    warnings.append(f"{sentence} (line {line} of the expanded file)")
    return keep_epoch[keep_epoch != last], 1


def _account_epochs(ledger, scan, keep_epoch, ds, opened, path, warnings, suspect=0, inserted=0):
    """Every epoch record: returned, or dropped with its reason (the item ``epochs``)."""
    e = "epochs"
    cut = 1 if scan.cut_line is not None else 0
    lost = 0
    if opened.hatanaka_epochs is not None:
        # the decompressor adds one comment record (event flag 4) where it skipped epochs
        lost = max(0, opened.hatanaka_epochs - (scan.n_epoch_records - inserted))
    ledger.read(e, NO_SYSTEM, scan.n_epoch_records + lost)
    ledger.used(e, NO_SYSTEM, ds.sizes["time"])
    ledger.drop(e, NO_SYSTEM, "damaged", len(scan.damaged_lines) - cut)
    ledger.drop(e, NO_SYSTEM, "cut by end of file", cut)
    ledger.drop(e, NO_SYSTEM, "event record", scan.n_event_records)
    ledger.drop(e, NO_SYSTEM, "outside the requested time span", scan.n_outside_window)
    ledger.drop(e, NO_SYSTEM, "repeated time", scan.epoch_time.size - keep_epoch.size - suspect)
    ledger.drop(e, NO_SYSTEM, "damaged in Hatanaka decompression", suspect)
    ledger.drop(e, NO_SYSTEM, "no satellite of the requested systems", keep_epoch.size - ds.sizes["time"])
    ledger.drop(e, NO_SYSTEM, "lost in Hatanaka decompression", lost)
    for line in scan.damaged_lines:
        if line != scan.cut_line:
            ledger.warn("damaged epoch skipped", path, line)
    for line, written, why in scan.refused_ids:
        ledger.warn(f"satellite id {written!r} refused: {why}; its epoch is skipped", path, line)
    for line in scan.unread_damage_lines[:_LISTED]:
        ledger.warn("a record of a system not requested holds a field that is no number (not read)",
                    path, line)
    if cut:
        ledger.warn("the file ends inside this epoch (its last line is cut short): epoch skipped",
                    path, scan.cut_line)
    if lost:
        sentence = (f"{lost} epoch(s) lost in Hatanaka decompression: the decompressor skipped them "
                    "after a damaged line of the compressed file")
        ledger.warn(sentence, path)
        warnings.append(sentence)
    if scan.missing_blank_lines:
        sentence = (f"the last satellite of the last epoch lacks its last {scan.missing_blank_lines} data "
                    "line(s) at the end of the file; read as blank (no value)")
        ledger.warn(sentence, path)
        warnings.append(sentence)
    t = scan.epoch_time
    if t.size - keep_epoch.size - suspect:
        repeated = np.setdiff1d(np.arange(t.size), keep_epoch)
        if suspect:  # the last epoch in file order, left aside above
            repeated = repeated[repeated != int(np.argmax(scan.epoch_line))]
        for line in scan.epoch_line[repeated][:_LISTED]:
            ledger.warn("epoch repeats an earlier time; the first is kept", path, int(line))


def _account_observations(ledger, scan, keep_epoch, all_fields, wanted_codes, unscalable):
    """Pseudoranges of the kept epochs per system: returned, or dropped with the reason."""
    item = "observations"
    is_kept = np.zeros(scan.epoch_time.size, bool)
    is_kept[keep_epoch] = True
    rec = is_kept[scan.record_epoch]
    letter = scan.record_sv.astype("U1")
    values = scan.decoded.values
    for s, codes in all_fields.items():
        cols = [j for j, c in enumerate(codes) if is_pseudorange(c)]
        mine = np.flatnonzero(rec & (letter == s))
        if cols and mine.size:
            present = ~np.isnan(values[np.ix_(mine, cols)])
            kept_cols = np.array([wanted_codes is None or codes[j].startswith(wanted_codes) for j in cols])
            n_used = int(present[:, kept_cols].sum())
            ledger.read(item, s, int(present.sum()))
            ledger.used(item, s, n_used)
            ledger.drop(item, s, "observable not requested", int(present.sum()) - n_used)
        skipped = (scan.skipped_letter == s) & (scan.skipped_epoch >= 0)
        skipped[skipped] = is_kept[scan.skipped_epoch[skipped]]
        n_skipped = int(scan.skipped_pseudoranges[skipped].sum())
        ledger.read(item, s, n_skipped)
        reason = "SYS / SCALE FACTOR unreadable" if s in unscalable else "system not requested"
        ledger.drop(item, s, reason, n_skipped)


def _parse_systems(systems):
    if systems is None:
        return None
    text = systems if isinstance(systems, str) else "".join(systems)
    letters = [c for c in text.upper() if c not in " ,;"]
    unknown = sorted(set(letters) - set(SYSTEM_LETTERS))
    if unknown or not letters:
        raise GnssrelInputError(f"unknown satellite system letter(s) {''.join(unknown) or repr(systems)}; "
                                f"use letters of {SYSTEM_LETTERS}, e.g. systems=\"GE\"")
    return set(letters)


def _parse_observables(observables):
    if observables is None:
        return None
    codes = [observables] if isinstance(observables, str) else list(observables)
    codes = [c.strip() for c in codes if c and c.strip()]
    return tuple(codes) or None


def _v2_letter(hdr):
    s = hdr["file_system"]
    return set() if s in ("M", "") else {s}


def _order_epochs(scan, warnings) -> np.ndarray:
    """Kept epoch indices in time order, first of each duplicate time; notes disorder."""
    t = scan.epoch_time
    order = np.argsort(t, kind="stable")
    if t.size and not np.all(order == np.arange(t.size)):
        warnings.append("epochs in the body are not in time order; they are returned sorted")
    _, first = np.unique(t[order], return_index=True)
    if first.size < t.size:
        warnings.append(f"{t.size - first.size} epoch(s) repeat an earlier time; the first is kept")
    return order[first]


def _to_dataset(scan, keep_epoch, fields, scale_factors, wanted_codes, with_flags) -> xr.Dataset:
    is_kept = np.zeros(scan.epoch_time.size, bool)
    is_kept[keep_epoch] = True
    rec = np.flatnonzero(is_kept[scan.record_epoch])
    epochs_with_data = np.unique(scan.record_epoch[rec])  # sorted index = time order? not always
    epochs_with_data = epochs_with_data[np.argsort(scan.epoch_time[epochs_with_data], kind="stable")]
    row_of_epoch = np.full(scan.epoch_time.size, -1)
    row_of_epoch[epochs_with_data] = np.arange(epochs_with_data.size)
    sv = np.unique(scan.record_sv[rec])
    row = row_of_epoch[scan.record_epoch[rec]]
    col = np.searchsorted(sv, scan.record_sv[rec])
    rec_letter = scan.record_sv[rec].astype("U1")
    shape = (epochs_with_data.size, sv.size)
    variables: dict[str, np.ndarray] = {}
    d = scan.decoded
    for letter, codes in fields.items():
        mine = np.flatnonzero(rec_letter == letter)
        r, c, src = row[mine], col[mine], rec[mine]
        factors = scale_factors.get(letter, {})
        for j, code in enumerate(codes):
            if wanted_codes is not None and not code.startswith(wanted_codes):
                continue
            factor = factors.get(code, factors.get("*", 1))  # RINEX 3.05 5.2.15: stored = value * factor
            parts = [(code, d.values, factor)]
            if with_flags:
                if code.startswith("L"):
                    parts.append((code + "lli", d.lli, 1))
                parts.append((code + "ssi", d.ssi, 1))
            for name, source, fac in parts:
                grid = variables.get(name)
                if grid is None:
                    grid = variables[name] = np.full(shape, np.nan)
                grid[r, c] = source[src, j] if fac == 1 else source[src, j] / fac
    coords = {"time": scan.epoch_time[epochs_with_data].astype("datetime64[ns]"), "sv": sv.astype("U3")}
    return xr.Dataset({k: (("time", "sv"), v) for k, v in variables.items()}, coords=coords)


def _span_claimed_s(name: str) -> tuple[float, str] | None:
    m = _LONG_NAME_SPAN.search(name)
    if m:
        return int(m.group(1)) * _SPAN_S[m.group(2)], f"{m.group(1)}{m.group(2)}"
    m = _SHORT_NAME_SESSION.match(name)
    if m:
        return (86400.0, "a whole day (session 0)") if m.group(1) == "0" else (3600.0, "one hour")
    return None


def _median_spacing_s(t) -> float | None:
    if t.size < 2:
        return None
    return float(np.median(np.diff(np.sort(t)).astype("int64")) / 1e9)


def _header_body_checks(hdr, scan, name, to_gpst, warnings):
    """Header / body disagreements, reported as sentences (never fatal)."""
    t = np.sort(scan.all_data_times)
    scale = hdr["file_time_scale"]
    if t.size == 0:
        warnings.append("the body holds no readable observation epoch")
    else:
        first, last = t[0], t[-1]
        if hdr["time_of_first_obs"] is not None and hdr["time_of_first_obs"] != first:
            warnings.append(f"header TIME OF FIRST OBS is {_when(hdr['time_of_first_obs'])} {scale} but the "
                            f"first epoch in the body is {_when(first)} {scale}")
        if hdr["time_of_last_obs"] is not None and hdr["time_of_last_obs"] != last:
            warnings.append(f"header TIME OF LAST OBS is {_when(hdr['time_of_last_obs'])} {scale} but the "
                            f"last epoch in the body is {_when(last)} {scale}")
        spacing = _median_spacing_s(t)
        interval = hdr["interval_s"]
        if interval and spacing is not None and abs(spacing - interval) > 1e-3:
            warnings.append(f"header INTERVAL is {interval:g} s but the epochs in the body are "
                            f"{spacing:g} s apart (median)")
        claimed = _span_claimed_s(name)
        step = interval or spacing or 0.0
        covered = (last - first).astype("int64") / 1e9 + step
        if claimed and covered < 0.9 * claimed[0]:
            warnings.append(f"the file name claims {claimed[1]} of data but the body covers "
                            f"{covered / 60:.1f} min ({_when(first)} to {_when(last)} {scale})")
    if scan.damaged_lines:
        warnings.append(f"{len(scan.damaged_lines)} damaged epoch(s) skipped, at line(s) "
                        f"{_listing(scan.damaged_lines)}")
    if scan.cut_line is not None:
        warnings.append("the file does not end with a line end and its last line is cut short, "
                        f"so its last epoch (line {scan.cut_line}) is skipped")
    elif not scan.ends_with_line_end:
        warnings.append("the file does not end with a line end; its last line is complete and was read")
    power = scan.epoch_time[scan.epoch_flag == 1]
    if power.size:
        warnings.append(f"power failure (event flag 1) before epoch(s) {_listing([_when(t) for t in power])} GPST; "
                        "their data are kept")
    if scan.special_lines:
        shown = [f"{line} (flag {f})" for line, f in scan.special_lines]
        warnings.append(f"{len(shown)} special event record(s) consumed at line(s) {_listing(shown)}; "
                        "header records inside the body are not applied")
    if scan.event_counts.get(6):
        warnings.append(f"{scan.event_counts[6]} cycle-slip record block(s) (event flag 6) skipped")
    if scan.lines_before_first_epoch:
        warnings.append(f"{scan.lines_before_first_epoch} line(s) between the header and the first "
                        "epoch are not observation records and were ignored")
    if scan.undeclared_systems:
        warnings.append(f"satellites of system(s) {''.join(sorted(scan.undeclared_systems))} have no "
                        "readable SYS / # / OBS TYPES line in the header and were not read")


def _when(t) -> str:
    """A datetime64 as ISO text, to the second unless it has a fraction."""
    t = np.datetime64(t, "ns")
    whole = t.astype("datetime64[s]")
    return str(whole) if whole == t else str(t)


def _listing(items) -> str:
    shown = ", ".join(str(x) for x in items[:_LISTED])
    return shown + (", ..." if len(items) > _LISTED else "")


def _attrs(hdr, scan, name, fields, to_gpst, warnings) -> dict:
    def gpst(t):
        return None if t is None else to_gpst(np.array([t]))[0]

    interval = hdr["interval_s"] or _median_spacing_s(scan.all_data_times)
    return {
        "version": hdr["version"], "rinextype": "obs", "filename": name,
        "marker_name": hdr["marker_name"], "marker_number": hdr["marker_number"],
        "receiver": hdr["receiver"], "antenna": hdr["antenna"], "position": hdr["position"],
        "antenna_delta_hen_m": hdr["antenna_delta_hen_m"], "fields": fields, "interval": interval,
        "time_of_first_obs": gpst(hdr["time_of_first_obs"]),
        "time_of_last_obs": gpst(hdr["time_of_last_obs"]),
        "time_scale": "GPST", "source_time_scale": hdr["source_time_scale"],
        "leap_seconds": hdr["leap_seconds"], "glonass_slots": hdr["glonass_slots"],
        "receiver_clock_offset_applied": hdr["receiver_clock_offset_applied"],
        "event_counts": scan.event_counts, "skipped_epochs": len(scan.damaged_lines),
        "skipped_epoch_lines": list(scan.damaged_lines), "warnings": warnings,
    }
