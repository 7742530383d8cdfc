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
from gnssrel.errors import GnssrelInputError
from gnssrel.io.opening import read_bytes
from gnssrel.io.rinex_obs_fields import split_lines
from gnssrel.io.rinex_obs_header import parse_obs_header
from gnssrel.io.rinex_obs_scan import scan_v2, scan_v3

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

    A damaged epoch in the body (including a last epoch cut short by the end of the
    file) is skipped and counted; a bad header (empty file, unknown version, no END OF
    HEADER, ...) raises :class:`gnssrel.errors.FileFormatError` naming the file and line.
    """
    letters = _parse_systems(systems)
    start = None if start is None else timescales.as_datetime64(start)
    end = None if end is None else timescales.as_datetime64(end)
    wanted_codes = _parse_observables(observables)
    data = read_bytes(path)
    hdr, offset = parse_obs_header(data, path)
    lines = split_lines(data, offset, hdr["header_lines"] + 1)
    del data

    def to_gpst(t):
        return timescales.to_gpst(t, hdr["source_time_scale"], leap_seconds=hdr["leap_seconds"])

    if int(hdr["version"]) == 2:
        scan = scan_v2(lines, hdr["fields_v2"], letters, start, end, to_gpst, with_flags)
    else:
        scan = scan_v3(lines, hdr["fields"], letters, start, end, to_gpst, with_flags)
    warnings: list[str] = []
    keep_epoch = _order_epochs(scan, warnings)
    if int(hdr["version"]) == 2:
        seen = sorted(set(np.unique(scan.record_sv.astype("U1")).tolist()) | _v2_letter(hdr))
        fields = {s: list(hdr["fields_v2"]) for s in seen if letters is None or s in letters}
    else:
        fields = {s: c for s, c in hdr["fields"].items() if letters is None or s in letters}
    ds = _to_dataset(scan, keep_epoch, fields, hdr["scale_factors"], wanted_codes, with_flags)
    _header_body_checks(hdr, scan, Path(path).name, to_gpst, warnings)
    ds.attrs = _attrs(hdr, scan, Path(path).name, fields, to_gpst, warnings)
    return ds


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
    if not scan.ends_with_line_end:
        warnings.append("the file does not end with a line end: its last line may be cut short, "
                        "so its last epoch is skipped")
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
                        "SYS / # / OBS TYPES line in the header and were not read")


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
