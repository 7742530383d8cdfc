"""Reader for SP3-c and SP3-d precise orbit and clock files.

Format: "The Extended Standard Product 3 Orbit Format (SP3-c)", S. Hilla,
NGS, 2002/2010, and "SP3-d", IGS/NGS 2016 (section numbers below refer to
those documents).  SP3-d differs from SP3-c in what matters here by allowing
more than 85 satellites (more ``+`` / ``++`` header lines) and comment lines
of any number and length.

Body records are parsed from declared column tables with numpy on a padded
fixed-width byte array (no Python loop over records), strictly
(:mod:`gnssrel.io.precise_fields`).  A damaged record costs that record, a
damaged epoch line the records of that epoch: each is skipped, counted in the
ledger (``ds.attrs["accounting"]``, item ``sp3_records``, one record per
satellite and epoch) and warned about with file and line.  Units converted at
the edge: positions km -> m, clocks microseconds -> s, velocities dm/s -> m/s,
clock rates 1e-4 microseconds/s -> s/s.  Times are converted from the header
time system to GPST with :func:`gnssrel.timescales.to_gpst`.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import xarray as xr

from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError, TimeScaleError
from gnssrel.io import precise_fields as pf
from gnssrel.io.opening import read_bytes
from gnssrel.io.sp3_checks import describe_epochs, off_orbit
from gnssrel.io.sp3_header import TIME_SYSTEMS, parse_header
from gnssrel.timescales import to_gpst

__all__ = ["describe_epochs", "read_sp3"]

ITEM, VITEM = "sp3_records", "sp3_velocity_records"

# SP3 "bad or absent" clock value (SP3-c section 2, position and clock record).
MISSING_CLOCK_US = 999_999.999999
# Physical range of a position record (km from the geocentre).  The lowest GNSS orbit is
# GLONASS (altitude ~19 100 km, radius ~25 500 km; GPS 26 560 km, Galileo 29 600 km), the
# highest the GEO and IGSO orbits of BeiDou, QZSS and NavIC (radius ~42 200 km; the QZSS
# eccentricity ~0.075 takes its apogee to ~45 300 km).  LEO satellites an SP3 file may carry
# sit just above the Earth's surface (mean radius 6 371 km).  So a record closer than
# 6 371 km or farther than 50 000 km is a garbled number, not a satellite (common practice;
# orbit figures from memory).  0.000000 in all three coordinates is the format's "bad or
# absent" marker (SP3-c section 2), kept apart below.
RADIUS_KM = (6371.0, 50_000.0)
MAX_SPEED_DM_S = 120_000.0  # 12 km/s: above any Earth orbit at these radii (LEO ~7.8 km/s)

# Column tables (0-based, end exclusive), SP3-c/d section 2.
_EPOCH_INTS = {"year": (3, 7), "month": (8, 10), "day": (11, 13), "hour": (14, 16), "minute": (17, 19)}
_EPOCH_SECOND = (20, 31, 8)      # F11.8
_EPOCH_BLANKS = (1, 2, 7, 10, 13, 16, 19)
_RECORD_FIELDS = {"x": (4, 18), "y": (18, 32), "z": (32, 46), "clock": (46, 60)}  # F14.6 each
_RECORD_MIN_LENGTH = 46  # the clock field may be blank (missing) in some files
_SYSTEM_LETTERS = b"GRECJISL"


def read_sp3(paths, systems=None) -> xr.Dataset:
    """Read one SP3-c/d file, or several merged along time.

    Parameters
    ----------
    paths : path or list of paths (e.g. the day before and the day itself);
        epochs present in more than one file are kept from the first file given.
    systems : iterable of RINEX system letters ("GER" or ["G", "E"]) to keep, or None.

    Returns
    -------
    xarray.Dataset with dims (time, sv, axis=("x","y","z")):
    ``position_ecef_m`` (time, sv, axis), NaN where the file has no position
    (all-zero coordinates, or a refused record); ``clock_s`` (time, sv), NaN for
    999999.999999; ``velocity_ecef_m_per_s`` and ``clock_rate_s_per_s`` when the
    file has V records.  Times are datetime64[ns] on GPST.  attrs: ``time_scale``
    ("GPST"), ``source_time_system``, ``coordinate_system``, ``orbit_type``,
    ``agency``, ``epoch_interval_s``, ``paths`` (list of str), ``version``
    ("c"/"d"), ``accounting`` (:meth:`gnssrel.accounting.Ledger.as_dict`).
    """
    if isinstance(paths, (str, Path)):
        paths = [paths]
    paths = list(paths)
    if not paths:
        raise FileFormatError("no SP3 file given")
    wanted = None if systems is None else {s.upper() for s in systems}
    parts = [_read_one(Path(p), wanted) for p in paths]
    if len(parts) == 1:
        return parts[0]
    return _merge(parts)


def _merge(parts: list[xr.Dataset]) -> xr.Dataset:
    ledger = Ledger()
    seen: set = set()
    for part in parts:  # records at an epoch an earlier file already gave are left aside
        part_ledger = Ledger.from_dict(part.attrs.get("accounting"))
        again = np.isin(part["time"].values, np.array(sorted(seen), dtype="datetime64[ns]"))
        if again.any():
            has = np.isfinite(part["clock_s"].values[again]) \
                | np.isfinite(part["position_ecef_m"].values[again]).any(axis=-1)
            letters = np.array([s[:1] for s in part["sv"].values.astype(str)])
            for letter in np.unique(letters):
                part_ledger.retire(ITEM, letter, "epoch also in an earlier file",
                                   int(has[:, letters == letter].sum()))
        seen.update(part["time"].values.tolist())
        ledger.merge(part_ledger)
    stripped = [p.assign_attrs(accounting=None) for p in parts]
    merged = xr.concat(stripped, dim="time", join="outer", data_vars="all", coords="different",
                       compat="equals", combine_attrs="drop_conflicts")
    order = np.argsort(merged["time"].values, kind="stable")
    merged = merged.isel(time=order)
    keep = ~merged.indexes["time"].duplicated(keep="first")
    merged = merged.isel(time=np.flatnonzero(keep))
    merged = merged.sortby("sv")
    attrs = dict(parts[0].attrs)
    attrs["paths"] = [p for part in parts for p in part.attrs["paths"]]
    systems = sorted({part.attrs["source_time_system"] for part in parts})
    attrs["source_time_system"] = ",".join(systems)
    intervals = {part.attrs["epoch_interval_s"] for part in parts if part.attrs.get("epoch_interval_s")}
    if len(intervals) > 1:
        attrs["epoch_interval_s"] = min(intervals)
    attrs["accounting"] = ledger.as_dict()
    merged.attrs = attrs
    return merged


class _Drops:
    """Per-line refusals: count per system and reason, warn with file and line."""

    def __init__(self, ledger: Ledger, path: Path, item: str):
        self.ledger, self.path, self.item = ledger, path, item

    def __call__(self, mask, systems, line_numbers, reason, alive):
        """Drop ``mask & alive`` records (once), return the new ``alive``."""
        hit = mask & alive
        if hit.any():
            for letter, n in zip(*np.unique(systems[hit], return_counts=True)):
                self.ledger.drop(self.item, letter.decode(), reason, int(n))
            for n in line_numbers[hit][:20]:
                self.ledger.warn(f"SP3 record skipped: {reason}", self.path, int(n))
        return alive & ~mask


def _read_one(path: Path, wanted: set[str] | None) -> xr.Dataset:
    ledger = Ledger()
    raw = read_bytes(path)
    blines = raw.splitlines()
    first = next((i for i, b in enumerate(blines) if b.strip()), len(blines))
    if 0 < first < len(blines):
        ledger.warn(f"{first} blank line(s) before the SP3 header skipped", path, 1)
    text = [b.decode("ascii", errors="replace") for b in blines]
    header, body_start = parse_header(text, path, ledger, first)

    body = blines[body_start:]
    nums = np.arange(body_start + 1, body_start + 1 + len(body))
    if raw.isascii():
        ascii_ok = np.ones(len(body), dtype=bool)
    else:
        ascii_ok = np.fromiter((b.isascii() for b in body), dtype=bool, count=len(body))
    lengths = np.fromiter(map(len, body), dtype=np.int64, count=len(body))
    head2 = np.array([b[:2] for b in body], dtype="S2")
    c0 = head2.astype("S1")
    is_epoch = c0 == b"*"
    is_pos, is_vel = c0 == b"P", c0 == b"V"
    other = ~(is_epoch | is_pos | is_vel | np.isin(head2, [b"EP", b"EV", b"EO", b"/*"]))
    epoch_like = np.zeros(len(body), dtype=bool)
    for i in np.flatnonzero(other):  # the few lines that are none of the above
        text = body[i].rstrip()
        if not text:
            other[i] = False  # a blank line costs nothing
        else:
            epoch_like[i] = len(text) <= 40 and text[3:7].isdigit()
    junk = other & ~epoch_like
    if junk.any():
        ledger.read(ITEM, "-", int(junk.sum()))
        ledger.drop(ITEM, "-", "damaged line (not a record)", int(junk.sum()))
        for n in nums[junk][:20]:
            ledger.warn("SP3 line is not an epoch, P, V, EP/EV or EOF record: skipped", path, int(n))

    marker = is_epoch | epoch_like
    epoch_of_line = np.cumsum(marker) - 1
    epoch_lines = [body[i] for i in np.flatnonzero(marker)]
    times, epoch_ok, epoch_reason = _epoch_times(epoch_lines, ascii_ok[marker] & is_epoch[marker], header,
                                                 path, nums[marker], ledger)
    n_announced = header.get("number_of_epochs")
    if n_announced is not None and int(marker.sum()) < n_announced:
        ledger.warn(f"SP3 file shorter than announced: header gives {n_announced} epochs, body has "
                    f"{int(marker.sum())} (truncated?)", path, int(nums[-1]) if len(nums) else body_start)

    pos = _records(body, is_pos, lengths, nums, epoch_of_line, epoch_ok, epoch_reason, times,
                   wanted, path, ledger, ITEM, "P")
    if not pos["keep"].any():
        raise FileFormatError("no usable SP3 position record: every record is damaged or refused "
                              f"({', '.join(sorted(ledger.dropped(ITEM)))})", path,
                              int(pos["first_bad"]) if pos["first_bad"] else body_start + 1)
    _warn_missing(header, pos, epoch_ok, np.flatnonzero(marker), nums, wanted, path, ledger)
    good_t = np.unique(pos["time"][pos["keep"]])
    svs = np.unique(pos["sv"][pos["keep"]])
    k = pos["keep"]
    row, col = np.searchsorted(good_t, pos["time"][k]), np.searchsorted(svs, pos["sv"][k])
    position = np.full((len(good_t), len(svs), 3), np.nan)
    clock = np.full((len(good_t), len(svs)), np.nan)
    position[row, col] = pos["xyz"][k] * 1e3  # km -> m (SP3-c 2, position record)
    clock[row, col] = pos["clock"][k] * 1e-6  # microseconds -> s
    _refuse_off_orbit(position, clock, good_t, svs, row, col, pos["line"][k], path, ledger)
    data = {"position_ecef_m": (("time", "sv", "axis"), position), "clock_s": (("time", "sv"), clock)}
    if is_vel.any():
        vel = _records(body, is_vel, lengths, nums, epoch_of_line, epoch_ok, epoch_reason, times,
                       wanted, path, ledger, VITEM, "V", known=(good_t, svs))
        velocity = np.full((len(good_t), len(svs), 3), np.nan)
        rate = np.full((len(good_t), len(svs)), np.nan)
        k = vel["keep"]
        row, col = np.searchsorted(good_t, vel["time"][k]), np.searchsorted(svs, vel["sv"][k])
        velocity[row, col] = vel["xyz"][k] * 0.1  # dm/s -> m/s (SP3-c 2, velocity record)
        rate[row, col] = vel["clock"][k] * 1e-10  # 1e-4 microseconds/s -> s/s
        data["velocity_ecef_m_per_s"] = (("time", "sv", "axis"), velocity)
        data["clock_rate_s_per_s"] = (("time", "sv"), rate)

    if header["epoch_interval_s"] is None:
        steps = np.diff(good_t).astype("timedelta64[ns]").astype(np.int64) / 1e9
        header["epoch_interval_s"] = float(np.median(steps)) if len(steps) else 0.0
    attrs = {"time_scale": "GPST", "source_time_system": header["time_system"],
             "coordinate_system": header["coordinate_system"], "orbit_type": header["orbit_type"],
             "agency": header["agency"], "epoch_interval_s": header["epoch_interval_s"],
             "version": header["version"], "paths": [str(path)], "accounting": ledger.as_dict()}
    return xr.Dataset(data, coords={"time": good_t, "sv": svs.astype("U3"), "axis": ["x", "y", "z"]},
                      attrs=attrs)


def _warn_missing(header, pos, epoch_ok, epoch_rows, nums, wanted, path, ledger):
    """Warn where a usable epoch has no record of a satellite the header lists (a deleted line).

    SP3-c section 2: every epoch carries a position record for each satellite of the
    header list (0.000000 / 999999.999999 marking a bad or absent value), so a missing
    record is a damaged file; nothing was read, so nothing is counted, but it is said.
    """
    listed = np.array(sorted(set(header.get("satellites", []))), dtype="S3")
    if wanted is not None:
        listed = listed[np.isin(listed.astype("S1"), [w.encode() for w in wanted])]
    if not len(listed) or not epoch_ok.any():
        return
    has = np.zeros((len(epoch_ok), len(listed)), bool)
    known = (pos["epoch"] >= 0) & np.isin(pos["sv"], listed)
    has[pos["epoch"][known], np.searchsorted(listed, pos["sv"][known])] = True
    missing_e, missing_s = np.nonzero(~has & epoch_ok[:, None])
    for e, k in list(zip(missing_e, missing_s))[:20]:
        ledger.warn(f"SP3 epoch has no record of {listed[k].decode()}, which the header lists "
                    "(a line deleted?)", path, int(nums[epoch_rows[e]]))
    if len(missing_e) > 20:
        ledger.warn(f"SP3 file: {len(missing_e) - 20} more records of listed satellites missing", path)


def _epoch_times(lines, usable, header, path, line_numbers, ledger):
    """Epoch ('*') lines -> (GPST times, ok, reason) (SP3-c 2, epoch header record).

    Refused: a damaged line, an impossible date, an epoch far from the file's
    other epochs, an epoch out of the increasing order of its neighbours.
    """
    n = len(lines)
    reason = np.full(n, "", dtype=object)
    if n == 0:
        return np.zeros(0, "datetime64[ns]"), np.zeros(0, bool), reason
    m = pf.matrix(lines, 40)
    ints = {k: pf.integer(m, a, b) for k, (a, b) in _EPOCH_INTS.items()}
    second, sec_ok, _ = pf.fixed_float(m, *_EPOCH_SECOND)
    shape = usable & sec_ok & np.all([v for _, v in ints.values()], axis=0) \
        & np.all([m[:, c] == pf.SPACE for c in _EPOCH_BLANKS], axis=0) & pf.blank(m, 31, 40)
    reason[~shape] = "epoch line damaged"
    y, mo, d, h, mi = (ints[k][0] for k in ("year", "month", "day", "hour", "minute"))
    date_ok = pf.valid_date(y, mo, d, h, mi, np.where(sec_ok, second, -1.0))
    reason[shape & ~date_ok] = "impossible epoch"
    ok = shape & date_ok
    local = np.full(n, np.datetime64("NaT"), dtype="datetime64[ns]")
    if ok.any():
        local[ok] = pf.compose(y[ok], mo[ok], d[ok], h[ok], mi[ok], second[ok])
        far = np.zeros(n, bool)
        far[ok] = pf.far_off(local[ok])
        reason[far] = "epoch far from the file's other epochs"
        ok &= ~far
        grid = np.zeros(n, bool)
        grid[ok] = pf.off_grid(local[ok])
        reason[grid] = "epoch off the file's sampling grid"
        ok &= ~grid
        reason[_out_of_order(local, ok)] = "epoch out of order"
        ok &= reason == ""
    for i in np.flatnonzero(~ok)[:20]:
        ledger.warn(f"SP3 {reason[i]}: its records are skipped", path, int(line_numbers[i]))
    times = np.full(n, np.datetime64("NaT"), dtype="datetime64[ns]")
    if ok.any():
        try:
            times[ok] = to_gpst(local[ok], TIME_SYSTEMS[header["time_system"]])
        except TimeScaleError as exc:
            raise FileFormatError(exc.message, path) from None
    return times, ok, reason


def _out_of_order(t: np.ndarray, ok: np.ndarray) -> np.ndarray:
    """Epochs that break the increasing order of their valid neighbours, alone (a garbled day or hour)."""
    idx = np.flatnonzero(ok)
    bad = np.zeros(len(t), bool)
    if len(idx) < 3:
        return bad
    v = t[idx].astype(np.int64)
    lone = np.zeros(len(v), bool)
    prev, mid, nxt = v[:-2], v[1:-1], v[2:]
    lone[1:-1] = ((mid < prev) | (mid > nxt)) & (prev < nxt)
    lone[0] = v[0] > v[1] and v[1] < v[2]
    lone[-1] = v[-1] < v[-2] and v[-3] < v[-2]
    bad[idx[lone]] = True
    return bad


def _records(body, mask, lengths, nums_all, epoch_of_line, epoch_ok, epoch_reason, times,
             wanted, path, ledger, item, kind, known=None):
    """P or V records -> sv, time, 3 values and the clock field, with a ``keep`` mask (all counted)."""
    idx = np.flatnonzero(mask)
    nums = nums_all[idx]
    m = pf.matrix([body[i] for i in idx], 60)
    letter = m[:, 1]
    sv_ok = np.isin(letter, np.frombuffer(_SYSTEM_LETTERS, np.uint8)) \
        & ((m[:, 2] == pf.SPACE) | pf.digits(m[:, 2])) & pf.digits(m[:, 3])
    name = m[:, 1:4].copy()
    name[:, 1] = np.where(name[:, 1] == pf.SPACE, ord("0"), name[:, 1])  # old files write "G 5"
    name[~sv_ok] = ord("-")
    sv = name.view("S3").ravel()
    system = name[:, 0].copy().view("S1")
    for s, n in zip(*np.unique(system, return_counts=True)):
        ledger.read(item, s.decode(), int(n))
    drop = _Drops(ledger, path, item)
    alive = np.ones(len(idx), bool)
    alive = drop(~sv_ok, system, nums, "damaged satellite id", alive)
    # No system has a satellite number 00 (PRNs and slots start at 1; SP3-c 3.3 uses "  0" only
    # for unused places of the header list): a record "G00" is a garbled id.
    alive = drop(sv_ok & (name[:, 1] == ord("0")) & (name[:, 2] == ord("0")), system, nums,
                 "satellite number 00", alive)
    ep = epoch_of_line[idx]
    alive = drop(ep < 0, system, nums, "record before the first epoch", alive)
    ep_c = np.clip(ep, 0, None)
    if len(epoch_ok):
        for why in np.unique(epoch_reason[ep_c][alive & (ep >= 0)]):
            if why:
                alive = drop(epoch_reason[ep_c] == why, system, nums, why, alive)
    if wanted is not None:
        chosen = np.isin(system, [w.encode() for w in wanted])
        alive = drop(~chosen, system, nums, "system not selected", alive)
    fields = {k: pf.fixed_float(m, a, b, 6) for k, (a, b) in _RECORD_FIELDS.items()}
    xyz = np.stack([fields[a][0] for a in "xyz"], axis=1)
    coords_ok = np.all([fields[a][1] for a in "xyz"], axis=0)
    clk, clk_ok, clk_blank = fields["clock"]
    alive = drop(lengths[idx] < _RECORD_MIN_LENGTH, system, nums, "record cut short", alive)
    alive = drop(~(coords_ok & (clk_ok | clk_blank)), system, nums, "damaged number", alive)
    absent = (xyz == 0.0).all(axis=1)  # 0.000000 coordinates: "bad or absent" (SP3-c 2)
    missing_clock = clk_blank | (clk == MISSING_CLOCK_US)  # 999999.999999: "bad or absent"
    clock = np.where(missing_clock, np.nan, clk)
    if kind == "P":
        r = np.sqrt((xyz ** 2).sum(axis=1))
        alive = drop(~absent & ((r < RADIUS_KM[0]) | (r > RADIUS_KM[1])), system, nums,
                     "position outside physical range", alive)
        alive = drop(~missing_clock & (np.abs(clk) > 999_999.0), system, nums, "clock outside range", alive)
        alive = drop(absent & missing_clock, system, nums, "no position and no clock (absent markers)", alive)
    else:
        speed = np.sqrt((xyz ** 2).sum(axis=1))
        alive = drop(speed > MAX_SPEED_DM_S, system, nums, "velocity outside physical range", alive)
    xyz = np.where(absent[:, None], np.nan, xyz)
    t = times[ep_c] if len(times) else np.full(len(idx), np.datetime64("NaT"), "datetime64[ns]")
    if known is not None:  # V records need the position record of their satellite and epoch
        has_p = np.isin(t, known[0]) & np.isin(sv, known[1])
        alive = drop(~has_p, system, nums, "no position record for this velocity", alive)
    keys = [np.where(alive, t.astype(np.int64), -np.arange(len(t)) - 1), np.searchsorted(np.unique(sv), sv)]
    copy, conflict = pf.duplicates(keys, np.column_stack([xyz, clock]))
    alive = drop(conflict, system, nums, "conflicting duplicates", alive)
    alive = drop(copy, system, nums, "duplicate", alive)
    for s, n in zip(*np.unique(system[alive], return_counts=True)):
        ledger.used(item, s.decode(), int(n))
    first_bad = int(nums[~alive][0]) if (~alive).any() else None
    return {"sv": sv, "time": t, "epoch": ep, "xyz": xyz, "clock": clock, "keep": alive,
            "first_bad": first_bad, "line": nums}


def _refuse_off_orbit(position, clock, times, svs, row, col, lines, path, ledger):
    """Refuse (retire from "used", NaN in the table) positions off their satellite's orbit
    (:func:`gnssrel.io.sp3_checks.off_orbit`: a garbled digit inside the physical range)."""
    bad = off_orbit(position, times)
    if not bad.any():
        return
    line_of = np.zeros(bad.shape, np.int64)
    line_of[row, col] = lines
    reason = "position off the satellite's orbit"
    for e, s in list(zip(*np.nonzero(bad)))[:20]:
        ledger.warn(f"SP3 record skipped: {reason}", path, int(line_of[e, s]))
    letters = np.array([str(v)[:1] for v in svs.astype("U3")])
    for letter in np.unique(letters):
        ledger.retire(ITEM, letter, reason, int(bad[:, letters == letter].sum()))
    position[bad] = np.nan
    clock[bad] = np.nan
