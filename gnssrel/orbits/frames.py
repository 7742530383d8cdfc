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

The Earth-rotation pieces every stage uses are here, once: :func:`rotate_z`,
:func:`omega_cross_r` (and :func:`inertial_velocity` / :func:`ecef_velocity`), and the
osculating two-body elements of a state (:func:`osculating_elements`).
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import GPS
from gnssrel.timescales import seconds_between

OMEGA_ECI_RAD_S = GPS.omega_earth_rad_s
"""Earth rotation rate used for the ECEF <-> ECI turn (IS-GPS-200 Table 20-IV, published)."""


def rotate_z(vec, angle_rad) -> np.ndarray:
    """Rotate vectors (..., 3) by +angle about z (active rotation, counter-clockwise seen
    from +z); ``angle_rad`` broadcasts with ``vec[..., 0]``.  Coordinates of fixed points in
    a frame turned by +angle are ``rotate_z(vec, -angle)`` (the passive R3(angle) of the ICDs)."""
    vec = np.asarray(vec, dtype=np.float64)
    c, s = np.cos(angle_rad), np.sin(angle_rad)
    x, y, z = vec[..., 0], vec[..., 1], vec[..., 2]
    return np.stack((c * x - s * y, s * x + c * y, np.broadcast_to(z, np.shape(c * x))), axis=-1)


def omega_cross_r(position_m, omega_rad_s: float = OMEGA_ECI_RAD_S) -> np.ndarray:
    """omega x r (..., 3) for a rotation of ``omega_rad_s`` about z: (-omega y, omega x, 0)."""
    r = np.asarray(position_m, dtype=np.float64)
    return np.stack((-omega_rad_s * r[..., 1], omega_rad_s * r[..., 0], np.zeros_like(r[..., 2])), axis=-1)


def inertial_velocity(position_ecef_m, velocity_ecef_m_per_s, omega_rad_s: float = OMEGA_ECI_RAD_S) -> np.ndarray:
    """Velocity in the inertial frame whose axes coincide with ECEF at the instant:
    ``v_ecef + omega x r`` (..., 3)."""
    return np.asarray(velocity_ecef_m_per_s, dtype=np.float64) + omega_cross_r(position_ecef_m, omega_rad_s)


def ecef_velocity(position_m, velocity_inertial_m_per_s, omega_rad_s: float = OMEGA_ECI_RAD_S) -> np.ndarray:
    """Inverse of :func:`inertial_velocity`: ``v_inertial - omega x r`` (..., 3)."""
    return np.asarray(velocity_inertial_m_per_s, dtype=np.float64) - omega_cross_r(position_m, omega_rad_s)


def ecef_to_eci(position_ecef_m, velocity_ecef_m_per_s, t_gpst, t_ref_gpst,
                omega_rad_s: float = OMEGA_ECI_RAD_S):
    """ECEF state at GPST ``t_gpst`` -> state in the ECI frame frozen at ``t_ref_gpst``.

    r_eci = Rz(theta) r_ecef;  v_eci = Rz(theta) (v_ecef + omega x r_ecef),
    theta = omega (t - t_ref).  Returns (position_eci_m, velocity_eci_m_per_s).
    """
    r = np.asarray(position_ecef_m, dtype=np.float64)
    theta = omega_rad_s * seconds_between(t_gpst, t_ref_gpst)
    return rotate_z(r, theta), rotate_z(inertial_velocity(r, velocity_ecef_m_per_s, omega_rad_s), theta)


def eci_to_ecef(position_eci_m, velocity_eci_m_per_s, t_gpst, t_ref_gpst,
                omega_rad_s: float = OMEGA_ECI_RAD_S):
    """Inverse of :func:`ecef_to_eci`: returns (position_ecef_m, velocity_ecef_m_per_s)."""
    theta = omega_rad_s * seconds_between(t_gpst, t_ref_gpst)
    r = rotate_z(position_eci_m, -theta)
    return r, ecef_velocity(r, rotate_z(velocity_eci_m_per_s, -theta), omega_rad_s)


def osculating_elements(position_eci_m, velocity_eci_m_per_s, gm: float) -> dict:
    """Osculating two-body elements of inertial states (shapes ``(..., 3)`` -> ``(...)``).

    Returns ``semi_major_axis_m``, ``eccentricity``, ``eccentric_anomaly_rad``,
    ``inclination_rad``, ``argument_of_latitude_rad`` and ``radius_m``.  They are defined
    from the state with ``gm`` by the two-body relations, so ``sqrt(gm a) e sin(E) = r.v``
    holds identically: with these elements the specification form of the periodic clock
    term equals the state form (to rounding).  Angles from the angular momentum
    h = r x v: inclination from h_z, argument of latitude from the node vector z x h.
    """
    r = np.asarray(position_eci_m, dtype=float)
    v = np.asarray(velocity_eci_m_per_s, dtype=float)
    rn = np.linalg.norm(r, axis=-1)
    v2 = np.einsum("...i,...i->...", v, v)
    rv = np.einsum("...i,...i->...", r, v)
    a = 1.0 / (2.0 / rn - v2 / gm)
    e_cos = 1.0 - rn / a
    e_sin = rv / np.sqrt(gm * a)
    h = np.cross(r, v)
    hn = np.linalg.norm(h, axis=-1)
    inclination = np.arccos(np.clip(h[..., 2] / hn, -1.0, 1.0))
    node = np.stack([-h[..., 1], h[..., 0], np.zeros_like(hn)], axis=-1)  # z x h
    nn = np.linalg.norm(node, axis=-1)
    cos_u = np.einsum("...i,...i->...", node, r) / (nn * rn)
    sin_u = np.einsum("...i,...i->...", np.cross(node, r), h) / (nn * rn * hn)
    return {"semi_major_axis_m": a, "eccentricity": np.hypot(e_cos, e_sin),
            "eccentric_anomaly_rad": np.arctan2(e_sin, e_cos), "inclination_rad": inclination,
            "argument_of_latitude_rad": np.arctan2(sin_u, cos_u), "radius_m": rn}
