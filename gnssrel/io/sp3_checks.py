"""Plausibility of SP3 positions along each satellite's orbit (a garbled digit inside the range),
and a description of an SP3 Dataset's epochs and gaps for messages (:func:`describe_epochs`).

The range check of :mod:`gnssrel.io.sp3` refuses a position no GNSS orbit reaches; a digit
garbled into another position still inside that range (``-3170.19`` -> ``-9170.19`` km) moves
the satellite by thousands of km and passes it.  Such a record breaks the orbit's smoothness:
in an inertial frame (the ECEF positions turned by the Earth's rotation angle) the second
difference of three positions ``h`` apart is the gravitational acceleration times ``h^2``,

    p(t - h) - 2 p(t) + p(t + h) = -GM p(t) / |p(t)|^3 h^2 + O(h^4)

(Taylor expansion; the O(h^4) rest is the jerk term, 1 km for GPS at 15 min, since
(n h)^2 / 12 ~ 0.14 % of the 456 km of ``GM h^2 / r^2``).  A wrong position at t adds -2e
to its own second difference and +e to each neighbour's, so the record refused is the one
whose misfit exceeds the tolerance with the larger neighbour misfit between a quarter and
two thirds of it.  The first and last epoch of a satellite's run have no second difference
of their own and are not judged (nor is a position next to another wrong one, nor a
satellite whose positions mostly miss the model: the bulk of the series decides).
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from gnssrel.constants import GM_EARTH_IERS_M3_S2, OMEGA_EARTH_IERS_RAD_S

TOLERANCE_SHARE = 0.05
"""Tolerance: this share of |GM h^2 / r^2| (the jerk rest is ~0.14 % for GPS at 15 min, ~3 %
for a LEO at 5 min) ..."""
TOLERANCE_M = 1000.0
"""... plus 1 km (SP3 positions are given to 1 mm; orbit-model and manoeuvre effects over one
step stay far below)."""


def off_orbit(position_m: np.ndarray, times: np.ndarray) -> np.ndarray:
    """Positions (time, sv, 3), ECEF m, NaN where absent, at ``times`` (datetime64, sorted) that
    break their satellite's orbit: bool (time, sv).  Only triples of equally spaced epochs count."""
    n_t = len(times)
    bad = np.zeros(position_m.shape[:2], bool)
    if n_t < 3:
        return bad
    t = (times - times[0]).astype("timedelta64[ns]").astype(np.int64) / 1e9
    step = np.diff(t)
    even = np.isclose(step[:-1], step[1:], rtol=0, atol=1e-3)          # (n_t - 2,)
    h = step[1:][:, None]
    theta = OMEGA_EARTH_IERS_RAD_S * t[:, None]                          # ECEF -> inertial
    x, y, z = position_m[..., 0], position_m[..., 1], position_m[..., 2]
    p = np.stack([x * np.cos(theta) - y * np.sin(theta), x * np.sin(theta) + y * np.cos(theta), z], axis=-1)
    mid = p[1:-1]
    r2 = np.einsum("...i,...i->...", mid, mid)
    with np.errstate(invalid="ignore", divide="ignore"):
        gravity = -GM_EARTH_IERS_M3_S2 * mid / (r2 ** 1.5)[..., None] * (h ** 2)[..., None]
        misfit = np.linalg.norm(p[:-2] - 2.0 * mid + p[2:] - gravity, axis=-1)   # (n_t - 2, sv)
        tolerance = TOLERANCE_SHARE * GM_EARTH_IERS_M3_S2 * h ** 2 / r2 + TOLERANCE_M
    judged = even[:, None] & np.isfinite(misfit)
    # The bulk decides: a satellite whose positions mostly miss the model (not an Earth orbit
    # sampled this way, e.g. invented test positions) is not judged.
    ratio = np.where(judged, misfit / tolerance, np.nan)
    has = judged.any(axis=0)
    bulk = np.full(misfit.shape[1], np.inf)
    if has.any():
        bulk[has] = np.nanmedian(ratio[:, has], axis=0)
    misfit = np.where(judged & (bulk < 1.0)[None, :], misfit, 0.0)
    padded = np.pad(misfit, ((1, 1), (0, 0)))
    neighbour = np.maximum(padded[:-2], padded[2:])
    # the pattern (e, -2e, e) of one wrong position: the larger neighbour misfit is about half
    bad[1:-1] = (misfit > tolerance) & (misfit >= 1.5 * neighbour) & (neighbour >= 0.25 * misfit)
    return bad


def describe_epochs(ds: xr.Dataset, within=None, reach: int = 6) -> str:
    """The epochs of an SP3 Dataset for a message: "its N epochs span A to B GPST, none between C and D".

    A gap is a step longer than 1.5 times the median step (a dropped epoch line, a truncated
    file); ``within`` = (start, end) keeps only the gaps within ``reach`` steps of that span (an
    interpolation window of 10 epochs reaches 5 each side); three are named.
    """
    t = np.asarray(ds["time"].values).astype("datetime64[ns]")
    if t.size == 0:
        return "it has no usable epoch"
    text = f"its {t.size} epochs span {_span(t[0], t[-1], 'to')}"
    if t.size < 2:
        return text
    step = np.diff(t)
    gap = np.flatnonzero(step > 1.5 * np.median(step))
    margin = reach * np.median(step)
    if within is not None:
        start, end = (np.datetime64(x, "ns") for x in within)
        gap = gap[(t[gap + 1] >= start - margin) & (t[gap] <= end + margin)]
    if gap.size:
        text += ", none between " + ", ".join(_span(t[i], t[i + 1], "and") for i in gap[:3])
        text += f" and {gap.size - 3} more gaps" if gap.size > 3 else ""
    near = np.ones(t.size, bool) if within is None else (t >= start - margin) & (t <= end + margin)
    hole = np.isnan(ds["position_ecef_m"].values[near]).any(axis=-1)       # (time, sv)
    partial = hole.any(axis=0) & ~hole.all(axis=0)
    if partial.any():
        text += ", without the position of " + ", ".join(
            f"{sv} at {int(n)} of {hole.shape[0]} epochs" for sv, n in
            zip(ds["sv"].values[partial][:3], hole.sum(axis=0)[partial][:3]))
    return text


def _span(a, b, word) -> str:
    a, b = (str(x.astype("datetime64[s]")).replace("T", " ") for x in (a, b))
    return f"{a} {word} {b[11:] if a[:10] == b[:10] else b} GPST"
