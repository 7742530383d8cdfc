"""The epochs an analysis computes on: a regular GPST grid, its size limit, and decimation to a step."""

from __future__ import annotations

import numpy as np

from gnssrel.errors import GnssrelInputError
from gnssrel.orbits.broadcast import time_grid
from gnssrel.pipeline.accounting import decimate_observations
from gnssrel.text import fmt_span

__all__ = ["MAX_GRID_EPOCHS", "MIN_EPOCHS", "check_grid_size", "decimate_to_step", "epoch_grid"]

MAX_GRID_EPOCHS = 11_520
"""Largest epoch grid gnssrel builds at once (4 days at 30 s); beyond it the user is asked for --step."""
MIN_EPOCHS = 3
"""The proper-time integral along the orbit (gnssrel.relativity.proper_time) needs at least 3 epochs."""


def check_grid_size(start, end, step_s: float, what: str = "the window") -> None:
    """Refuse a grid of more than MAX_GRID_EPOCHS epochs, with the way out in the message."""
    span_s = (np.datetime64(end, "ns") - np.datetime64(start, "ns")) / np.timedelta64(1, "s")
    n = int(span_s // step_s) + 1 if span_s >= 0 else 0
    if n > MAX_GRID_EPOCHS:
        raise GnssrelInputError(
            f"{what} ({fmt_span(start, end)}) at {step_s:g} s would be {n} epochs, more than the "
            f"{MAX_GRID_EPOCHS} gnssrel computes at once: give a larger --step (e.g. "
            f"{np.ceil(span_s / MAX_GRID_EPOCHS / 30) * 30:g}) or a shorter --start/--end")


def epoch_grid(start, end, step_s: float, window: str | None = None) -> np.ndarray:
    """GPST epochs from ``start`` to ``end`` (datetime64[ns], inclusive) every ``step_s`` seconds,
    for the relativity terms: shape (n,), at most MAX_GRID_EPOCHS and at least MIN_EPOCHS.

    ``window`` words the window in the message when there are too few epochs (default
    "in the window <span>").
    """
    check_grid_size(start, end, step_s)
    times = time_grid(start, end, step_s)
    if times.size < MIN_EPOCHS:
        window = window or f"in the window {fmt_span(start, end)}"
        raise GnssrelInputError(f"only {times.size} epoch{'s' if times.size != 1 else ''} every {step_s:g} s "
                                f"{window}: the proper-time integral needs at least {MIN_EPOCHS} "
                                "(give a wider --start/--end or a smaller --step)")
    return times


def decimate_to_step(obs_ds, step_s: float | None):
    """An observation Dataset at the epochs on multiples of ``step_s`` seconds (None or 0 keeps all);
    the epochs and pseudoranges left out are counted as not on the --step grid."""
    if not step_s:
        return obs_ds
    t = obs_ds["time"].values.astype("datetime64[ns]").astype("int64")
    keep = np.mod(t, round(step_s * 1e9)) == 0
    if not keep.any():
        raise GnssrelInputError(f"--step {step_s:g}: no observation epoch falls on a multiple of it")
    return decimate_observations(obs_ds, keep)
