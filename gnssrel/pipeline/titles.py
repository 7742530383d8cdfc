"""The report's default title, from the files: station(s) and day, e.g. ``NYA1 2024-05-03 (day 124)``.

Stations are the receivers audited (their marker names); without observation logs,
the station named by the navigation files (RINEX 3/4 long names ``NYA100NOR_S_...``,
RINEX 2 short names ``mojn1770.20n``), leaving out merged broadcast files (``BRDC``...).
The day is that of the analysed span (GPST), with its day of year.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

_LONG_NAME = re.compile(r"^([A-Z0-9]{4})\d{2}[A-Z]{3}_[A-Z]_\d{11}_")      # RINEX 3/4 file names
_SHORT_NAME = re.compile(r"^([a-z0-9]{4})\d{3}[0-9a-x]\.\d{2}[a-z]", re.IGNORECASE)  # RINEX 2 file names
MERGED_BROADCAST = ("BRDC", "BRDM", "BRD4", "BRDX")
"""Four-character names of merged broadcast files: not a station."""
DEFAULT_TITLE = "gnssrel report"


def station_of_file(path) -> str | None:
    """The four-character station of a RINEX file name, or None (another name, or a merged file)."""
    name = Path(str(path)).name
    match = _LONG_NAME.match(name) or _SHORT_NAME.match(name)
    if not match:
        return None
    station = match.group(1).upper()
    return None if station in MERGED_BROADCAST else station


def _stations(content) -> list[str]:
    names = [r.name for r in content.receivers if r.name]
    if not names:
        names = [s for s in (station_of_file(p) for p in (content.inputs or {}).get("navigation", [])) if s]
    return list(dict.fromkeys(names))


def _date_and_day(t) -> tuple[str, int]:
    day = np.datetime64(t, "D")
    return str(day), int((day - day.astype("datetime64[Y]").astype("datetime64[D]")).astype(int)) + 1


def span_days(t0, t1) -> str:
    """'2024-05-03 (day 124)', or '2020-06-24 to 2020-06-25 (days 176 to 177)' for a span over
    several days (an end at exactly 00:00 belongs to the day before)."""
    t0, t1 = np.datetime64(t0, "ns"), np.datetime64(t1, "ns")
    if t1 > t0 and t1 == np.datetime64(t1, "D"):
        t1 = t1 - np.timedelta64(1, "ns")
    (d0, n0), (d1, n1) = _date_and_day(t0), _date_and_day(t1)
    return f"{d0} (day {n0:03d})" if d0 == d1 else f"{d0} to {d1} (days {n0:03d} to {n1:03d})"


def report_title(content) -> str:
    """The title from the files (see the module text): 'NYA1 2024-05-03 (day 124)'."""
    t0, t1 = content.time_span
    stations = _stations(content)
    days = span_days(t0, t1)
    return f"{', '.join(stations)} {days}" if stations else f"{DEFAULT_TITLE}: {days}"
