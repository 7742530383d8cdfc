"""Linear interpolation of sampled satellite clocks, never across a gap.

Precise clocks (30 s or 5 min RINEX clock files, 15 min SP3) are interpolated
linearly between the two samples that bracket the wanted time: at 30 s the
error of first-order interpolation is a few picoseconds, well below the
product's noise (common practice; ../shared/REFERENCE-CHECKS.md 4.1: 30 s
clocks interpolated linearly, Navipedia "Precise GNSS Satellite Coordinates
Computation"; Bock et al., J. Geodesy 83 (2009)).  Clocks are not smooth
enough to bridge missing samples, so a time whose bracketing samples are not
both present, or are further apart than ``max_gap_s``, gets NaN.
"""

from __future__ import annotations

import numpy as np

from gnssrel.errors import GnssrelInputError
from gnssrel.timescales import as_datetime64, seconds_between

__all__ = ["interpolate_clock", "nominal_interval_s"]

GAP_FACTOR = 1.5
"""Spacing beyond this many nominal intervals is a gap (missing samples)."""


def _seconds(times, origin):
    times = np.asarray(times)
    if times.dtype.kind == "M":
        return seconds_between(times, origin)
    return times.astype(np.float64) - (0.0 if origin is None else float(origin))


def nominal_interval_s(times_s: np.ndarray) -> float:
    """Sampling interval: the median spacing of increasing sample times (seconds)."""
    steps = np.diff(times_s)
    return float(np.median(steps)) if steps.size else np.nan


def interpolate_clock(times_in, clock_in, times_out, max_gap_s=None) -> np.ndarray:
    """Linear interpolation of clocks, NaN across gaps.

    Parameters
    ----------
    times_in : (n_in,) strictly increasing sample times, datetime64 (any common
        scale) or float seconds.
    clock_in : (n_in,) or (n_in, n_sv) clock values (NaN = missing sample).
    times_out : (n_out,) wanted times, of the same kind as ``times_in``.
    max_gap_s : bracketing samples further apart than this give NaN; default
        1.5 x the nominal (median) sample interval.

    Returns
    -------
    (n_out,) or (n_out, n_sv) array: the sample itself at a sample time, the
    linear interpolant between two valid neighbouring samples, NaN outside the
    samples, next to a missing sample or across a gap.
    """
    t_in = np.asarray(times_in)
    t_out = np.asarray(times_out)
    if (t_in.dtype.kind == "M") != (t_out.dtype.kind == "M"):
        raise GnssrelInputError("times_in and times_out must both be datetime64 or both seconds")
    origin = as_datetime64(t_in[0]) if (t_in.dtype.kind == "M" and t_in.size) else None
    x = _seconds(t_in, origin)
    xo = _seconds(t_out, origin).reshape(-1)
    y = np.asarray(clock_in, dtype=np.float64)
    single = y.ndim == 1
    y2 = y.reshape(len(x), -1)
    if y2.shape[0] != len(x):
        raise GnssrelInputError(f"clock_in has {y.shape[0]} rows for {len(x)} sample times")
    n_out = len(xo)
    out = np.full((n_out, y2.shape[1]), np.nan)
    if len(x) == 0 or n_out == 0:
        return out[:, 0] if single else out
    if np.any(np.diff(x) <= 0):
        raise GnssrelInputError("clock sample times must be strictly increasing")
    if max_gap_s is None:
        max_gap_s = GAP_FACTOR * nominal_interval_s(x) if len(x) > 1 else 0.0

    left = np.searchsorted(x, xo, side="right") - 1
    inside = (left >= 0) & (xo <= x[-1])
    exact = inside & (x[np.clip(left, 0, None)] == xo)
    li = np.clip(left, 0, len(x) - 1)
    ri = np.clip(left + 1, 0, len(x) - 1)
    span = x[ri] - x[li]
    bracketed = inside & ~exact & (span > 0) & (span <= max_gap_s)
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where(bracketed, (xo - x[li]) / np.where(span > 0, span, 1.0), 0.0)
    # NaN at either end propagates: no interpolation next to a missing sample.
    linear = y2[li] + frac[:, None] * (y2[ri] - y2[li])
    out[bracketed] = linear[bracketed]
    out[exact] = y2[li[exact]]
    return out[:, 0] if single else out
