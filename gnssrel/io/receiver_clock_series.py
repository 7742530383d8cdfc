"""Reader of a receiver's own clock bias/drift series (a CSV file gnssrel defines).

Not to be confused with the receiver's *satellite*-clock table (:mod:`gnssrel.io.receiver_clocks`):
this file holds the receiver's estimate of its **own** clock, one row per epoch.

Format
------
A comma-separated text file (plain or .gz/.Z/.zip), one header line naming the columns, then one
row per epoch.  Lines starting with ``#`` are comments.  Column order is free; extra columns are
ignored.

========================  ========  ==================================================================
column                    required  content
========================  ========  ==================================================================
``time``                  yes       ISO 8601 epoch, e.g. ``2025-06-11T10:00:00.000`` (no zone)
``time_scale``            yes       the scale of ``time`` and the system time the bias refers to:
                                    GPST, UTC, GST or BDT (one per row; a file may keep one throughout)
``clock_bias_ns``         yes       receiver clock minus that system time, nanoseconds
``clock_drift_ns_per_s``  no        its rate, ns/s; an empty cell: not given (NaN)
========================  ========  ==================================================================

Example::

    # receiver X firmware 1.2, its own clock
    time,time_scale,clock_bias_ns,clock_drift_ns_per_s
    2025-06-11T10:00:00.000,GPST,-3899999.533,-117.9

Times are converted to GPST (``gnssrel.timescales.to_gpst``; UTC with the leap-second table).
A bad row costs that row only, is counted in ``attrs["accounting"]`` (item
``receiver_clock_series_rows``, system "-") and warned about with its line: wrong number of
columns, a time that is not ISO 8601, a year outside 1980-2100, a scale not in
:data:`ACCEPTED_SCALES`, a bias or drift that is not a plain number (no '_', NaN, INF), a bias
beyond :data:`MAX_BIAS_NS` or a drift beyond :data:`MAX_DRIFT_NS_PER_S`, a time far from the
other rows, an epoch given twice (the first row is kept).  A file without the required
columns, or with no usable row, is a ``FileFormatError`` naming the file.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd

from gnssrel.accounting import NO_SYSTEM, Ledger
from gnssrel.errors import FileFormatError
from gnssrel.io.csv_rows import read_csv_cells
from gnssrel.io.precise_fields import far_off
from gnssrel.timescales import to_gpst

REQUIRED_COLUMNS = ("time", "time_scale", "clock_bias_ns")
DRIFT_COLUMN = "clock_drift_ns_per_s"
ACCEPTED_SCALES = ("GPST", "UTC", "GST", "BDT")
ITEM = "receiver_clock_series_rows"
MAX_BIAS_NS = 1e9
"""A receiver clock more than 1 s from system time is no clock bias a fix could come from
(receivers keep it within milliseconds, stepping by whole milliseconds; common practice)."""
MAX_DRIFT_NS_PER_S = 1e5
"""1e-4 s/s: forty times the +-2.5 ppm of a cheap TCXO (common practice); beyond it, a garbled value."""
PLAUSIBLE_YEARS = (1980, 2100)
_PLAIN_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")   # no '_', NaN, INF, hex
_ISO_TIME = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d(:\d\d(\.\d{1,9})?)?$")
_WARNED = 20   # warnings kept per reason


def read_receiver_clock_series(path: str | Path) -> pd.DataFrame:
    """Read a receiver's own clock series.

    Returns a DataFrame sorted by time with ``time`` (GPST datetime64[ns]), ``time_scale`` (as in
    the file, upper case), ``clock_bias_ns``, ``clock_drift_ns_per_s`` (NaN where not given) and
    ``line`` (line number in the file); ``attrs["accounting"]`` is the reader's Ledger as a dict.
    """
    ledger = Ledger()
    df, columns = read_csv_cells(path, ledger, "receiver clock series", REQUIRED_COLUMNS, DRIFT_COLUMN)
    n_cells = df["n_cells"].to_numpy()
    ledger.read(ITEM, NO_SYSTEM, len(df))
    reason = np.full(len(df), "", dtype=object)

    def refuse(bad, why):
        bad = np.asarray(bad, bool) & (reason == "")
        reason[bad] = why

    refuse(n_cells != len(columns), f"not {len(columns)} columns as in the header")
    time_ok = df["time"].str.match(_ISO_TIME).to_numpy()
    times = pd.to_datetime(df["time"].where(time_ok, None), errors="coerce", format="ISO8601")
    refuse(times.isna().to_numpy(), "time is not an ISO 8601 epoch (e.g. 2025-06-11T10:00:00)")
    year = pd.to_numeric(df["time"].str[:4].where(time_ok, "0"), errors="coerce").to_numpy()
    refuse((year < PLAUSIBLE_YEARS[0]) | (year > PLAUSIBLE_YEARS[1]),
           f"year outside {PLAUSIBLE_YEARS[0]}-{PLAUSIBLE_YEARS[1]}")
    scales = df["time_scale"].str.upper()
    refuse(~scales.isin(ACCEPTED_SCALES).to_numpy(), f"unknown time scale (use one of {', '.join(ACCEPTED_SCALES)})")
    bias = _numbers(df["clock_bias_ns"], refuse, "clock_bias_ns", MAX_BIAS_NS, empty_ok=False)
    drift = (_numbers(df[DRIFT_COLUMN], refuse, DRIFT_COLUMN, MAX_DRIFT_NS_PER_S, empty_ok=True)
             if DRIFT_COLUMN in df else np.full(len(df), np.nan))
    ok = reason == ""
    t_gpst = np.full(len(df), np.datetime64("NaT"), dtype="datetime64[ns]")
    raw = times.to_numpy().astype("datetime64[ns]")
    for scale in scales[ok].unique():
        sel = ok & (scales == scale).to_numpy()
        t_gpst[sel] = to_gpst(raw[sel], scale)
    far = np.zeros(len(df), bool)
    far[ok] = far_off(t_gpst[ok])
    refuse(far, "time far from the series' other rows")
    ok = reason == ""
    repeated = np.zeros(len(df), bool)
    repeated[ok] = pd.Series(t_gpst[ok]).duplicated().to_numpy()
    refuse(repeated, "the epoch appears twice (the first row is kept)")
    ok = reason == ""
    for why in pd.unique(reason[~ok]):
        bad = reason == why
        ledger.drop(ITEM, NO_SYSTEM, why, int(bad.sum()))
        for line in df["line"].to_numpy()[bad][:_WARNED]:
            ledger.warn(f"receiver clock series row refused: {why}", path, int(line))
    ledger.used(ITEM, NO_SYSTEM, int(ok.sum()))
    if not ok.any():
        first = int(df["line"].iloc[0])
        raise FileFormatError(f"no usable row in the receiver clock series ({reason[0]})", path, first,
                              df["line_text"].iloc[0])
    out = pd.DataFrame({"time": t_gpst[ok], "time_scale": scales.to_numpy()[ok], "clock_bias_ns": bias[ok],
                        "clock_drift_ns_per_s": drift[ok], "line": df["line"].to_numpy()[ok]})
    out = out.sort_values("time", kind="stable").reset_index(drop=True)
    out.attrs["accounting"] = ledger.as_dict()
    return out


def _numbers(cells: pd.Series, refuse, name: str, limit: float, empty_ok: bool) -> np.ndarray:
    """Plain decimal numbers of a column (NaN where empty and allowed); refuses the others."""
    empty = (cells == "").to_numpy()
    plain = cells.str.match(_PLAIN_NUMBER).to_numpy()
    refuse(~plain & ~(empty & empty_ok), f"{name} is not a plain number")
    value = pd.to_numeric(cells.where(plain, "nan"), errors="coerce").to_numpy(float)
    refuse(plain & ~(np.abs(value) <= limit), f"{name} beyond {limit:g}")
    return value
