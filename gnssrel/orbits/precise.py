"""Satellite state histories from precise (SP3) orbits and clocks.

Positions: Lagrange polynomial interpolation through ``order`` consecutive SP3
samples on a window centred on the wanted time (10 points = degree 9 by
default).  A 9-11 point polynomial through 15-min samples gives cm-level
positions (common practice; Navipedia "Precise GNSS Satellite Coordinates
Computation", ../shared/REFERENCE-CHECKS.md 4.1; the leave-one-out figures
measured on GRG final orbits are in tests/test_precise_interpolation.py:
GPS median 0.23 cm, 99 % below 0.8 cm with 10 points).  Exceptions: the
eccentric Galileo E14/E18 (e ~ 0.16) leave 0.6 m near perigee at 15 min, and
the last sample interval of a product (window off-centre, no later day given)
is good to ~2 cm for GPS.
Velocities: the analytic derivative of the same interpolant.

Frame: SP3 positions are ECEF, and interpolating them in ECEF is the usual
practice for 15-min products.  In ECEF the path carries the Earth's rotation
(a daily term) on top of the orbit, so interpolating in an inertial frame is
slightly better; ``frame="inertial"`` rotates each window's samples into the
ECEF frame frozen at the wanted time (a rotation about z by
omega_E * (t_k - t), IERS 2010 Table 1.1 rate; precession, nutation and polar
motion over a few hours are negligible here), interpolates there, and turns
the derivative back into an ECEF velocity (v_ecef = v_inertial - omega x r).

Clocks: linear interpolation between the two neighbouring samples, none
across a gap (:func:`gnssrel.orbits.interpolation.interpolate_clock`).

Status codes (:mod:`gnssrel.orbits.status`, one table with the broadcast codes): 0 ok;
6 outside the precise data (before the first or after the last sample, or a satellite
the product lacks); 7 gap in the precise data (a sample of the window is missing, or
the window spans missing epochs).
The clock has no status of its own: ``clock_s`` is NaN where it is missing.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from gnssrel.constants import OMEGA_EARTH_IERS_RAD_S
from gnssrel.errors import GnssrelInputError
from gnssrel.orbits.frames import ecef_velocity, rotate_z
from gnssrel.orbits.interpolation import GAP_FACTOR, interpolate_clock, nominal_interval_s
from gnssrel.orbits.status import PRECISE_CODES, STATUS_GAP, STATUS_OK, STATUS_OUTSIDE, codes_of
from gnssrel.timescales import as_datetime64, seconds_between

__all__ = ["STATUS_CODES", "STATUS_GAP", "STATUS_OK", "STATUS_OUTSIDE", "lagrange_weights", "precise_states"]

STATUS_CODES = codes_of(PRECISE_CODES)
"""The codes precise states give: rows of the one table :data:`gnssrel.orbits.status.STATUS_CODES`."""

_CHUNK_ELEMENTS = 4_000_000  # gathered window values per block (bounds memory)


def lagrange_weights(nodes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Lagrange basis values and first derivatives at 0 for node sets (n_target, n).

    ``nodes`` are the sample abscissae relative to the wanted point (scaled to
    about unit spacing for conditioning).  Returns (L, dL), each (n_target, n):
    the interpolant at 0 is ``sum_j L_j y_j`` and its derivative ``sum_j dL_j y_j``.
    L_j(0) = prod_{m != j} (0 - x_m) / (x_j - x_m);
    L_j'(0) = sum_{k != j} 1/(x_j - x_k) prod_{m != j,k} (0 - x_m) / (x_j - x_m).
    """
    x = np.asarray(nodes, dtype=np.float64)
    n = x.shape[-1]
    eye = np.eye(n, dtype=bool)
    diff = x[..., :, None] - x[..., None, :]            # x_j - x_m  (t, j, m)
    diff = np.where(eye, 1.0, diff)
    ratio = np.where(eye, 1.0, -x[..., None, :] / diff)  # (0 - x_m) / (x_j - x_m)
    weights = ratio.prod(axis=-1)
    # product over m != j, k: replace factor k by 1  -> (t, j, k)
    leave = np.where(eye[None, None, :, :] if x.ndim > 1 else eye[None, :, :],
                     1.0, ratio[..., :, None, :])        # (t, j, k, m)
    partial = leave.prod(axis=-1)
    deriv = np.where(eye, 0.0, partial / diff).sum(axis=-1)
    return weights, deriv


def _windows(sample_s: np.ndarray, target_s: np.ndarray, n: int) -> np.ndarray:
    """First sample index of the ``n``-point window centred on each target."""
    n_samples = len(sample_s)
    left = np.searchsorted(sample_s, target_s, side="right") - 1
    if n % 2 == 0:
        start = left - (n // 2 - 1)
    else:  # odd: centre on the nearest sample
        nearest = left + ((target_s - sample_s[np.clip(left, 0, n_samples - 1)])
                          > 0.5 * (sample_s[np.clip(left + 1, 0, n_samples - 1)]
                                   - sample_s[np.clip(left, 0, n_samples - 1)]))
        start = nearest - n // 2
    return np.clip(start, 0, n_samples - n)


def precise_states(sp3: xr.Dataset, times, svs=None, order: int = 10,
                   frame: str = "ecef") -> xr.Dataset:
    """Interpolate SP3 orbits and clocks to ``times`` (GPST).

    Parameters
    ----------
    sp3 : Dataset from :func:`gnssrel.io.sp3.read_sp3` (one or several files merged).
    times : (n_time,) datetime64 on GPST.
    svs : satellites wanted (RINEX names), default all of the product.
    order : number of samples in the Lagrange window (9-11 usual; 10 = degree 9).
    frame : "ecef" (interpolate the ECEF samples as they are) or "inertial"
        (interpolate in the ECEF frame frozen at each wanted time, see module doc).

    Returns
    -------
    State-history Dataset (DEVELOPERS.md contract), dims (time, sv, axis):
    ``position_ecef_m``, ``velocity_ecef_m_per_s``, ``clock_s``, ``status`` (int8,
    attrs["status_codes"]).  attrs: time_scale, frame, source, interpolation.
    """
    if frame not in ("ecef", "inertial"):
        raise GnssrelInputError(f"frame must be 'ecef' or 'inertial', not {frame!r}")
    n = int(order)
    if not 2 <= n <= 16:
        raise GnssrelInputError(f"Lagrange window of {order} samples: choose 2..16 (9-11 usual)")
    times = as_datetime64(times).reshape(-1)
    product_svs = [str(s) for s in sp3["sv"].values]
    svs = product_svs if svs is None else [str(s) for s in svs]
    known = np.isin(svs, product_svs)
    sample_times = sp3["time"].values
    n_samples = len(sample_times)
    if n_samples < n:
        raise GnssrelInputError(f"the precise product has {n_samples} epochs, fewer than the "
                                f"{n} the interpolation window needs (truncated?)",
                                ", ".join(str(p) for p in sp3.attrs.get("paths", [])) or None)

    origin = sample_times[0]
    sample_s = seconds_between(sample_times, origin)
    target_s = seconds_between(times, origin)
    step_s = float(sp3.attrs.get("epoch_interval_s") or nominal_interval_s(sample_s))
    present = [s for s in svs if s in product_svs]
    pos_in = sp3["position_ecef_m"].sel(sv=present).values  # (N, n_sv_present, 3)
    clk_in = sp3["clock_s"].sel(sv=present).values

    n_t, n_sv = len(times), len(svs)
    inside = (target_s >= sample_s[0]) & (target_s <= sample_s[-1])
    start = _windows(sample_s, target_s, n)
    window = start[:, None] + np.arange(n)                      # (n_t, n)
    spans_gap = np.diff(sample_s[window], axis=1).max(axis=1) > GAP_FACTOR * step_s

    position = np.full((n_t, len(present), 3), np.nan)
    velocity = np.full((n_t, len(present), 3), np.nan)
    per_target = n * max(len(present), 1) * 3 * (2 if frame == "inertial" else 1)
    chunk = max(1, _CHUNK_ELEMENTS // per_target)
    for a in range(0, n_t, chunk):  # blocks of targets, vectorized inside (bounded memory)
        b = min(a + chunk, n_t)
        w = window[a:b]
        dt = sample_s[w] - target_s[a:b, None]                 # (m, n) seconds
        weights, deriv = lagrange_weights(dt / step_s)
        deriv = deriv / step_s
        samples = pos_in[w]                                     # (m, n, n_sv, 3)
        if frame == "inertial":
            samples = rotate_z(samples, (OMEGA_EARTH_IERS_RAD_S * dt)[:, :, None])
        position[a:b] = np.einsum("tj,tjsa->tsa", weights, samples)
        velocity[a:b] = np.einsum("tj,tjsa->tsa", deriv, samples)
    if frame == "inertial":  # inertial velocity in the frozen axes -> ECEF: v - omega x r
        velocity = ecef_velocity(position, velocity, OMEGA_EARTH_IERS_RAD_S)
    clock = interpolate_clock(sample_s, clk_in, target_s, max_gap_s=GAP_FACTOR * step_s)

    status_p = np.where(np.isnan(position).any(axis=2) | spans_gap[:, None], STATUS_GAP, STATUS_OK)
    status_p = np.where(inside[:, None], status_p, STATUS_OUTSIDE)
    bad = status_p != STATUS_OK
    position[bad] = np.nan
    velocity[bad] = np.nan
    clock = np.where(inside[:, None], clock, np.nan)

    full_pos = np.full((n_t, n_sv, 3), np.nan)
    full_vel = np.full((n_t, n_sv, 3), np.nan)
    full_clk = np.full((n_t, n_sv), np.nan)
    status = np.full((n_t, n_sv), STATUS_OUTSIDE, dtype=np.int8)
    cols = np.flatnonzero(known)
    full_pos[:, cols], full_vel[:, cols], full_clk[:, cols] = position, velocity, clock
    status[:, cols] = status_p

    paths = sp3.attrs.get("paths", [])
    return xr.Dataset(
        {"position_ecef_m": (("time", "sv", "axis"), full_pos),
         "velocity_ecef_m_per_s": (("time", "sv", "axis"), full_vel),
         "clock_s": (("time", "sv"), full_clk),
         "status": (("time", "sv"), status, {"status_codes": dict(STATUS_CODES)})},
        coords={"time": times, "sv": svs, "axis": ["x", "y", "z"]},
        attrs={"time_scale": "GPST",
               "frame": f"ECEF ({sp3.attrs.get('coordinate_system', 'unknown')})",
               "source": "SP3 " + ", ".join(str(p) for p in paths),
               "interpolation": f"Lagrange {n} points in {frame} frame; clocks linear"})
