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
``flags``              no        words (e.g. ``tgd rel``), carried through; each word starts
                                 with a letter (a number there is a shifted or garbled cell)
=====================  ========  =====================================================

Example::

    # receiver X firmware 1.2, satellite clock corrections
    time,time_scale,sv,clock_correction_s,flags
    2020-06-25T06:00:00,GPST,G05,-1.2345678901e-04,
    2020-06-25T06:00:00,GPST,R07,3.21e-05,

Times are converted to GPST (``gnssrel.timescales.to_gpst``).  A bad row (wrong
number of columns, a satellite that is no RINEX name, a time that is not ISO 8601, an
unknown scale, a year outside 1980-2100, a time far from the other rows
(:func:`gnssrel.io.precise_fields.far_off`), a correction that is not a plain number or
beyond 10 ms, satellite number 00, flags that are not words, a satellite twice at one
epoch) is refused: it costs that row only, is counted in the table's
``attrs["accounting"]`` (item ``receiver_clock_rows``, system "-" when the row's
satellite cannot be told) and warned about with its line.  A table without the
required columns, or with no usable row, is a ``FileFormatError`` naming the file.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd

from gnssrel.accounting import NO_SYSTEM, Ledger
from gnssrel.errors import FileFormatError, TimeScaleError
from gnssrel.io.csv_rows import read_csv_cells
from gnssrel.io.precise_fields import far_off
from gnssrel.timescales import to_gpst

REQUIRED_COLUMNS = ("time", "time_scale", "sv", "clock_correction_s")
ACCEPTED_SCALES = ("GPST", "GST", "BDT", "UTC", "GLONASST", "QZSST")
ITEM = "receiver_clock_rows"
MAX_CORRECTION_S = 1e-2
"""A satellite clock correction beyond 10 ms cannot be one: GPS a_f0 is 22 bits of 2^-31 s,
below 1 ms (IS-GPS-200 table 20-III, from memory); GLONASS tau_n likewise (22 bits of 2^-30 s)."""
_SV = re.compile(r"^[GRECJ]\d\d$")
_SV_ZERO = r"^[GRECJ]00$"   # no system has a satellite number 00 (PRNs and slots start at 1)
_FLAG_WORD = r"(?!(?i:nan|inf|infinity)(?:[ |;]|$))[A-Za-z][\w+.-]*"   # a word, not NaN or INF
_FLAG_WORDS = rf"^({_FLAG_WORD}([ |;]+{_FLAG_WORD})*)?$"
PLAUSIBLE_YEARS = (1980, 2100)
"""GNSS logs exist from the GPS epoch (1980-01-06) on; a year outside is a garbled one."""
_PLAIN_NUMBER = r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$"   # no '_', NaN, INF, hex
_ISO_TIME = r"^\d{4}-\d\d-\d\dT\d\d:\d\d(:\d\d(\.\d{1,9})?)?$"


def read_receiver_clocks(path: str | Path) -> pd.DataFrame:
    """Read a receiver satellite-clock table.

    Returns a DataFrame sorted by (time, sv) with columns ``time`` (GPST
    datetime64[ns]), ``sv``, ``clock_correction_s``, ``flags``, ``time_scale`` (as
    in the file) and ``line`` (line number in the file); ``attrs["accounting"]`` is the
    reader's :class:`gnssrel.accounting.Ledger` as a dict.
    """
    ledger = Ledger()
    df, columns = read_csv_cells(path, ledger, "receiver clock table", REQUIRED_COLUMNS, "flags")
    sv_ok = df["sv"].str.match(_SV)
    df["system"] = np.where(sv_ok, df["sv"].str[:1], NO_SYSTEM)
    for system, n in df["system"].value_counts().items():
        ledger.read(ITEM, system, int(n))
    reason = pd.Series("", index=df.index)

    def refuse(bad, why):
        bad = np.asarray(bad, bool) & (reason == "").to_numpy()
        reason[bad] = why

    refuse(df["n_cells"] != len(columns), f"not {len(columns)} columns as in the header")
    refuse(~sv_ok, "satellite is not a RINEX name like G05")
    refuse(df["sv"].str.match(_SV_ZERO), "satellite number 00")
    number_ok = df["clock_correction_s"].str.match(_PLAIN_NUMBER)
    refuse(~number_ok, "clock_correction_s is not a plain number (seconds)")
    value = pd.to_numeric(df["clock_correction_s"].where(number_ok, "nan"), errors="coerce").to_numpy(float)
    refuse(number_ok & ~(np.abs(value) <= MAX_CORRECTION_S),
           f"clock_correction_s beyond {MAX_CORRECTION_S:g} s")
    time_ok = df["time"].str.match(_ISO_TIME)
    times = pd.to_datetime(df["time"].where(time_ok, None), errors="coerce", format="ISO8601")
    refuse(times.isna().to_numpy(), "time is not an ISO 8601 epoch (e.g. 2020-06-25T06:00:00)")
    year = pd.to_numeric(df["time"].str[:4].where(time_ok, "0"), errors="coerce").to_numpy()
    refuse((year < PLAUSIBLE_YEARS[0]) | (year > PLAUSIBLE_YEARS[1]),
           f"year outside {PLAUSIBLE_YEARS[0]}-{PLAUSIBLE_YEARS[1]}")
    if "flags" in df:
        refuse(~df["flags"].str.match(_FLAG_WORDS), "flags are not words (e.g. tgd rel)")
    scales = df["time_scale"].str.upper()
    refuse(~scales.isin(ACCEPTED_SCALES), f"unknown time scale (use one of {', '.join(ACCEPTED_SCALES)})")
    ok = (reason == "").to_numpy()
    t_gpst = np.full(len(df), np.datetime64("NaT"), dtype="datetime64[ns]")
    raw = times.to_numpy().astype("datetime64[ns]")
    for scale in scales[ok].unique():
        sel = ok & (scales == scale).to_numpy()
        try:
            t_gpst[sel] = to_gpst(raw[sel], scale)
        except TimeScaleError as exc:
            refuse(sel, exc.message)
    ok = (reason == "").to_numpy()
    far = np.zeros(len(df), bool)
    far[ok] = far_off(t_gpst[ok])      # a garbled year or day, far from the bulk of the rows
    refuse(far, "time far from the table's other rows")
    ok = (reason == "").to_numpy()
    repeated = np.zeros(len(df), bool)
    repeated[ok] = pd.DataFrame({"t": t_gpst[ok], "sv": df["sv"].to_numpy()[ok]}).duplicated().to_numpy()
    refuse(repeated, "the satellite appears twice at the same epoch (the first row is kept)")
    ok = (reason == "").to_numpy()
    for why in reason[~ok].unique():
        bad = (reason == why).to_numpy()
        for system, n in df["system"][bad].value_counts().items():
            ledger.drop(ITEM, system, why, int(n))
        for line in df["line"][bad].to_numpy()[:20]:
            ledger.warn(f"receiver clock row refused: {why}", path, int(line))
    for system, n in df["system"][ok].value_counts().items():
        ledger.used(ITEM, system, int(n))
    if not ok.any():
        first = int(df["line"].iloc[0])
        raise FileFormatError(f"no usable row in the receiver clock table ({reason.iloc[0]})",
                              path, first, df["line_text"].iloc[0])
    out = pd.DataFrame({"time": t_gpst[ok], "sv": df["sv"].to_numpy()[ok], "clock_correction_s": value[ok],
                        "flags": df["flags"].to_numpy()[ok] if "flags" in df else "",
                        "time_scale": scales.to_numpy()[ok], "line": df["line"].to_numpy()[ok]})
    out = out.sort_values(["time", "sv"], kind="stable").reset_index(drop=True)
    out.attrs["accounting"] = ledger.as_dict()
    return out
