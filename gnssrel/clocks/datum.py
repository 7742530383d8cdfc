"""The per-epoch datum between a clock product's time scale and the broadcast one.

A precise clock product and the broadcast clocks are realised on different time
scales (the product's reference clock versus GPST/GST/BDT/GLONASST), and each
satellite's two clocks may refer to different signals (a constant offset per
satellite: a few ns for GPS, tens of ns for BeiDou).  So the difference
``precise - broadcast`` is modelled as

    r[t, s] = d[t] + b[s] + noise

and the datum d[t] is removed.  A plain per-epoch median of r is biased by the
b[s] of whichever satellites are tracked, and jumps each time the tracked set
changes.  The method used here ("alternating median / mean") estimates both:

1. b = 0;
2. d[t] = median over the satellites of (r[t, s] - b[s]) (epochs with fewer than
   ``min_satellites`` get NaN);
3. b[s] = mean over the epochs of (r[t, s] - d[t]), shifted so that the median
   of b over the satellites is 0 (fixes the constant shared by d and b);
4. repeat 2-3 until b changes by less than ``tolerance_s`` (default 1 ps).

The median keeps an outlying satellite from pulling the datum; removing b first
keeps the tracked set from moving it.  A system with too few satellites of its
own (QZSS) takes the datum of the system whose time it shares (GPS):
:data:`DATUM_SHARED_WITH`.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np

DATUM_METHOD = ("alternating per-epoch median / per-satellite mean until the per-satellite offsets "
                "change by < 1 ps; median of the offsets fixed at 0; per system, QZSS on the GPS datum")
"""The datum method in words (goes into the summary)."""

DATUM_SHARED_WITH = {"J": "G"}
"""QZSST is kept aligned with GPST (IS-QZSS-PNT 3.1.1.4, from memory): QZSS uses the GPS datum."""


@dataclass(frozen=True)
class Datum:
    """Result of :func:`robust_epoch_datum`: ``datum_s`` (n_time,), ``offsets_s`` (n_sat,)."""

    datum_s: np.ndarray
    offsets_s: np.ndarray
    iterations: int
    converged: bool


def _nanmedian_rows(x: np.ndarray, min_count: int) -> np.ndarray:
    count = np.sum(np.isfinite(x), axis=1)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        med = np.nanmedian(x, axis=1) if x.shape[1] else np.full(x.shape[0], np.nan)
    return np.where(count >= min_count, med, np.nan)


def _nanmean_cols(x: np.ndarray) -> np.ndarray:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return np.nanmean(x, axis=0)


def plain_epoch_median(residual_s: np.ndarray, min_satellites: int = 2) -> np.ndarray:
    """The naive datum: per-epoch median across satellites (n_time,).  For comparison only."""
    return _nanmedian_rows(np.asarray(residual_s, dtype=np.float64), min_satellites)


def robust_epoch_datum(residual_s: np.ndarray, min_satellites: int = 2, tolerance_s: float = 1e-12,
                       max_iterations: int = 100) -> Datum:
    """Per-epoch datum of ``residual_s`` (n_time, n_sat), surviving per-satellite offsets.

    See the module docstring for the method.  NaN entries are gaps.
    """
    r = np.asarray(residual_s, dtype=np.float64)
    if r.ndim != 2:
        raise ValueError(f"residual must be (n_time, n_sat), got shape {r.shape}")
    b = np.zeros(r.shape[1])
    d = np.full(r.shape[0], np.nan)
    converged = False
    iteration = 0
    for iteration in range(1, max_iterations + 1):
        d = _nanmedian_rows(r - b[None, :], min_satellites)
        b_new = _nanmean_cols(r - d[:, None])
        if np.any(np.isfinite(b_new)):
            b_new = b_new - np.nanmedian(b_new)
        change = np.nanmax(np.abs(b_new - b)) if np.any(np.isfinite(b_new)) else 0.0
        b = np.where(np.isfinite(b_new), b_new, 0.0)
        if change < tolerance_s:
            converged = True
            break
    offsets = _nanmean_cols(r - d[:, None])
    if np.any(np.isfinite(offsets)):
        offsets = offsets - np.nanmedian(offsets)
    return Datum(datum_s=d, offsets_s=offsets, iterations=iteration, converged=converged)


def datum_by_system(residual_s: np.ndarray, systems, min_satellites: int = 2,
                    method: str = "robust") -> tuple[np.ndarray, dict]:
    """Datum for every column of ``residual_s`` (n_time, n_sat), computed per system.

    ``systems``: the system letter of each column.  Returns the datum broadcast to
    (n_time, n_sat) and per-system info {letter: {"datum_from", "iterations", "converged"}}.
    ``method``: "robust" (:func:`robust_epoch_datum`) or "epoch-median" (plain median).
    """
    r = np.asarray(residual_s, dtype=np.float64)
    systems = np.asarray(list(systems))
    out = np.full(r.shape, np.nan)
    info: dict = {}
    own = {s for s in systems if s not in DATUM_SHARED_WITH or DATUM_SHARED_WITH[s] not in systems}
    per_system = {}
    for letter in sorted(own):
        cols = systems == letter
        if method == "robust":
            result = robust_epoch_datum(r[:, cols], min_satellites=min_satellites)
            per_system[letter] = result.datum_s
            info[letter] = {"datum_from": letter, "iterations": result.iterations,
                            "converged": result.converged}
        elif method == "epoch-median":
            per_system[letter] = plain_epoch_median(r[:, cols], min_satellites)
            info[letter] = {"datum_from": letter, "iterations": 1, "converged": True}
        else:
            raise ValueError(f"unknown datum method {method!r}; use 'robust' or 'epoch-median'")
    for letter in set(systems):
        source = letter if letter in per_system else DATUM_SHARED_WITH[letter]
        out[:, systems == letter] = per_system[source][:, None]
        if letter not in info:
            info[letter] = {"datum_from": source, "iterations": 0, "converged": True}
    return out, info
