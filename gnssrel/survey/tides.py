"""Solid Earth tide: the station displacement of degree 2 (IERS Conventions 2010, ch. 7.1.1, step 1, eq. 7.5).

    dr = sum_j (GM_j / GM_E) (R_E^4 / R_j^3) { h2 r^ (3/2 (R^_j . r^)^2 - 1/2)
                                               + 3 l2 (R^_j . r^) [R^_j - (R^_j . r^) r^] }

j = Moon, Sun; h2 = 0.6078, l2 = 0.0847 (the nominal values of eq. 7.5; the latitude dependence
and the step-2 frequency corrections, a few mm, are left out).  Up to ~30 cm vertically in a day.
The ITRF is "conventional tide free", which this full formula (permanent part included) gives.
Sun: :func:`gnssrel.orbits.antenna.sun_position_ecef_m`.  Moon: the low-precision series of
Montenbruck & Gill, Satellite Orbits (2000) 3.3.2 (eqs. 3.47-3.49; ~0.2 deg, ~500 km; from
memory), ecliptic of date, turned to ECEF by the same sidereal angle as the Sun; a 0.3 deg error
of the Moon moves the tide by ~3 mm.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import GM_EARTH_IERS_M3_S2, GM_MOON_M3_S2, GM_SUN_M3_S2
from gnssrel.orbits.antenna import sun_position_ecef_m

H2, L2 = 0.6078, 0.0847
R_EARTH_M = 6_378_136.6   # IERS Conventions 2010 Table 1.1 (published)
_ARCSEC = np.pi / (180.0 * 3600.0)


def moon_position_ecef_m(t_gpst) -> np.ndarray:
    """Low-precision Moon position (..., 3), ECEF metres (Montenbruck & Gill 2000, 3.3.2)."""
    t = np.asarray(t_gpst).astype("datetime64[ns]")
    d = (t - np.datetime64("2000-01-01T12:00:00", "ns")).astype("int64") / 86_400e9
    tc = d / 36_525.0
    l0 = np.radians(218.31617 + 481_267.88088 * tc)
    ll = np.radians(134.96292 + 477_198.86753 * tc)
    lp = np.radians(357.52543 + 35_999.04944 * tc)
    f = np.radians(93.27283 + 483_202.01873 * tc)
    dd = np.radians(297.85027 + 445_267.11135 * tc)
    lam = l0 + _ARCSEC * (22_640 * np.sin(ll) + 769 * np.sin(2 * ll) - 4_586 * np.sin(ll - 2 * dd)
                          + 2_370 * np.sin(2 * dd) - 668 * np.sin(lp) - 412 * np.sin(2 * f)
                          - 212 * np.sin(2 * ll - 2 * dd) - 206 * np.sin(ll + lp - 2 * dd)
                          + 192 * np.sin(ll + 2 * dd) - 165 * np.sin(lp - 2 * dd) + 148 * np.sin(ll - lp)
                          - 125 * np.sin(dd) - 110 * np.sin(ll + lp) - 55 * np.sin(2 * f - 2 * dd))
    beta = _ARCSEC * (18_520 * np.sin(f + lam - l0 + _ARCSEC * (412 * np.sin(2 * f) + 541 * np.sin(lp)))
                      - 526 * np.sin(f - 2 * dd) + 44 * np.sin(ll + f - 2 * dd) - 31 * np.sin(-ll + f - 2 * dd)
                      - 25 * np.sin(-2 * ll + f) - 23 * np.sin(lp + f - 2 * dd) + 21 * np.sin(-ll + f)
                      + 11 * np.sin(-lp + f - 2 * dd))
    r = 1e3 * (385_000.0 - 20_905 * np.cos(ll) - 3_699 * np.cos(2 * dd - ll) - 2_956 * np.cos(2 * dd)
               - 570 * np.cos(2 * ll) + 246 * np.cos(2 * ll - 2 * dd) - 205 * np.cos(lp - 2 * dd)
               - 171 * np.cos(ll + 2 * dd) - 152 * np.cos(ll + lp - 2 * dd))
    eps = np.radians(23.43929111)
    xe, ye, ze = r * np.cos(beta) * np.cos(lam), r * np.cos(beta) * np.sin(lam), r * np.sin(beta)
    x, y, z = xe, ye * np.cos(eps) - ze * np.sin(eps), ye * np.sin(eps) + ze * np.cos(eps)
    theta = np.radians(np.mod(280.46061837 + 360.98564736629 * d, 360.0))
    c, s = np.cos(theta), np.sin(theta)
    return np.stack([c * x + s * y, -s * x + c * y, z], axis=-1)


def solid_tide_m(station_ecef_m, t_gpst) -> np.ndarray:
    """Degree-2 solid-tide displacement (n, 3) ECEF metres of a station at times ``t_gpst`` (n,)."""
    return tide_from_bodies(station_ecef_m, ((moon_position_ecef_m(t_gpst), GM_MOON_M3_S2),
                                             (sun_position_ecef_m(t_gpst), GM_SUN_M3_S2)))


def tide_from_bodies(station_ecef_m, bodies) -> np.ndarray:
    """IERS 2010 eq. 7.5 for ``bodies`` = ((positions (n, 3) ECEF m, GM m^3/s^2), ...)."""
    r = np.asarray(station_ecef_m, float)
    rhat = r / np.linalg.norm(r)
    out = 0.0
    for body, gm in bodies:
        body = np.atleast_2d(np.asarray(body, float))
        dist = np.linalg.norm(body, axis=-1, keepdims=True)
        bhat = body / dist
        cos = bhat @ rhat
        scale = (gm / GM_EARTH_IERS_M3_S2) * R_EARTH_M**4 / dist[:, 0] ** 3
        out = out + scale[:, None] * (H2 * rhat[None, :] * (1.5 * cos**2 - 0.5)[:, None]
                                      + 3.0 * L2 * cos[:, None] * (bhat - cos[:, None] * rhat[None, :]))
    return out
