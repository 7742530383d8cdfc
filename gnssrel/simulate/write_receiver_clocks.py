"""Writer of a receiver's own satellite-clock table (the documented gnssrel CSV layout).

Columns: ``time`` (ISO 8601, no zone), ``time_scale`` (GPST here), ``sv`` (RINEX name),
``clock_correction_s`` (the satellite clock offset the firmware applied, s), ``flags``
(optional; empty).  Leading lines starting with ``#`` describe the file.
"""

from __future__ import annotations

import numpy as np

from gnssrel.simulate.textfile import write_lines

COLUMNS = ("time", "time_scale", "sv", "clock_correction_s", "flags")


def clock_table_lines(times, sv, clock_correction_s, comments=(), time_scale: str = "GPST") -> list[str]:
    """CSV lines, one row per (time, satellite) with a finite value, time-major order."""
    times = np.asarray(times, dtype="datetime64[ms]")
    stamps = np.datetime_as_string(times, unit="ms")
    out = [f"# {c}" for c in comments] + [",".join(COLUMNS)]
    values = np.asarray(clock_correction_s)
    for i, stamp in enumerate(stamps):
        out += [f"{stamp},{time_scale},{s},{values[i, j]:.12e},"
                for j, s in enumerate(sv) if np.isfinite(values[i, j])]
    return out


def write_receiver_clocks(path, times, sv, clock_correction_s, comments=()):
    """Write the table atomically; returns the path."""
    return write_lines(path, clock_table_lines(times, sv, clock_correction_s, comments))
