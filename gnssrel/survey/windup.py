"""Carrier-phase wind-up of circularly polarised signals (Wu et al. 1993, Manuscripta Geodaetica 18: 91-98).

With k the unit vector from the satellite to the receiver, (x', y') the satellite's body axes and
(x, y) the receiver antenna's (x north, y west, so that x, y, up is right-handed), the effective
dipoles are

    D' = x' - k (k . x') - k x y'        (satellite)
    D  = x  - k (k . x)  + k x y         (receiver)

and the wind-up, in cycles, is  phi = sign(k . (D' x D)) arccos(D' . D / (|D'| |D|)) / (2 pi)
plus whole turns, chosen so that phi is continuous along time (common practice).  The satellite
axes are the nominal yaw-steering ones of :func:`gnssrel.orbits.antenna.body_axes` (Sun from
:func:`gnssrel.orbits.antenna.sun_position_ecef_m`); eclipse and noon turns are not modelled.
Being the same in cycles on every frequency, it enters the ionosphere-free phase in metres as
phi c / (f1 + f2) (10.7 cm per cycle for GPS L1/L2).
"""

from __future__ import annotations

import numpy as np

from gnssrel import geodesy
from gnssrel.orbits.antenna import body_axes, sun_position_ecef_m


def windup_cycles(times, satellite_ecef_m, receiver_ecef_m) -> np.ndarray:
    """Wind-up in cycles in [-0.5, 0.5) (no whole turns) for ``(..., 3)`` satellite positions at
    ``times`` (same leading shape, datetime64 GPST) seen from ``receiver_ecef_m`` ``(3,)``."""
    sat = np.asarray(satellite_ecef_m, float)
    rx = np.asarray(receiver_ecef_m, float)
    axes = body_axes(sat, sun_position_ecef_m(times))
    xs, ys = axes[..., 0, :], axes[..., 1, :]
    lat, lon, _ = geodesy.ecef_to_geodetic(rx)
    enu = geodesy.enu_rotation(lat, lon)                  # rows east, north, up
    k = rx - sat
    k = k / np.linalg.norm(k, axis=-1, keepdims=True)
    return windup_from_axes(k, xs, ys, np.broadcast_to(enu[1], k.shape), np.broadcast_to(-enu[0], k.shape))


def windup_from_axes(k, x_sat, y_sat, x_rx, y_rx) -> np.ndarray:
    """Wu et al. (1993) wind-up in cycles in [-0.5, 0.5] from the unit vector ``k`` (satellite to
    receiver) and the antennas' x, y axes (all ``(..., 3)``, one frame)."""

    def dot(a, b):
        return np.sum(a * b, axis=-1, keepdims=True)

    d_sat = x_sat - k * dot(k, x_sat) - np.cross(k, y_sat)
    d_rx = x_rx - k * dot(k, x_rx) + np.cross(k, y_rx)
    cos = np.clip(dot(d_sat, d_rx)[..., 0] / (np.linalg.norm(d_sat, axis=-1) * np.linalg.norm(d_rx, axis=-1)),
                  -1.0, 1.0)
    sign = np.sign(dot(k, np.cross(d_sat, d_rx))[..., 0])
    return np.where(sign < 0, -1.0, 1.0) * np.arccos(cos) / (2.0 * np.pi)


def continuous(cycles_t_sv: np.ndarray) -> np.ndarray:
    """Whole turns added along time (axis 0) per satellite so that no step exceeds half a cycle;
    NaN (no observation) is bridged."""
    x = np.asarray(cycles_t_sv, float)
    out = np.full(x.shape, np.nan)
    for j in range(x.shape[1]):                           # a loop over satellites, vectorized over time
        ok = np.isfinite(x[:, j])
        if ok.any():
            out[ok, j] = np.unwrap(x[ok, j] * 2.0 * np.pi) / (2.0 * np.pi)
    return out
