"""What an analysis covers when the user does not say: one window and one satellite rule for every command.

The rule (``gnssrel orbits``, ``relativity``, ``clocks``, ``report``, ``demo`` and the campaigns):

* with observation logs, their span;
* else the period the navigation files declare in their names (RINEX 3/4 long name:
  ``..._20201770000_01D_...`` = 2020-06-25 00:00 for one day; RINEX 2 short name
  ``ssssdddf.yyt``: day ``ddd``, session ``f`` = ``0`` the whole day, ``a``-``x`` one hour),
  as long as it holds records;
* else the GPST day holding most of the navigation records (with the adjacent days that hold at
  least half as many, for several daily files given at once);

cut to the span of the precise products when they are given.  It does not depend on
``--systems``.  A declared period ends before its end (one day at 30 s is 2880 epochs,
00:00:00 to 23:59:30); ``--start``/``--end`` are inclusive.  Epochs lie on the ``--step``
grid counted from 00:00 GPST (:func:`aligned_grid`), so ``--start 06:00 UTC`` (06:00:18 GPST)
starts at 06:00:30.

Satellites excluded by rule (the eccentric Galileo E14 and E18, gnssrel.orbits.selection) are
left out of precise products too unless unhealthy/excluded satellites are asked for, and
their records counted as "excluded by rule" (:func:`drop_excluded`), so broadcast and precise
paths agree.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from gnssrel.orbits.selection import excluded_satellites
from gnssrel.orbits.spans import nav_files, reference_times
from gnssrel.pipeline.accounting import EXCLUDED, _finite_by_system
from gnssrel.pipeline.grid import epoch_grid
from gnssrel.text import fmt_span

__all__ = ["MAIN_DAY_SHARE", "Window", "aligned_bounds", "aligned_grid", "analysis_window", "declared_period", "drop_excluded",
           "excluded_satellites"]

ONE_DAY = np.timedelta64(1, "D")
ONE_NS = np.timedelta64(1, "ns")
MAIN_DAY_SHARE = 0.5
"""A day next to the densest one belongs to the analysed days when it holds at least this share of
the densest day's records (several daily files at once); a daily file's few records of the
evening before (MOJN 2020-177: 130 of 2583) and of 00:00 the next day do not."""
_UNITS = {"M": np.timedelta64(1, "m"), "H": np.timedelta64(1, "h"), "D": ONE_DAY, "Y": np.timedelta64(365, "D")}
_LONG_NAME = re.compile(r"_(\d{4})(\d{3})(\d{2})(\d{2})_(\d{2})([MHDY])_")   # RINEX 3/4 file names
_SHORT_NAME = re.compile(r"^[A-Za-z0-9]{4}(\d{3})([0a-x])\.(\d{2})[a-zA-Z]")   # RINEX 2: ssssdddf.yyt


@dataclass(frozen=True)
class Window:
    """A GPST window: ``start`` and ``end`` inclusive (datetime64[ns]) and how it was chosen (for messages)."""

    start: np.datetime64
    end: np.datetime64
    how: str
    period_end: np.datetime64 | None = None   # the end of a declared period or day, excluded

    def describe(self) -> str:
        if self.period_end is not None and self.end == self.period_end - ONE_NS:
            return f"{fmt_span(self.start, self.period_end)} (end excluded), {self.how}"
        return f"{fmt_span(self.start, self.end)}, {self.how}"


def _day_of_year(year: int, doy: int) -> np.datetime64:
    return np.datetime64(f"{year:04d}-01-01", "ns") + (doy - 1) * ONE_DAY


def declared_period(path) -> tuple[np.datetime64, np.datetime64] | None:
    """[start, end) GPST that a RINEX file name declares, or None when the name follows neither convention."""
    name = Path(str(path)).name
    m = _LONG_NAME.search(name)
    if m:
        year, doy, hour, minute, n, unit = m.groups()
        if not 1 <= int(doy) <= 366 or int(hour) > 23 or int(minute) > 59 or int(n) == 0:
            return None
        start = _day_of_year(int(year), int(doy)) + np.timedelta64(int(hour) * 60 + int(minute), "m")
        return start, start + int(n) * _UNITS[unit]
    m = _SHORT_NAME.match(name)
    if m:
        doy, session, yy = int(m.group(1)), m.group(2), int(m.group(3))
        if not 1 <= doy <= 366:
            return None
        day = _day_of_year(1900 + yy if yy >= 80 else 2000 + yy, doy)
        if session == "0":
            return day, day + ONE_DAY
        start = day + np.timedelta64(ord(session) - ord("a"), "h")
        return start, start + np.timedelta64(1, "h")
    return None


def _nav_paths(nav) -> list:
    paths = (getattr(nav, "header", {}) or {}).get("merged_from") or [getattr(nav, "path", None)]
    return [p for p in paths if p is not None]


def _declared(nav, refs) -> tuple[np.datetime64, np.datetime64] | None:
    """The hull of the periods the navigation file names declare, when every name declares one
    and some record's reference time lies in it."""
    periods = [declared_period(p) for p in _nav_paths(nav)]
    if not periods or any(p is None for p in periods):
        return None
    start, end = min(p[0] for p in periods), max(p[1] for p in periods)
    if not ((refs >= start) & (refs < end)).any():
        return None
    return start, end


def _main_days(refs) -> tuple[np.datetime64, np.datetime64]:
    """[first 00:00, last + 1 day) of the densest GPST day of ``refs`` and its adjacent days
    holding at least MAIN_DAY_SHARE of its records."""
    days, counts = np.unique(refs.astype("datetime64[D]"), return_counts=True)
    best = int(np.argmax(counts))
    floor = MAIN_DAY_SHARE * counts[best]
    lo = hi = best
    while lo > 0 and days[lo - 1] == days[lo] - ONE_DAY and counts[lo - 1] >= floor:
        lo -= 1
    while hi < days.size - 1 and days[hi + 1] == days[hi] + ONE_DAY and counts[hi + 1] >= floor:
        hi += 1
    return days[lo].astype("datetime64[ns]"), (days[hi] + ONE_DAY).astype("datetime64[ns]")


def precise_span(*datasets):
    """(start, end) common to every precise product given (Datasets with a time axis), or None."""
    spans = [(ds["time"].values[0], ds["time"].values[-1])
             for ds in datasets if ds is not None and ds.sizes.get("time")]
    if not spans:
        return None
    return max(a for a, _ in spans), min(b for _, b in spans)


def analysis_window(nav, systems=None, obs_list=(), precise=()) -> Window:
    """The default GPST window of every command (module text), inclusive ends.

    ``nav``: NavigationData; ``systems``: letters read (the window does not depend on which:
    all the records ``nav`` holds are counted); ``obs_list``: observation Datasets;
    ``precise``: SP3 / clock Datasets (None entries ignored).
    """
    if len(obs_list):
        return Window(min(o["time"].values[0] for o in obs_list), max(o["time"].values[-1] for o in obs_list),
                      "the span of the observation logs")
    refs = reference_times(nav, "".join(nav.ephemerides))
    if refs.size == 0:   # no record at all: the callers' own checks say so
        refs = reference_times(nav, systems or "")
    declared = _declared(nav, refs) if refs.size else None
    if declared is not None:
        (start, end), how = declared, f"the period named by {nav_files(nav)}"
    elif refs.size:
        (start, end), how = _main_days(refs), f"the GPST day holding most records of {nav_files(nav)}"
    else:
        return Window(np.datetime64("NaT", "ns"), np.datetime64("NaT", "ns"), "no navigation record")
    period_end, end = end, end - ONE_NS
    span = precise_span(*[p for p in precise if p is not None])
    if span is not None and max(start, span[0]) <= min(end, span[1]):
        start, end = max(start, span[0]), min(end, span[1])
        how += ", cut to the precise products"
    return Window(start, end, how, period_end)


def aligned_bounds(start, end, step_s: float) -> tuple[np.datetime64, np.datetime64]:
    """(first, last): the first epoch at or after ``start`` on the ``step_s`` grid counted from 00:00
    GPST of ``start``'s day, and the last grid epoch at or before ``end`` (before ``first`` when none is)."""
    start, end = np.datetime64(start, "ns"), np.datetime64(end, "ns")
    step_ns = round(float(step_s) * 1e9)
    day = start.astype("datetime64[D]").astype("datetime64[ns]")
    offset = int((start - day).astype(np.int64))
    first = day + np.timedelta64(-(-offset // step_ns) * step_ns, "ns")
    if end < first:
        return first, end
    return first, first + np.timedelta64(int((end - first).astype(np.int64)) // step_ns * step_ns, "ns")


def aligned_grid(start, end, step_s: float, window: str | None = None) -> np.ndarray:
    """GPST epochs from :func:`aligned_bounds` every ``step_s`` s, with the limits and the
    "too few epochs" message (naming ``window``) of :func:`gnssrel.pipeline.grid.epoch_grid`."""
    first, last = aligned_bounds(start, end, step_s)
    return epoch_grid(first, last, step_s, window)


def drop_excluded(ds, ledger=None, item: str = "sp3_records", variable: str = "position_ecef_m",
                  include_unhealthy: bool = False):
    """``ds`` (a precise Dataset with an ``sv`` axis) without the satellites excluded by rule, their
    records retired in ``ledger`` as "excluded by rule"; unchanged with ``include_unhealthy``."""
    if ds is None or include_unhealthy or "sv" not in ds.dims:
        return ds
    svs = [str(s) for s in ds["sv"].values]
    out = sorted(excluded_satellites(None) & set(svs))
    if not out:
        return ds
    if ledger is not None and variable in ds:
        for letter, n in _finite_by_system(ds.sel(sv=out), variable, np.ones(ds.sizes["time"], bool)).items():
            ledger.retire(item, letter, EXCLUDED, n)
    kept = ds.sel(sv=[s for s in svs if s not in out])
    kept.attrs.update(ds.attrs)
    return kept
