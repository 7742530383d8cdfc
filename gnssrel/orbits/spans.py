"""The time span of a navigation data set: the bulk of its records' reference times.

A station's daily navigation file holds the records of its day, a few of the
evening before and of 00:00 the next day, and now and then one record whose week
or date is garbled.  Default windows come from the *bulk* of the records (the
densest day and the adjacent days holding a fair share of its records), so one
stray record cannot stretch a window over months.
"""

from __future__ import annotations

import numpy as np

from gnssrel.errors import NoDataError
from gnssrel.systems import system_model
from gnssrel.text import fmt_span

__all__ = ["ADJACENT_DAY_SHARE", "describe_navigation_span", "nav_files", "navigation_span", "reference_times"]

ADJACENT_DAY_SHARE = 0.02
"""A day next to the densest one belongs to the bulk of the records when it holds at least this share
of the densest day's records (a daily file's records of 00:00 the next day do; one garbled record does not)."""
ONE_DAY = np.timedelta64(1, "D")


def reference_times(nav, systems: str) -> np.ndarray:
    """Every record's reference time (toe; t_b for GLONASS) of ``systems``, GPST datetime64[ns], NaT left out."""
    refs = [np.asarray(nav.ephemerides[s][system_model(s).reference_column]).astype("datetime64[ns]")
            for s in systems if s in nav.ephemerides]
    refs = np.concatenate(refs) if refs else np.array([], dtype="datetime64[ns]")
    return refs[~np.isnat(refs)]


def _bulk_days(refs: np.ndarray) -> tuple[np.ndarray, np.datetime64]:
    """(the days holding the bulk of ``refs``, the densest of them): the densest day and its
    neighbours in an unbroken run, each with at least ADJACENT_DAY_SHARE of the densest day's records."""
    days, counts = np.unique(refs.astype("datetime64[D]"), return_counts=True)
    best = int(np.argmax(counts))
    floor = max(1.0, ADJACENT_DAY_SHARE * counts[best])
    lo = hi = best
    while lo > 0 and days[lo - 1] == days[lo] - ONE_DAY and counts[lo - 1] >= floor:
        lo -= 1
    while hi < days.size - 1 and days[hi + 1] == days[hi] + ONE_DAY and counts[hi + 1] >= floor:
        hi += 1
    return days[lo:hi + 1], days[best]


def navigation_span(nav, systems: str, main_day: bool = False) -> tuple[np.datetime64, np.datetime64]:
    """The span of a navigation data set, GPST ``datetime64[ns]``.

    Default: the first and last reference time (toe; t_b for GLONASS) of the bulk of
    the records of ``systems`` (letters, e.g. ``"GE"``): the day holding most records
    and the adjacent days that hold a fair share; records outside are not used (the
    accounting counts them as outside the time window).

    ``main_day=True``: the GPST day holding most of the records, [00:00, next 00:00).
    A station's daily file also carries a few records of the evening before; with
    precise products of two days given for interpolation, this is the day meant.

    Raises NoDataError when no record of ``systems`` has a reference time.
    """
    refs = reference_times(nav, systems)
    if refs.size == 0:
        raise NoDataError(f"no record of systems {systems} has a reference time", getattr(nav, "path", None))
    days, densest = _bulk_days(refs)
    if main_day:
        day = densest.astype("datetime64[ns]")
        return day, day + ONE_DAY
    bulk = refs[np.isin(refs.astype("datetime64[D]"), days)]
    return bulk.min(), bulk.max()


def nav_files(nav) -> str:
    """The navigation file name(s) for a message."""
    paths = (getattr(nav, "header", {}) or {}).get("merged_from") or [getattr(nav, "path", None)]
    return ", ".join(str(p) for p in paths if p is not None) or "the navigation data"


def describe_navigation_span(nav, systems: str) -> str:
    """'2020-06-25 00:00:00 to 23:59:44 GPST (the bulk of the records' reference times in FILE)' for messages."""
    start, end = navigation_span(nav, systems)
    return f"{fmt_span(start, end)} (the bulk of the records' reference times in {nav_files(nav)})"
