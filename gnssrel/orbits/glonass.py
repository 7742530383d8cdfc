"""GLONASS broadcast orbits: 4th-order Runge-Kutta integration of the broadcast state.

GLONASS ICD 2008 ed. 5.1, Appendix A.3.1.2 (the "simplified algorithm"): the
broadcast PZ-90 position and velocity at t_b are integrated with the equations
of motion written in the rotating Earth-fixed frame (central term, J2 term,
centrifugal and Coriolis terms) plus the broadcast luni-solar accelerations,
held constant over the interval:

    dv_x/dt = -mu x / r^3 - 3/2 J2 mu a_e^2 x / r^5 (1 - 5 z^2 / r^2) + w^2 x + 2 w v_y + a_x
    dv_y/dt = -mu y / r^3 - 3/2 J2 mu a_e^2 y / r^5 (1 - 5 z^2 / r^2) + w^2 y - 2 w v_x + a_y
    dv_z/dt = -mu z / r^3 - 3/2 J2 mu a_e^2 z / r^5 (3 - 5 z^2 / r^2)                   + a_z

Constants (mu, a_e, J2, w) from ``gnssrel.constants.GLONASS`` (ICD Table 3.2).
The ICD limits the algorithm to |t - t_b| <= 15 min; selection enforces that.

Vectorized: every (record, target) pair is integrated at once with the same
number of steps N = ceil(max |t - t_b| / 60 s), each pair with its own step
(t - t_b) / N, so every step is at most 60 s.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from gnssrel.constants import GLONASS
from gnssrel.orbits.frames import inertial_velocity, osculating_elements
from gnssrel.timescales import seconds_between

MAX_STEP_S = 60.0
STATE_COLUMNS = ("x_m", "y_m", "z_m", "vx_m_per_s", "vy_m_per_s", "vz_m_per_s")
ACCELERATION_COLUMNS = ("ax_m_per_s2", "ay_m_per_s2", "az_m_per_s2")


def _derivative(state: np.ndarray, accel_ls: np.ndarray) -> np.ndarray:
    """d/dt of (x, y, z, vx, vy, vz) stacked on the last axis (ICD A.3.1.2)."""
    mu, a_e, j2, w = GLONASS.gm_m3_s2, GLONASS.ellipsoid_a_m, GLONASS.j2, GLONASS.omega_earth_rad_s
    x, y, z, vx, vy, vz = (state[..., i] for i in range(6))
    r2 = x * x + y * y + z * z
    r = np.sqrt(r2)
    central = -mu / (r2 * r)
    j2_term = -1.5 * j2 * mu * a_e**2 / (r2 * r2 * r)
    z2_r2 = 5.0 * z * z / r2
    ax = central * x + j2_term * x * (1.0 - z2_r2) + w * w * x + 2.0 * w * vy + accel_ls[..., 0]
    ay = central * y + j2_term * y * (1.0 - z2_r2) + w * w * y - 2.0 * w * vx + accel_ls[..., 1]
    az = central * z + j2_term * z * (3.0 - z2_r2) + accel_ls[..., 2]
    return np.stack((vx, vy, vz, ax, ay, az), axis=-1)


def integrate_state(state0: np.ndarray, accel_ls: np.ndarray, dt_s: np.ndarray) -> np.ndarray:
    """RK4 from ``state0`` (..., 6) over ``dt_s`` (...) seconds, all elements together."""
    dt = np.asarray(dt_s, dtype=np.float64)
    finite = np.isfinite(dt)
    worst = np.max(np.abs(dt[finite])) if np.any(finite) else 0.0
    n_steps = max(1, int(np.ceil(worst / MAX_STEP_S)))
    h = (np.where(finite, dt, np.nan) / n_steps)[..., None]
    s = np.array(state0, dtype=np.float64)
    for _ in range(n_steps):
        k1 = _derivative(s, accel_ls)
        k2 = _derivative(s + 0.5 * h * k1, accel_ls)
        k3 = _derivative(s + 0.5 * h * k2, accel_ls)
        k4 = _derivative(s + h * k3, accel_ls)
        s = s + h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4)
    return s


def glonass_states(records: Mapping, t_gpst) -> dict:
    """GLONASS states at GPST times from broadcast records.

    records: mapping of contract columns (``toc`` = t_b in GPST, ``x_m`` ...
        ``vz_m_per_s``, ``ax_m_per_s2`` ...) to arrays broadcastable with ``t_gpst``.
    Returns the same keys as ``keplerian.kepler_states``: ``position_ecef_m``,
    ``velocity_ecef_m_per_s`` (PZ-90 Earth-fixed), ``eccentric_anomaly_rad``
    (NaN: no Keplerian anomaly is broadcast), osculating ``argument_of_latitude_rad``,
    ``radius_m``, ``inclination_rad``, and ``tk_s`` = t - t_b.
    """
    t = np.asarray(t_gpst).astype("datetime64[ns]")
    tb = np.asarray(records["toc"]).astype("datetime64[ns]")
    dt = seconds_between(t, tb)
    dt = np.where(np.isnat(t) | np.isnat(tb), np.nan, dt)
    columns = [np.asarray(records[c], dtype=np.float64) for c in STATE_COLUMNS + ACCELERATION_COLUMNS]
    shape = np.broadcast_shapes(dt.shape, *(c.shape for c in columns))
    state0 = np.stack([np.broadcast_to(c, shape) for c in columns[:6]], axis=-1)
    accel = np.stack([np.broadcast_to(c, shape) for c in columns[6:]], axis=-1)
    state = integrate_state(state0, accel, np.broadcast_to(dt, shape))
    pos, vel = state[..., :3], state[..., 3:]
    out = {"position_ecef_m": pos, "velocity_ecef_m_per_s": vel,
           "eccentric_anomaly_rad": np.full(shape, np.nan), "tk_s": np.broadcast_to(dt, shape).copy()}
    with np.errstate(invalid="ignore", divide="ignore"):
        elements = osculating_elements(pos, inertial_velocity(pos, vel, GLONASS.omega_earth_rad_s),
                                       GLONASS.gm_m3_s2)      # ICD Table 3.2 rate and mu
        out.update({k: elements[k] for k in ("radius_m", "inclination_rad", "argument_of_latitude_rad")})
    return out
