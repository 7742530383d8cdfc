"""Carrier-phase wind-up of a right-hand circularly polarised signal, for the simulator.

J. T. Wu, S. C. Wu, G. A. Hajj, W. I. Bertiger, S. M. Lichten, "Effects of antenna orientation on
GPS carrier phase", Manuscripta Geodaetica 18 (1993) 91-98 (formulas as restated in common
practice, from memory).  With k the unit vector from the satellite to the receiver, (x', y') the
satellite's body axes and (x, y) the receiver antenna's (x north, y west, z = x cross y up):

    D' = x' - k (k.x') - k cross y'        D = x - k (k.x) + k cross y
    dphi = sign(k . (D' cross D)) arccos(D'.D / (|D'| |D|))

unwrapped along each satellite's pass; the observed phase carries +dphi / (2 pi) cycles (the same
number on every frequency).  Both effective dipoles reduce to twice their x axis when the
satellite is at the receiver's zenith, which checks the signs of the k cross y terms.

Satellite attitude: nominal yaw steering, z to the Earth's centre, y = z cross (unit vector to the
Sun), x = y cross z (the IGS body-axis convention; noon/midnight turns are not modelled: near
them the nominal law turns the body fast, which a real satellite cannot).

The Sun: the low-precision formula of the Astronomical Almanac (mean longitude, mean anomaly,
two-term equation of centre, obliquity 23.439 deg; about 0.01 deg, from memory), turned into ECEF
with the Greenwich mean sidereal angle (linear form, GPST taken for UT1).  This is written
independently of the orbit stage's Sun (another series), so a test can compare the two.
"""

from __future__ import annotations

import numpy as np

J2000 = np.datetime64("2000-01-01T12:00:00", "ns")
AU_M = 149_597_870_700.0   # IAU 2012 Resolution B2


def sun_ecef_m(t_gpst) -> np.ndarray:
    """Sun position (..., 3), ECEF metres, at GPST times (datetime64 array)."""
    n = (np.asarray(t_gpst, dtype="datetime64[ns]") - J2000).astype("int64") / 86_400e9
    mean_longitude = np.radians(280.460 + 0.9856474 * n)
    g = np.radians(357.528 + 0.9856003 * n)
    lam = mean_longitude + np.radians(1.915 * np.sin(g) + 0.020 * np.sin(2 * g))
    eps = np.radians(23.439 - 4e-7 * n)
    r = AU_M * (1.00014 - 0.01671 * np.cos(g) - 0.00014 * np.cos(2 * g))
    eci = np.stack([r * np.cos(lam), r * np.cos(eps) * np.sin(lam), r * np.sin(eps) * np.sin(lam)], axis=-1)
    gmst = np.radians(np.mod(280.46061837 + 360.98564736629 * n, 360.0))
    c, s = np.cos(gmst), np.sin(gmst)
    return np.stack([c * eci[..., 0] + s * eci[..., 1], -s * eci[..., 0] + c * eci[..., 1], eci[..., 2]], axis=-1)


def _unit(v):
    return v / np.linalg.norm(v, axis=-1, keepdims=True)


def nominal_axes(sat_m: np.ndarray, sun_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Body x and y axes (..., 3) of nominal yaw steering for satellites at ``sat_m``."""
    z = -_unit(sat_m)
    y = _unit(np.cross(z, _unit(sun_m - sat_m)))
    return np.cross(y, z), y


def receiver_axes(lat_deg: float, lon_deg: float) -> tuple[np.ndarray, np.ndarray]:
    """Receiver antenna x (north) and y (west) unit vectors in ECEF (3,)."""
    lat, lon = np.radians(lat_deg), np.radians(lon_deg)
    north = np.array([-np.sin(lat) * np.cos(lon), -np.sin(lat) * np.sin(lon), np.cos(lat)])
    east = np.array([-np.sin(lon), np.cos(lon), 0.0])
    return north, -east


def windup_rad(receiver_m, lat_deg, lon_deg, sat_m, sun_m) -> np.ndarray:
    """Wrapped wind-up angle dphi (n_t, n_sat) in (-pi, pi], radians."""
    k = _unit(np.asarray(receiver_m) - sat_m)
    xs, ys = nominal_axes(sat_m, sun_m)
    xr, yr = receiver_axes(lat_deg, lon_deg)
    xr, yr = np.broadcast_to(xr, k.shape), np.broadcast_to(yr, k.shape)
    dot = lambda a, b: np.einsum("...i,...i->...", a, b)
    d_sat = xs - k * dot(k, xs)[..., None] - np.cross(k, ys)
    d_rcv = xr - k * dot(k, xr)[..., None] + np.cross(k, yr)
    cos = np.clip(dot(d_sat, d_rcv) / (np.linalg.norm(d_sat, axis=-1) * np.linalg.norm(d_rcv, axis=-1)), -1, 1)
    return np.where(dot(k, np.cross(d_sat, d_rcv)) < 0, -1.0, 1.0) * np.arccos(cos)


def windup_cycles(receiver_m, lat_deg, lon_deg, sat_m, sun_m, arcs: np.ndarray) -> np.ndarray:
    """Wind-up in cycles (n_t, n_sat), continuous along each arc, starting within half a cycle.

    ``arcs`` (n_t, n_sat) int: the arc number of each epoch (-1 where not observed).
    """
    raw = windup_rad(receiver_m, lat_deg, lon_deg, sat_m, sun_m)
    cycles = np.unwrap(raw, axis=0) / (2 * np.pi)
    out = np.full(cycles.shape, np.nan)
    for j in range(cycles.shape[1]):
        for arc in np.unique(arcs[:, j][arcs[:, j] >= 0]):
            rows = np.flatnonzero(arcs[:, j] == arc)
            out[rows, j] = cycles[rows, j] - np.round(cycles[rows[0], j])
    return out
