"""The receiver's clock as the fixes estimate it: bias and drift per epoch, millisecond jumps.

Low-cost receivers let their clock run: offsets of milliseconds and drifts of 1e-7 s/s are
normal, and many keep the offset within +-1 ms by stepping their clock (and with it every
pseudorange) by whole milliseconds.  The positions need nothing from this (the transmit time
comes from each pseudorange, :mod:`gnssrel.audit.positioning`); this module describes the clock.

* bias: the receiver clock of the fixes (``clock_m`` / c), seconds, on the receiver's time tags
  (GPST); positive when the receiver's clock is ahead.
* jump: a step between consecutive solved epochs of at least :data:`JUMP_MIN_S` (0.5 ms) whose
  size, after removing what the drift explains over the gap, lies within :data:`JUMP_TOLERANCE_S`
  of a whole number of milliseconds (common practice: the receiver reset its clock).  The
  step is reported in whole milliseconds; a large step that is not near whole milliseconds is
  reported as a jump too, with ``whole_ms`` False.
* drift: the bias difference over the time difference between consecutive solved epochs, jumps
  taken out, seconds per second; at the first epoch, the next difference.  Code noise of the
  fixes (a few metres) makes each single drift value noisy at the 1e-8 level for 1-s epochs.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from gnssrel.constants import C_M_S
from gnssrel.timescales import seconds_between

JUMP_MIN_S = 0.5e-3
"""Smallest step between consecutive epochs taken for a clock jump (half a millisecond)."""
JUMP_TOLERANCE_S = 20e-6
"""How near a whole number of milliseconds a step must be (drift removed) to be a millisecond reset:
20 us, far above the code noise (~30 ns) and a drift of 1e-6 over 10 s."""
MILLISECOND_S = 1e-3


def receiver_clock_series(positions: pd.DataFrame) -> pd.DataFrame:
    """Per epoch of ``positions`` (:func:`gnssrel.audit.positioning.single_point_positions`):
    ``time`` (GPST), ``clock_bias_s``, ``clock_drift_s_per_s``, ``clock_jump_s`` (the step before
    this epoch, 0 where none; NaN where the epoch has no fix) (module text)."""
    t = np.asarray(positions["time"].to_numpy(), dtype="datetime64[ns]")
    bias = positions["clock_m"].to_numpy(dtype=float) / C_M_S
    drift = np.full(bias.shape, np.nan)
    jump = np.where(np.isfinite(bias), 0.0, np.nan)
    ok = np.flatnonzero(np.isfinite(bias))
    if ok.size >= 2:
        dt = seconds_between(t[ok[1:]], t[ok[:-1]])
        step = np.diff(bias[ok])
        steps = _jumps(step, dt)
        rate = np.where(dt > 0, (step - steps) / np.where(dt > 0, dt, 1.0), np.nan)
        jump[ok[1:]] = steps
        drift[ok[1:]] = rate
        drift[ok[0]] = rate[0]
    return pd.DataFrame({"time": t, "clock_bias_s": bias, "clock_drift_s_per_s": drift, "clock_jump_s": jump})


def _jumps(step, dt) -> np.ndarray:
    """The part of each step that is a jump (0 where none): the step minus what the drift explains."""
    rate = np.where(dt > 0, step / np.where(dt > 0, dt, 1.0), np.nan)
    calm = np.abs(step) < JUMP_MIN_S
    typical = float(np.nanmedian(rate[calm])) if calm.any() else 0.0   # the drift, robustly
    excess = step - typical * dt
    return np.where(np.abs(excess) >= JUMP_MIN_S, excess, 0.0)


def clock_jumps(series: pd.DataFrame) -> list[dict]:
    """The jumps of :func:`receiver_clock_series`: ``time`` (first epoch after it), ``step_s``,
    ``step_ms`` (rounded) and ``whole_ms`` (within :data:`JUMP_TOLERANCE_S` of whole milliseconds)."""
    rows = series[series["clock_jump_s"].fillna(0.0) != 0.0]
    out = []
    for t, s in zip(rows["time"].to_numpy(), rows["clock_jump_s"].to_numpy()):
        ms = round(s / MILLISECOND_S)
        out.append({"time": t, "step_s": float(s), "step_ms": int(ms),
                    "whole_ms": bool(ms != 0 and abs(s - ms * MILLISECOND_S) <= JUMP_TOLERANCE_S)})
    return out


def clock_summary(series: pd.DataFrame) -> dict:
    """Bias range, median drift and the jumps, for the audit summary (seconds, s/s)."""
    bias = series["clock_bias_s"].to_numpy(dtype=float)
    drift = series["clock_drift_s_per_s"].to_numpy(dtype=float)
    if not np.isfinite(bias).any():
        return {"n_epochs": 0, "jumps": []}
    jumps = clock_jumps(series)
    return {"n_epochs": int(np.isfinite(bias).sum()),
            "bias_first_s": float(bias[np.isfinite(bias)][0]), "bias_last_s": float(bias[np.isfinite(bias)][-1]),
            "bias_min_s": float(np.nanmin(bias)), "bias_max_s": float(np.nanmax(bias)),
            "drift_median_s_per_s": float(np.nanmedian(drift)) if np.isfinite(drift).any() else None,
            "n_jumps": len(jumps), "n_millisecond_jumps": sum(j["whole_ms"] for j in jumps),
            "jumps": [{"time": str(j["time"]), "step_ms": j["step_ms"], "step_s": j["step_s"],
                       "whole_ms": j["whole_ms"]} for j in jumps]}
