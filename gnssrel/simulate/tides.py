"""Solid-Earth tide displacement of the survey station, the simulator's own copy.

IERS Conventions 2010, ch. 7.1.1, step 1, eq. (7.5), degree 2, nominal Love and Shida numbers
h2 = 0.6078, l2 = 0.0847 (the latitude dependence and the step-2 frequency corrections, a few mm,
are left out, as estimators commonly do at this level):

    dr = sum_j (GM_j / GM_E) (R_E^4 / R_j^3) { h2 r^ (3/2 (R^_j . r^)^2 - 1/2)
                                               + 3 l2 (R^_j . r^) [R^_j - (R^_j . r^) r^] }

The permanent part is kept, so the marker coordinates of the truth are "conventional tide free"
(as the ITRF).  The Moon: the low-precision series of the Astronomical Almanac (ecliptic longitude,
latitude and horizontal parallax, ~0.3 deg; from memory), the Sun: :func:`windup.sun_ecef_m`; a
0.3 deg error of the Moon moves the displacement by ~3 mm at most.  Written separately from any
estimator's tide model on purpose.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import GM_EARTH_IERS_M3_S2, GM_MOON_M3_S2, GM_SUN_M3_S2
from gnssrel.simulate.windup import J2000, sun_ecef_m

H2, L2 = 0.6078, 0.0847
R_EARTH_M = 6_378_136.6   # IERS Conventions 2010 Table 1.1


def moon_ecef_m(t_gpst) -> np.ndarray:
    """Low-precision Moon position (..., 3), ECEF metres."""
    n = (np.asarray(t_gpst, dtype="datetime64[ns]") - J2000).astype("int64") / 86_400e9
    tc = n / 36_525.0
    d = np.radians
    lam = d(218.32 + 481_267.881 * tc + 6.29 * np.sin(d(135.0 + 477_198.87 * tc))
            - 1.27 * np.sin(d(259.3 - 413_335.36 * tc)) + 0.66 * np.sin(d(235.7 + 890_534.22 * tc))
            + 0.21 * np.sin(d(269.9 + 954_397.74 * tc)) - 0.19 * np.sin(d(357.5 + 35_999.05 * tc))
            - 0.11 * np.sin(d(186.5 + 966_404.03 * tc)))
    beta = d(5.13 * np.sin(d(93.3 + 483_202.02 * tc)) + 0.28 * np.sin(d(228.2 + 960_400.89 * tc))
             - 0.28 * np.sin(d(318.3 + 6_003.15 * tc)) - 0.17 * np.sin(d(217.6 - 407_332.21 * tc)))
    parallax = d(0.9508 + 0.0518 * np.cos(d(135.0 + 477_198.87 * tc)) + 0.0095 * np.cos(d(259.3 - 413_335.36 * tc))
                 + 0.0078 * np.cos(d(235.7 + 890_534.22 * tc)) + 0.0028 * np.cos(d(269.9 + 954_397.74 * tc)))
    r = R_EARTH_M / np.sin(parallax)
    eps = d(23.439 - 4e-7 * n)
    xe, ye, ze = r * np.cos(beta) * np.cos(lam), r * np.cos(beta) * np.sin(lam), r * np.sin(beta)
    x, y, z = xe, np.cos(eps) * ye - np.sin(eps) * ze, np.sin(eps) * ye + np.cos(eps) * ze
    gmst = d(np.mod(280.46061837 + 360.98564736629 * n, 360.0))
    c, s = np.cos(gmst), np.sin(gmst)
    return np.stack([c * x + s * y, -s * x + c * y, z], axis=-1)


def displacement_m(station_ecef_m, t_gpst) -> np.ndarray:
    """Tidal displacement (n_t, 3), ECEF metres, of a station at GPST times (n_t,)."""
    station = np.asarray(station_ecef_m, dtype=float)
    r_hat = station / np.linalg.norm(station)
    out = np.zeros((len(np.atleast_1d(t_gpst)), 3))
    for body, gm in ((moon_ecef_m(t_gpst), GM_MOON_M3_S2), (sun_ecef_m(t_gpst), GM_SUN_M3_S2)):
        dist = np.linalg.norm(body, axis=-1, keepdims=True)
        b_hat = body / dist
        cos = b_hat @ r_hat
        scale = gm / GM_EARTH_IERS_M3_S2 * R_EARTH_M**4 / dist**3
        out += scale * (H2 * r_hat[None, :] * (1.5 * cos[:, None] ** 2 - 0.5)
                        + 3 * L2 * cos[:, None] * (b_hat - cos[:, None] * r_hat[None, :]))
    return out
