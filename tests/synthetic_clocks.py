"""Invented satellites on Kepler orbits, with broadcast clock tables and state Datasets
shaped like the gnssrel data model, for testing the clock stage without real files.

Nothing here is a reference value: the tests use it to check that the fit recovers
what was put in.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pandas as pd
import xarray as xr

from gnssrel.constants import C_M_S, SYSTEMS


def kepler_orbit(e, sqrt_a, m0, t_s, gm, omega_earth):
    """Planar Kepler orbit, inclined 55 deg: (E, position_ecef, velocity_ecef), ECEF = inertial
    at t = 0 turned at omega_earth (so r.v is the same in both frames)."""
    a = sqrt_a**2
    n = np.sqrt(gm / a**3)
    m = m0[None, :] + n[None, :] * t_s[:, None]
    big_e = m.copy()
    for _ in range(30):
        big_e = big_e - (big_e - e * np.sin(big_e) - m) / (1 - e * np.cos(big_e))
    root = np.sqrt(1 - e * e)
    e_dot = n / (1 - e * np.cos(big_e))
    x, y = a * (np.cos(big_e) - e), a * root * np.sin(big_e)
    vx, vy = -a * np.sin(big_e) * e_dot, a * root * np.cos(big_e) * e_dot
    inc = np.radians(55.0)
    pos = np.stack([x, y * np.cos(inc), y * np.sin(inc)], -1)
    vel = np.stack([vx, vy * np.cos(inc), vy * np.sin(inc)], -1)
    theta = omega_earth * t_s[:, None]
    c, s = np.cos(theta), np.sin(theta)
    pe = np.stack([c * pos[..., 0] + s * pos[..., 1], -s * pos[..., 0] + c * pos[..., 1], pos[..., 2]], -1)
    ve_in = np.stack([c * vel[..., 0] + s * vel[..., 1], -s * vel[..., 0] + c * vel[..., 1], vel[..., 2]], -1)
    omega_cross_r = omega_earth * np.stack([-pe[..., 1], pe[..., 0], np.zeros(pe.shape[:2])], -1)
    return big_e, pe, ve_in - omega_cross_r


def make_constellation(times, letter="G", n_sat=12, seed=0, e_range=(0.002, 0.02)):
    """A NavigationData-like object and a broadcast-state Dataset for invented satellites.

    One ephemeris row per satellite, toc at the first epoch; returns (nav, states, truth)
    with truth = {"periodic_s": (time, sv), "true_clock_s": clock excluding the periodic term}.
    """
    rng = np.random.default_rng(seed)
    times = np.asarray(times).astype("datetime64[ns]")
    t_s = (times - times[0]).astype("int64") / 1e9
    const = SYSTEMS[letter]
    sv = np.array([f"{letter}{i + 1:02d}" for i in range(n_sat)])
    e = rng.uniform(*e_range, n_sat)
    sqrt_a = np.full(n_sat, 5153.7 if letter != "R" else 5050.0) + rng.normal(0, 0.5, n_sat)
    m0 = rng.uniform(0, 2 * np.pi, n_sat)
    big_e, pos, vel = kepler_orbit(e, sqrt_a, m0, t_s, const.gm_m3_s2, const.omega_earth_rad_s)
    periodic = -2 * np.sum(pos * vel, axis=-1) / C_M_S**2
    af0 = rng.normal(0, 2e-4, n_sat)
    af1 = rng.normal(0, 3e-12, n_sat)
    table = pd.DataFrame({"sv": sv, "toc": np.repeat(times[:1], n_sat), "toe": np.repeat(times[:1], n_sat),
                          "clock_bias_s": af0, "clock_drift_s_per_s": af1,
                          "clock_drift_rate_s_per_s2": np.zeros(n_sat),
                          "relative_frequency_bias": af1, "eccentricity": e, "sqrt_a_sqrt_m": sqrt_a,
                          "nav_type": "FDMA" if letter == "R" else "LNAV"})
    true_clock = af0[None, :] + af1[None, :] * t_s[:, None]
    # GLONASS broadcast terms carry the periodic term inside them (NAVI, published).
    poly = true_clock + (periodic if letter == "R" else 0.0)
    rows = np.broadcast_to(np.arange(n_sat)[None, :], (len(times), n_sat))
    ecc = np.broadcast_to(e[None, :], rows.shape) if letter != "R" else np.full(rows.shape, np.nan)
    states = xr.Dataset(
        {"clock_poly_s": (("time", "sv"), poly),
         "eccentricity": (("time", "sv"), ecc),
         "sqrt_a_sqrt_m": (("time", "sv"), np.broadcast_to(sqrt_a[None, :], rows.shape)),
         "eccentric_anomaly_rad": (("time", "sv"), big_e if letter != "R" else np.full(rows.shape, np.nan)),
         "position_ecef_m": (("time", "sv", "axis"), pos),
         "velocity_ecef_m_per_s": (("time", "sv", "axis"), vel),
         "ephemeris_row": (("time", "sv"), rows.copy()),
         "status": (("time", "sv"), np.zeros(rows.shape, dtype=np.int8))},
        coords={"time": times, "sv": sv, "axis": ["x", "y", "z"]}, attrs={"time_scale": "GPST"})
    nav = SimpleNamespace(ephemerides={letter: table}, header={}, path=None)
    return nav, states, {"periodic_s": periodic, "true_clock_s": true_clock,
                         "elements": {"e": e, "sqrt_a": sqrt_a, "m0": m0, "t_s": t_s, "af1": af1}}


def merge_constellations(parts):
    """Merge several make_constellation outputs (different systems) into one."""
    navs, states, truths = zip(*parts)
    nav = SimpleNamespace(ephemerides={k: v for n in navs for k, v in n.ephemerides.items()}, header={}, path=None)
    ds = xr.concat(states, dim="sv")
    truth = {k: np.concatenate([t[k] for t in truths], axis=1) for k in ("periodic_s", "true_clock_s")}
    return nav, ds, truth
