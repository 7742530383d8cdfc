"""Reader for SP3-c and SP3-d precise orbit and clock files.

Format: "The Extended Standard Product 3 Orbit Format (SP3-c)", S. Hilla,
NGS, 2002/2010, and "SP3-d", IGS/NGS 2016 (section numbers below refer to
those documents).  SP3-d differs from SP3-c in what matters here by allowing
more than 85 satellites (more ``+`` / ``++`` header lines) and comment lines
of any number and length.

Body records are parsed from declared column tables with numpy on a padded
fixed-width byte array (no Python loop over records).  Units converted at the
edge: positions km -> m, clocks microseconds -> s, velocities dm/s -> m/s,
clock rates 1e-4 microseconds/s -> s/s.  Times are converted from the header
time system to GPST with :func:`gnssrel.timescales.to_gpst`.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import xarray as xr

from gnssrel.errors import FileFormatError, TimeScaleError
from gnssrel.io.opening import read_bytes
from gnssrel.timescales import to_gpst

__all__ = ["read_sp3"]

# SP3 "bad or absent" clock value (SP3-c section 2, position and clock record).
MISSING_CLOCK_US = 999_999.999999

# Column tables (0-based, end exclusive), SP3-c/d sections 2 and 3.
_EPOCH_COLUMNS = {"year": (3, 7), "month": (8, 10), "day": (11, 13),
                  "hour": (14, 16), "minute": (17, 19), "second": (20, 31)}
_RECORD_COLUMNS = {"x": (4, 18), "y": (18, 32), "z": (32, 46), "clock": (46, 60)}
_RECORD_MIN_LENGTH = 46  # the clock field may be blank (missing) in some files

# SP3 time system names (SP3-c 3.4 "%c" line; SP3-d adds QZS, BDT, IRN) -> gnssrel scale.
_TIME_SYSTEMS = {"GPS": "GPST", "GAL": "GST", "QZS": "QZSST", "BDT": "BDT", "BDS": "BDT",
                 "GLO": "GLONASST", "UTC": "UTC", "TAI": "TAI", "IRN": "GPST"}


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
    (all-zero coordinates); ``clock_s`` (time, sv), NaN for 999999.999999;
    ``velocity_ecef_m_per_s`` and ``clock_rate_s_per_s`` when the file has V records.
    Times are datetime64[ns] on GPST.  attrs: ``time_scale`` ("GPST"),
    ``source_time_system``, ``coordinate_system``, ``orbit_type``, ``agency``,
    ``epoch_interval_s``, ``paths`` (list of str), ``version`` ("c"/"d").
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
    merged = xr.concat(parts, dim="time", join="outer", data_vars="all", coords="different",
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
    intervals = {part.attrs["epoch_interval_s"] for part in parts}
    if len(intervals) > 1:
        attrs["epoch_interval_s"] = min(intervals)
    merged.attrs = attrs
    return merged


def _field(lines: np.ndarray, start: int, end: int) -> np.ndarray:
    """Columns [start, end) of a fixed-width byte array as an 'S' array."""
    width = lines.dtype.itemsize
    raw = lines.view(np.uint8).reshape(len(lines), width)[:, start:end]
    return np.ascontiguousarray(raw).view(f"S{end - start}").ravel()


def _to_float(field: np.ndarray, path: Path, line_numbers: np.ndarray, texts, what: str):
    """Fixed-width byte fields to float64; blank -> NaN; garbled -> FileFormatError."""
    blank = np.char.strip(field) == b""
    filled = np.where(blank, b"nan", field)
    try:
        return filled.astype(np.float64)
    except ValueError:
        for i, value in enumerate(filled):  # error path only: find the bad line
            try:
                float(value)
            except ValueError:
                raise FileFormatError(f"SP3 {what} field is not a number ({value.decode(errors='replace').strip()!r})",
                                      path, int(line_numbers[i]), texts[i]) from None
        raise


def _header_value(line: str, start: int, end: int, kind, path: Path, line_no: int, what: str):
    text = line[start:end].strip()
    try:
        return kind(text)
    except ValueError:
        raise FileFormatError(f"SP3 header: {what} expected in columns {start + 1}-{end}",
                              path, line_no, line) from None


def _parse_header(lines: list[str], path: Path) -> tuple[dict, int]:
    """Header fields and the index of the first body line (SP3-c/d section 3)."""
    if not lines or not lines[0].strip():
        raise FileFormatError("empty file: not an SP3 file", path, 1)
    first = lines[0]
    if not first.startswith("#"):
        raise FileFormatError("not an SP3 file: line 1 must start with '#'", path, 1, first)
    version = first[1:2]
    if version not in ("c", "d"):
        raise FileFormatError(f"SP3 version {version!r} not supported (SP3-c and SP3-d are)",
                              path, 1, first)
    if len(first) < 32:
        raise FileFormatError("SP3 header line 1 is too short", path, 1, first)
    header = {
        "version": version,
        "position_velocity_flag": first[2:3],
        "number_of_epochs": _header_value(first, 32, 39, int, path, 1, "number of epochs"),
        "data_used": first[40:45].strip(),
        "coordinate_system": first[46:51].strip(),
        "orbit_type": first[52:55].strip(),
        "agency": first[56:60].strip(),
    }
    if len(lines) < 2 or not lines[1].startswith("##"):
        raise FileFormatError("SP3 header: line 2 must start with '##'", path, 2,
                              lines[1] if len(lines) > 1 else None)
    header["epoch_interval_s"] = _header_value(lines[1], 24, 38, float, path, 2, "epoch interval")
    time_system = None
    n_sat = None
    body = None
    for i, line in enumerate(lines[2:], start=2):
        if line.startswith("*"):
            body = i
            break
        if line.startswith("+ ") and n_sat is None:
            n_sat = _header_value(line, 2, 6, int, path, i + 1, "number of satellites")
        elif line.startswith("%c") and time_system is None:
            time_system = line[9:12].strip()
        elif line.startswith(("+", "%", "/*")) or not line.strip():
            continue
        elif line.startswith("EOF"):
            break
        else:
            raise FileFormatError("SP3 header: unexpected line before the first epoch",
                                  path, i + 1, line)
    if body is None:
        raise FileFormatError("SP3 file has no epoch record ('*' line): empty or truncated",
                              path, len(lines))
    if n_sat is None:
        raise FileFormatError("SP3 header has no '+' satellite line", path, body + 1)
    if time_system is None or time_system in ("", "ccc"):
        time_system = "GPS"  # SP3-a/b had no field; SP3-c 3.4 keeps GPS as the default
    if time_system not in _TIME_SYSTEMS:
        raise FileFormatError(f"SP3 header: unknown time system {time_system!r}", path,
                              next(i for i, l in enumerate(lines) if l.startswith("%c")) + 1)
    header["time_system"] = time_system
    header["number_of_satellites"] = n_sat
    return header, body


def _read_one(path: Path, wanted: set[str] | None) -> xr.Dataset:
    raw = read_bytes(path)
    text_lines = raw.decode("ascii", errors="replace").splitlines()
    header, body_start = _parse_header(text_lines, path)

    body = np.array(raw.splitlines()[body_start:], dtype=object)
    first_char = np.array([b[:1] for b in body], dtype="S1")
    line_numbers = np.arange(body_start + 1, body_start + 1 + len(body))
    is_epoch = first_char == b"*"
    is_pos = first_char == b"P"
    is_vel = first_char == b"V"
    known = is_epoch | is_pos | is_vel | np.isin(first_char, [b"E", b""]) \
        | np.array([b.startswith((b"EOF", b"/*")) for b in body])
    if not known.all():
        i = int(np.flatnonzero(~known)[0])
        raise FileFormatError("SP3 body: line is not an epoch, P, V, EP/EV or EOF record",
                              path, int(line_numbers[i]), body[i].decode(errors="replace"))

    epoch_lines = body[is_epoch]
    n_epochs = len(epoch_lines)
    if n_epochs < header["number_of_epochs"]:
        raise FileFormatError(f"SP3 file truncated: header announces {header['number_of_epochs']} "
                              f"epochs, body has {n_epochs}", path, int(line_numbers[-1]),
                              body[-1].decode(errors="replace"))
    times = _epoch_times(epoch_lines.astype("S40"), path, line_numbers[is_epoch], header)
    epoch_of_line = np.cumsum(is_epoch) - 1

    pos = _records(body, is_pos, epoch_of_line, line_numbers, path, wanted, "P")
    vel = _records(body, is_vel, epoch_of_line, line_numbers, path, wanted, "V") if is_vel.any() else None

    svs = np.unique(pos["sv"]) if len(pos["sv"]) else np.array([], dtype="U3")
    n_sv = len(svs)
    position = np.full((n_epochs, n_sv, 3), np.nan)
    clock = np.full((n_epochs, n_sv), np.nan)
    col = np.searchsorted(svs, pos["sv"])
    xyz = pos["xyz"] * 1e3  # km -> m (SP3-c 2, position record)
    absent = np.all(pos["xyz"] == 0.0, axis=1)  # 0.000000 coordinates mean "missing"
    xyz[absent] = np.nan
    position[pos["epoch"], col] = xyz
    clk = pos["clock"]
    clk = np.where(np.abs(clk - MISSING_CLOCK_US) < 1e-3, np.nan, clk)
    clock[pos["epoch"], col] = clk * 1e-6  # microseconds -> s

    data = {"position_ecef_m": (("time", "sv", "axis"), position),
            "clock_s": (("time", "sv"), clock)}
    if vel is not None:
        velocity = np.full((n_epochs, n_sv, 3), np.nan)
        rate = np.full((n_epochs, n_sv), np.nan)
        known_sv = np.isin(vel["sv"], svs)
        vcol = np.searchsorted(svs, vel["sv"][known_sv])
        v = vel["xyz"][known_sv] * 0.1  # dm/s -> m/s (SP3-c 2, velocity record)
        v[np.all(vel["xyz"][known_sv] == 0.0, axis=1)] = np.nan
        velocity[vel["epoch"][known_sv], vcol] = v
        r = vel["clock"][known_sv]
        r = np.where(np.abs(r - MISSING_CLOCK_US) < 1e-3, np.nan, r)
        rate[vel["epoch"][known_sv], vcol] = r * 1e-10  # 1e-4 microseconds/s -> s/s
        data["velocity_ecef_m_per_s"] = (("time", "sv", "axis"), velocity)
        data["clock_rate_s_per_s"] = (("time", "sv"), rate)

    attrs = {"time_scale": "GPST", "source_time_system": header["time_system"],
             "coordinate_system": header["coordinate_system"], "orbit_type": header["orbit_type"],
             "agency": header["agency"], "epoch_interval_s": header["epoch_interval_s"],
             "version": header["version"], "paths": [str(path)]}
    ds = xr.Dataset(data, coords={"time": times, "sv": svs.astype(str), "axis": ["x", "y", "z"]},
                    attrs=attrs)
    return ds


def _epoch_times(lines: np.ndarray, path: Path, line_numbers: np.ndarray, header: dict) -> np.ndarray:
    """Epoch ('*') records -> datetime64[ns] on GPST (SP3-c 2, epoch header record)."""
    texts = [b.decode(errors="replace") for b in lines]
    fields = {}
    for name, (a, b) in _EPOCH_COLUMNS.items():
        fields[name] = _to_float(_field(lines, a, b), path, line_numbers, texts, f"epoch {name}")
    bad = ~np.isfinite(np.stack(list(fields.values()))).all(axis=0)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise FileFormatError("SP3 epoch record: year, month, day, hour, minute, second expected",
                              path, int(line_numbers[i]), texts[i])
    year, month, day = (fields[k].astype(np.int64) for k in ("year", "month", "day"))
    dates = ((year - 1970).astype("datetime64[Y]") + (month - 1).astype("timedelta64[M]")).astype("datetime64[D]") \
        + (day - 1).astype("timedelta64[D]")
    seconds_ns = np.rint(fields["second"] * 1e9).astype(np.int64)
    local = dates.astype("datetime64[ns]") + fields["hour"].astype(np.int64).astype("timedelta64[h]") \
        + fields["minute"].astype(np.int64).astype("timedelta64[m]") + seconds_ns.astype("timedelta64[ns]")
    try:
        return to_gpst(local, _TIME_SYSTEMS[header["time_system"]])
    except TimeScaleError as exc:
        raise FileFormatError(exc.message, path) from None


def _records(body, mask, epoch_of_line, line_numbers, path, wanted, kind):
    """P or V records -> sv names, epoch index, 3 coordinates and the clock field."""
    idx = np.flatnonzero(mask)
    lines = body[idx]
    nums = line_numbers[idx]
    epochs = epoch_of_line[idx]
    if (epochs < 0).any():
        i = int(np.flatnonzero(epochs < 0)[0])
        raise FileFormatError(f"SP3 {kind} record before the first epoch", path, int(nums[i]))
    lengths = np.array([len(b) for b in lines], dtype=np.int64)
    short = lengths < _RECORD_MIN_LENGTH
    if short.any():
        i = int(np.flatnonzero(short)[0])
        raise FileFormatError(f"SP3 {kind} record is truncated (needs at least "
                              f"{_RECORD_MIN_LENGTH} columns)", path, int(nums[i]),
                              lines[i].decode(errors="replace"))
    fixed = lines.astype("S60")
    sv = _field(fixed, 1, 4).astype("U3")
    sv = np.char.replace(sv, " ", "0")  # old files write "G 5"
    if wanted is not None:
        keep = np.isin(np.array([s[:1] for s in sv]), list(wanted))
        fixed, sv, nums, epochs, lines = fixed[keep], sv[keep], nums[keep], epochs[keep], lines[keep]
    texts = _LazyTexts(lines)
    xyz = np.stack([_to_float(_field(fixed, *_RECORD_COLUMNS[a]), path, nums, texts, f"{kind} {a}")
                    for a in ("x", "y", "z")], axis=1)
    clock = _to_float(_field(fixed, *_RECORD_COLUMNS["clock"]), path, nums, texts, f"{kind} clock")
    if np.isnan(xyz).any():
        i = int(np.flatnonzero(np.isnan(xyz).any(axis=1))[0])
        raise FileFormatError(f"SP3 {kind} record has a blank coordinate", path, int(nums[i]), texts[i])
    return {"sv": sv, "epoch": epochs, "xyz": xyz, "clock": np.where(np.isnan(clock), MISSING_CLOCK_US, clock)}


class _LazyTexts:
    """Decode a record's text only when an error message needs it."""

    def __init__(self, lines):
        self._lines = lines

    def __getitem__(self, i):
        return self._lines[i].decode(errors="replace")
