"""Earth-fixed (ECEF) <-> Earth-centred inertial (ECI) frames by the Earth's rotation about z.

gnssrel's ECI is the ECEF frame frozen at a reference instant ``t_ref`` (GPST):
at ``t_ref`` both coincide, and at any other time the ECEF frame has turned by
``theta = omega * (t - t_ref)`` about its z axis.  Precession, nutation and
polar motion are left out: over the spans gnssrel handles (a few days) they
move the frame by far less than the relativistic quantities computed in it
need (the proper-time integrals use |v|^2 and r, which a uniform rotation
about z leaves correctly related).  This is the frame in which the broadcast
user algorithms themselves are written before their Earth-rotation step
(IS-GPS-200 Table 20-IV, corrected longitude of ascending node: the term
``-omega_e * t`` turns the inertial node into the Earth-fixed one).

One rotation rate is used for every system, so that ECI positions of
different systems share one frame: ``OMEGA_ECI_RAD_S`` (WGS-84 / IS-GPS-200
Table 20-IV value).  Shapes: positions and velocities ``(..., 3)``, times
broadcastable with ``(...)``.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import GPS
from gnssrel.timescales import seconds_between

OMEGA_ECI_RAD_S = GPS.omega_earth_rad_s
"""Earth rotation rate used for the ECEF <-> ECI turn (IS-GPS-200 Table 20-IV, published)."""


def _rotate_z(vec: np.ndarray, angle_rad: np.ndarray) -> np.ndarray:
    """Rotate vectors (..., 3) by +angle about z (active rotation)."""
    c, s = np.cos(angle_rad), np.sin(angle_rad)
    x, y, z = vec[..., 0], vec[..., 1], vec[..., 2]
    return np.stack((c * x - s * y, s * x + c * y, z), axis=-1)


def ecef_to_eci(position_ecef_m, velocity_ecef_m_per_s, t_gpst, t_ref_gpst,
                omega_rad_s: float = OMEGA_ECI_RAD_S):
    """ECEF state at GPST ``t_gpst`` -> state in the ECI frame frozen at ``t_ref_gpst``.

    r_eci = Rz(theta) r_ecef;  v_eci = Rz(theta) (v_ecef + omega x r_ecef),
    theta = omega (t - t_ref).  Returns (position_eci_m, velocity_eci_m_per_s).
    """
    r = np.asarray(position_ecef_m, dtype=np.float64)
    v = np.asarray(velocity_ecef_m_per_s, dtype=np.float64)
    theta = omega_rad_s * seconds_between(t_gpst, t_ref_gpst)
    omega_cross_r = np.stack((-omega_rad_s * r[..., 1], omega_rad_s * r[..., 0],
                              np.zeros_like(r[..., 2])), axis=-1)
    return _rotate_z(r, theta), _rotate_z(v + omega_cross_r, theta)


def eci_to_ecef(position_eci_m, velocity_eci_m_per_s, t_gpst, t_ref_gpst,
                omega_rad_s: float = OMEGA_ECI_RAD_S):
    """Inverse of :func:`ecef_to_eci`: returns (position_ecef_m, velocity_ecef_m_per_s)."""
    theta = omega_rad_s * seconds_between(t_gpst, t_ref_gpst)
    r = _rotate_z(np.asarray(position_eci_m, dtype=np.float64), -theta)
    v_rot = _rotate_z(np.asarray(velocity_eci_m_per_s, dtype=np.float64), -theta)
    omega_cross_r = np.stack((-omega_rad_s * r[..., 1], omega_rad_s * r[..., 0],
                              np.zeros_like(r[..., 2])), axis=-1)
    return r, v_rot - omega_cross_r
