"""Synthetic orbits for the relativity tests: two-body Kepler and a numerically
integrated J2 orbit (scipy solve_ivp), both in a geocentric inertial frame.

Our own small propagators, so the relativity engine can be checked without the
orbit stage.  Units SI; times in seconds from the start of the arc.
"""

from __future__ import annotations

import numpy as np
import xarray as xr
from scipy.integrate import solve_ivp

from gnssrel.constants import A_EARTH_IERS_M, GM_EARTH_IERS_M3_S2, J2_IERS, OMEGA_EARTH_IERS_RAD_S


def kepler_state(a_m, e, i_rad, raan_rad, argp_rad, mean_anomaly0_rad, t_s, gm=GM_EARTH_IERS_M3_S2):
    """Two-body inertial states for elements of shape (n_sat,) at times (n_t,).

    Returns position, velocity (n_t, n_sat, 3) and eccentric anomaly (n_t, n_sat).
    """
    a, e, i, raan, argp, m0 = (np.atleast_1d(np.asarray(x, dtype=float))
                               for x in (a_m, e, i_rad, raan_rad, argp_rad, mean_anomaly0_rad))
    t = np.asarray(t_s, dtype=float)[:, None]
    n = np.sqrt(gm / a**3)
    m = m0 + n * t
    big_e = m.copy()
    for _ in range(30):
        big_e = big_e - (big_e - e * np.sin(big_e) - m) / (1.0 - e * np.cos(big_e))
    cos_e, sin_e = np.cos(big_e), np.sin(big_e)
    b = a * np.sqrt(1.0 - e**2)
    x_p, y_p = a * (cos_e - e), b * sin_e
    edot = n / (1.0 - e * cos_e)
    vx_p, vy_p = -a * sin_e * edot, b * cos_e * edot
    p_vec = np.stack([np.cos(raan) * np.cos(argp) - np.sin(raan) * np.sin(argp) * np.cos(i),
                      np.sin(raan) * np.cos(argp) + np.cos(raan) * np.sin(argp) * np.cos(i),
                      np.sin(argp) * np.sin(i)], axis=-1)
    q_vec = np.stack([-np.cos(raan) * np.sin(argp) - np.sin(raan) * np.cos(argp) * np.cos(i),
                      -np.sin(raan) * np.sin(argp) + np.cos(raan) * np.cos(argp) * np.cos(i),
                      np.cos(argp) * np.sin(i)], axis=-1)
    pos = x_p[..., None] * p_vec + y_p[..., None] * q_vec
    vel = vx_p[..., None] * p_vec + vy_p[..., None] * q_vec
    return pos, vel, big_e


def j2_acceleration(p, gm=GM_EARTH_IERS_M3_S2, j2=J2_IERS, a_earth=A_EARTH_IERS_M):
    """Point mass + J2 acceleration (gradient of potential.potential_m2_s2), p (..., 3)."""
    x, y, z = p[..., 0], p[..., 1], p[..., 2]
    r2 = x * x + y * y + z * z
    r = np.sqrt(r2)
    k = 1.5 * j2 * gm * a_earth**2 / r2**2 / r
    zz = 5.0 * z * z / r2
    ax = -gm * x / (r2 * r) - k * x * (1.0 - zz)
    ay = -gm * y / (r2 * r) - k * y * (1.0 - zz)
    az = -gm * z / (r2 * r) - k * z * (3.0 - zz)
    return np.stack([ax, ay, az], axis=-1)


def integrate_j2_orbit(position0_m, velocity0_m_per_s, t_s, j2=J2_IERS):
    """Inertial states (n_t, n_sat, 3) of a J2 orbit from initial states (n_sat, 3), DOP853."""
    p0 = np.atleast_2d(position0_m)
    v0 = np.atleast_2d(velocity0_m_per_s)
    n_sat = p0.shape[0]

    def rhs(_t, y):
        s = y.reshape(n_sat, 6)
        return np.concatenate([s[:, 3:], j2_acceleration(s[:, :3], j2=j2)], axis=1).ravel()

    t = np.asarray(t_s, dtype=float)
    sol = solve_ivp(rhs, (t[0], t[-1]), np.concatenate([p0, v0], axis=1).ravel(), method="DOP853",
                    t_eval=t, rtol=1e-13, atol=1e-6, dense_output=True)
    assert sol.success, sol.message
    s = sol.y.T.reshape(len(t), n_sat, 6)

    def state_function(tt):
        y = sol.sol(tt).reshape(n_sat, 6)
        return y[:, :3], y[:, 3:]

    return s[..., :3], s[..., 3:], state_function


def eci_to_ecef(t_s, position_eci_m, velocity_eci_m_per_s, omega=OMEGA_EARTH_IERS_RAD_S):
    """Rotate inertial states into an Earth-fixed frame turning at omega about z (aligned at t = 0)."""
    theta = omega * np.asarray(t_s, dtype=float).reshape((-1,) + (1,) * (position_eci_m.ndim - 2))
    c, s = np.cos(theta), np.sin(theta)
    x, y, z = position_eci_m[..., 0], position_eci_m[..., 1], position_eci_m[..., 2]
    pos = np.stack([c * x + s * y, -s * x + c * y, z], axis=-1)
    vx, vy, vz = velocity_eci_m_per_s[..., 0], velocity_eci_m_per_s[..., 1], velocity_eci_m_per_s[..., 2]
    vel_rot = np.stack([c * vx + s * vy, -s * vx + c * vy, vz], axis=-1)
    vel = vel_rot - np.cross(np.array([0.0, 0.0, omega]), pos)
    return pos, vel


def state_dataset(t0, t_s, sv, position_ecef_m, velocity_ecef_m_per_s, **extra):
    """A state history in the DEVELOPERS.md contract (dims time, sv, axis)."""
    times = np.datetime64(t0, "ns") + np.round(np.asarray(t_s) * 1e9).astype("timedelta64[ns]")
    ds = xr.Dataset(
        {"position_ecef_m": (("time", "sv", "axis"), position_ecef_m),
         "velocity_ecef_m_per_s": (("time", "sv", "axis"), velocity_ecef_m_per_s),
         "status": (("time", "sv"), np.zeros(position_ecef_m.shape[:2], dtype=np.int8))},
        coords={"time": times, "sv": list(sv), "axis": ["x", "y", "z"]},
        attrs={"time_scale": "GPST", "frame": "synthetic", "source": "tests/relativity_orbits.py"})
    for name, value in extra.items():
        ds[name] = (("time", "sv"), value)
    return ds
