"""Carrier-smoothed code: the Hatch filter on (time, sv) arrays of one system.

The filter averages code-minus-phase, D = P - Phi (metres), over a window and adds the phase
back (Hatch 1982; common practice):

    S(k) = S(k-1) + (D(k) - S(k-1)) / n,   n = min(number of epochs in the arc, N),
    P_smoothed(k) = S(k) + Phi(k),          N = window / interval.

For the first N epochs of an arc this is the plain mean of D; later an exponential average of
time constant ~ window.  Phi carries the ionosphere with the sign opposite to the code's, so on
one frequency D drifts by 2 dI/dt and the smoothed code lags it by about 2 tau dI/dt
(code-carrier divergence).  Hence:

* Two frequencies: the phase is the same ionosphere-free combination as the code (same
  coefficients), so D holds no ionosphere at all: divergence-free, any window.
* One frequency: plain Hatch, with the window capped at :data:`SINGLE_FREQUENCY_MAX_WINDOW_S`
  (100 s): the divergence bias 2 tau dI/dt stays below 0.5 m for slant delay rates up to
  2.5 mm/s (quiet mid-latitude ionosphere; stated limit, common practice for 100-s smoothing).

An arc restarts (n = 1, the raw code) on:

* no phase or no code at the epoch;
* a loss-of-lock indicator with bit 0 set (RINEX 3.05 5.3.1: "lost lock between previous and
  current observation: cycle slip possible");
* a gap: more than :data:`GAP_FACTOR` times the log's interval since the previous epoch;
* a cycle slip found by the phase-minus-code jump test: |D(k) - S(k-1)| above
  ``slip_threshold_m`` (default :data:`SLIP_THRESHOLD_M` = 10 m).  The test cannot see slips
  smaller than the code noise (one L1 cycle is 0.19 m): those are what the LLI is for, and one
  that goes unflagged biases the smoothed code by at most its size, fading over the window.

The filter is recursive: one loop over epochs, each step vectorized over satellites
(NYA1 2024-124, 2880 epochs x 71 satellites, every system: see ``smooth_code``'s caller and
the report of issue 13 for the time).
"""

from __future__ import annotations

import numpy as np

from gnssrel import signals
from gnssrel.constants import C_M_S
from gnssrel.io.rinex_obs_fields import lost_lock
from gnssrel.timescales import seconds_between

SLIP_THRESHOLD_M = 10.0
SINGLE_FREQUENCY_MAX_WINDOW_S = 100.0
GAP_FACTOR = 1.5
RESET_REASONS = ("no phase", "loss of lock indicator", "gap", "cycle slip (phase-minus-code jump)")


def hatch_filter(code_m, phase_m, times, window_s: float, lli=None, slip_threshold_m: float = SLIP_THRESHOLD_M,
                 interval_s: float | None = None) -> tuple[np.ndarray, dict]:
    """Smoothed code ``(n_t, n_sv)`` metres and counts {"smoothed", "resets" {reason: n}}.

    ``code_m``, ``phase_m``: ``(n_t, n_sv)`` metres (NaN = missing), phase in the code's
    combination; ``times``: ``(n_t,)`` datetime64 GPST; ``lli``: ``(n_t, n_sv)`` loss-of-lock
    indicators (NaN = blank) or None; ``interval_s``: the log's interval (default the median
    spacing of ``times``).  Where the phase is missing the raw code is returned.
    """
    code = np.asarray(code_m, float)
    phase = np.asarray(phase_m, float)
    n_t, n_sv = code.shape
    d = code - phase
    t = np.asarray(times, "datetime64[ns]")
    dt = np.diff(seconds_between(t, t[0])) if n_t > 1 else np.zeros(0)
    if interval_s is None:
        interval_s = float(np.median(dt)) if dt.size else 1.0
    gap = np.concatenate([[False], dt > GAP_FACTOR * max(interval_s, 1e-3)])
    lost = np.zeros((n_t, n_sv), bool) if lli is None else lost_lock(lli)
    n_max = max(float(window_s) / max(interval_s, 1e-3), 1.0)
    out = code.copy()
    state = np.full(n_sv, np.nan)
    count = np.zeros(n_sv)
    resets = dict.fromkeys(RESET_REASONS, 0)
    smoothed = 0
    for k in range(n_t):                       # the recursion: one step per epoch, all satellites at once
        dk = d[k]
        ok = np.isfinite(dk)
        running = count > 0
        with np.errstate(invalid="ignore"):
            slip = ok & running & (np.abs(dk - state) > slip_threshold_m)
        restart = running & (~ok | gap[k] | lost[k] | slip)
        if restart.any():
            resets["no phase"] += int((restart & ~ok & np.isfinite(code[k])).sum())   # not the arc's end
            resets["gap"] += int((restart & ok & gap[k]).sum())
            resets["loss of lock indicator"] += int((restart & ok & ~gap[k] & lost[k]).sum())
            resets["cycle slip (phase-minus-code jump)"] += int((restart & ok & ~gap[k] & ~lost[k] & slip).sum())
        count = np.where(ok, np.where(restart, 1.0, count + 1.0), 0.0)
        n = np.minimum(count, n_max)
        state = np.where(ok, np.where(count == 1.0, dk, state + (dk - state) / np.maximum(n, 1.0)), np.nan)
        out[k] = np.where(ok, state + phase[k], code[k])
        smoothed += int((ok & (count > 1)).sum())
    return out, {"smoothed": smoothed, "resets": resets}


def phase_variable(code: str) -> str:
    """The carrier-phase variable of a code variable: ``C1C`` -> ``L1C``, RINEX 2 ``C1``/``P1`` -> ``L1``."""
    return "L" + code[1:2] + code[2:3] if len(code) >= 3 else "L" + code[1:2]


def phase_metres(obs_ds, system: str, code: str, cols) -> np.ndarray | None:
    """The phase of ``code``'s signal in metres ``(n_t, len(cols))``, or None when the log has none.
    GLONASS FDMA: each satellite's carrier from the header's channels (``glonass_slots``)."""
    name = phase_variable(code)
    if name not in obs_ds.data_vars:
        return None
    cycles = np.asarray(obs_ds[name].values, float)[:, cols]
    if not np.isfinite(cycles).any():
        return None
    if system == "R":
        slots = obs_ds.attrs.get("glonass_slots") or {}
        sv = np.asarray(obs_ds["sv"].values).astype(str)[cols]
        channel = np.array([slots.get(s, np.nan) for s in sv], float)
        freq = signals.glonass_frequency_hz(code[1], channel)
    else:
        freq = signals.frequency_hz(system, code)
    return cycles * (C_M_S / freq)


def loss_of_lock(obs_ds, code: str, cols) -> np.ndarray | None:
    """The loss-of-lock indicators of ``code``'s phase ``(n_t, len(cols))`` (read with
    ``read_observations(..., with_flags=True)``), or None when the Dataset has none."""
    name = phase_variable(code) + "lli"
    if name not in obs_ds.data_vars:
        return None
    return np.asarray(obs_ds[name].values, float)[:, cols]


def smooth_code(obs_ds, system: str, codes, cols, code_m, window_s: float,
                slip_threshold_m: float = SLIP_THRESHOLD_M) -> tuple[np.ndarray, dict]:
    """Carrier-smoothed ``code_m`` ``(n_t, len(cols))`` of ``system`` for the chosen ``codes``
    (one code, or the ionosphere-free pair whose phases are combined the same way).

    Returns (smoothed code, info): info has ``window_s`` (after the single-frequency cap),
    ``form`` ("ionosphere-free" or "single-frequency"), ``smoothed`` (observations smoothed over
    more than one epoch), ``resets`` {reason: n}, and ``why_not`` (a reason, when no phase).
    """
    phases = [phase_metres(obs_ds, system, c, cols) for c in codes]
    if any(p is None for p in phases):
        return code_m, {"window_s": 0.0, "form": None, "smoothed": 0, "resets": {},
                        "why_not": "no carrier phase in the log"}
    lli = None
    flags = [loss_of_lock(obs_ds, c, cols) for c in codes]
    if any(f is not None for f in flags):
        lli = np.zeros(code_m.shape)
        for f in flags:
            if f is not None:
                lli = np.where(lost_lock(f), 1.0, lli)
    if len(codes) == 2:
        f1, f2 = (signals.frequency_hz(system, c) for c in codes)   # FDMA: f1/f2 = 9/7 on every channel
        g1, g2 = f1**2, f2**2
        phase = (g1 * phases[0] - g2 * phases[1]) / (g1 - g2)
        form, window = "ionosphere-free", float(window_s)
    else:
        phase = phases[0]
        form, window = "single-frequency", min(float(window_s), SINGLE_FREQUENCY_MAX_WINDOW_S)
    # the interval: the median spacing of the epochs kept (a --step grid may differ from the header's)
    smoothed, info = hatch_filter(code_m, phase, obs_ds["time"].values, window, lli=lli,
                                  slip_threshold_m=slip_threshold_m)
    info.update(window_s=window, form=form, why_not=None)
    return smoothed, info
