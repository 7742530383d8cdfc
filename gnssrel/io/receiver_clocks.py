"""Reader of a receiver's own satellite-clock table (a CSV file gnssrel defines).

Format
------
A comma-separated text file (plain or .gz/.Z/.zip), one header line naming the
columns, then one row per satellite and epoch.  Lines starting with ``#`` are
comments.  Column order is free; extra columns are ignored.

=====================  ========  =====================================================
column                 required  content
=====================  ========  =====================================================
``time``               yes       ISO 8601 epoch, e.g. ``2020-06-25T06:00:00`` (no zone)
``time_scale``         yes       the scale of ``time``: GPST, GST, BDT, UTC or GLONASST
``sv``                 yes       satellite, RINEX name: ``G05``, ``E11``, ``R07``, ...
``clock_correction_s`` yes       the receiver's satellite clock correction Delta t_sv in
                                 seconds, as it subtracts it from the transmit time
                                 (IS-GPS-200 20.3.3.3.3.1: t = t_sv - Delta t_sv),
                                 whatever terms the firmware put into it
``flags``              no        free text (e.g. ``tgd``, ``rel``), carried through
=====================  ========  =====================================================

Example::

    # receiver X firmware 1.2, satellite clock corrections
    time,time_scale,sv,clock_correction_s,flags
    2020-06-25T06:00:00,GPST,G05,-1.2345678901e-04,
    2020-06-25T06:00:00,GPST,R07,3.21e-05,

Times are converted to GPST (``gnssrel.timescales.to_gpst``).  A bad row raises
``FileFormatError`` naming the file and line; an unknown scale raises it too.
"""

from __future__ import annotations

import io
import re
from pathlib import Path

import numpy as np
import pandas as pd

from gnssrel.errors import FileFormatError, TimeScaleError
from gnssrel.io.opening import read_text
from gnssrel.timescales import to_gpst

REQUIRED_COLUMNS = ("time", "time_scale", "sv", "clock_correction_s")
ACCEPTED_SCALES = ("GPST", "GST", "BDT", "UTC", "GLONASST", "QZSST")
_SV = re.compile(r"^[GRECJ]\d\d$")


def read_receiver_clocks(path: str | Path) -> pd.DataFrame:
    """Read a receiver satellite-clock table.

    Returns a DataFrame sorted by (time, sv) with columns ``time`` (GPST
    datetime64[ns]), ``sv``, ``clock_correction_s``, ``flags``, ``time_scale`` (as
    in the file) and ``line`` (line number in the file).
    """
    text = read_text(path)
    lines = text.splitlines()
    body = [(n, s) for n, s in enumerate(lines, start=1) if s.strip() and not s.lstrip().startswith("#")]
    if not body:
        raise FileFormatError("receiver clock table is empty", path)
    header_line, header = body[0]
    columns = [c.strip() for c in header.split(",")]
    missing = [c for c in REQUIRED_COLUMNS if c not in columns]
    if missing:
        raise FileFormatError(f"receiver clock table lacks column(s) {', '.join(missing)}; the header "
                              f"must name {', '.join(REQUIRED_COLUMNS)} (and optionally flags)",
                              path, header_line, header)
    rows = body[1:]
    if not rows:
        raise FileFormatError("receiver clock table has a header but no rows", path, header_line, header)
    data = "\n".join(s for _, s in rows)
    try:
        df = pd.read_csv(io.StringIO(data), names=columns, header=None, dtype=str, keep_default_na=False,
                         skipinitialspace=True)
    except (pd.errors.ParserError, ValueError) as exc:
        raise FileFormatError(f"cannot parse receiver clock table ({exc})", path) from None
    df["line"] = [n for n, _ in rows]
    _check_row_lengths(rows, len(columns), path)
    df["sv"] = df["sv"].str.strip()
    bad_sv = ~df["sv"].str.match(_SV)
    if bad_sv.any():
        _fail(df, bad_sv, "satellite must be a RINEX name like G05", path, lines)
    df["clock_correction_s"] = pd.to_numeric(df["clock_correction_s"].str.strip(), errors="coerce")
    bad = ~np.isfinite(df["clock_correction_s"].to_numpy(dtype=np.float64))
    if bad.any():
        _fail(df, bad, "clock_correction_s is not a number (seconds)", path, lines)
    times = pd.to_datetime(df["time"].str.strip(), errors="coerce", format="ISO8601")
    if times.isna().any():
        _fail(df, times.isna(), "time is not an ISO 8601 epoch (e.g. 2020-06-25T06:00:00)", path, lines)
    if getattr(times.dt, "tz", None) is not None:
        raise FileFormatError("times must not carry a zone; put the scale in time_scale", path)
    scales = df["time_scale"].str.strip().str.upper()
    unknown = ~scales.isin(ACCEPTED_SCALES)
    if unknown.any():
        _fail(df, unknown, f"unknown time scale (use one of {', '.join(ACCEPTED_SCALES)})", path, lines)
    t_gpst = np.empty(len(df), dtype="datetime64[ns]")
    raw = times.to_numpy().astype("datetime64[ns]")
    for scale in scales.unique():
        sel = (scales == scale).to_numpy()
        try:
            t_gpst[sel] = to_gpst(raw[sel], scale)
        except TimeScaleError as exc:
            _fail(df, sel, exc.message, path, lines)
    out = pd.DataFrame({"time": t_gpst, "sv": df["sv"].to_numpy(),
                        "clock_correction_s": df["clock_correction_s"].to_numpy(dtype=np.float64),
                        "flags": df["flags"].str.strip().to_numpy() if "flags" in df else "",
                        "time_scale": scales.to_numpy(), "line": df["line"].to_numpy()})
    duplicated = out.duplicated(["time", "sv"])
    if duplicated.any():
        _fail(out, duplicated, "a satellite appears twice at the same epoch", path, lines)
    return out.sort_values(["time", "sv"], kind="stable").reset_index(drop=True)


def _check_row_lengths(rows, n_columns, path):
    for n, s in rows:
        if s.count(",") + 1 < n_columns:
            raise FileFormatError(f"row has fewer than the header's {n_columns} columns", path, n, s)


def _fail(df, bad, message, path, lines):
    first = int(np.flatnonzero(np.asarray(bad))[0])
    line = int(df["line"].iloc[first])
    raise FileFormatError(message, path, line, lines[line - 1])
