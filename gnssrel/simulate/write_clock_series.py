"""Writer of a receiver's own clock bias/drift series (the CSV layout gnssrel reads).

Columns: ``time`` (ISO 8601, no zone), ``time_scale`` (GPST here), ``clock_bias_ns`` (receiver
clock minus system time, ns), ``clock_drift_ns_per_s`` (its rate, ns/s).  Leading lines starting
with ``#`` describe the file (:mod:`gnssrel.io.receiver_clock_series`).
"""

from __future__ import annotations

import numpy as np

from gnssrel.simulate.textfile import write_lines

COLUMNS = ("time", "time_scale", "clock_bias_ns", "clock_drift_ns_per_s")


def clock_series_lines(times, bias_ns, drift_ns_per_s, comments=(), time_scale: str = "GPST") -> list[str]:
    """CSV lines, one row per epoch with a finite bias."""
    stamps = np.datetime_as_string(np.asarray(times, dtype="datetime64[ms]"), unit="ms")
    out = [f"# {c}" for c in comments] + [",".join(COLUMNS)]
    out += [f"{t},{time_scale},{b:.3f},{d:.4f}" for t, b, d in zip(stamps, bias_ns, drift_ns_per_s)
            if np.isfinite(b) and np.isfinite(d)]
    return out


def write_clock_series(path, times, bias_ns, drift_ns_per_s, comments=()):
    """Write the series atomically; returns the path."""
    return write_lines(path, clock_series_lines(times, bias_ns, drift_ns_per_s, comments))
