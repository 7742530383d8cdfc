"""The Earth's Newtonian potential with J2, and the inertial speed of a satellite.

Sign convention (IERS Conventions 2010, ch. 10): ``U`` is the *positive*
Newtonian potential, ``U = GM/r`` for a point mass, so that a clock at rest at
distance ``r`` runs slow by ``U/c^2`` against coordinate time (TCG).  With the
zonal term J2 (IERS 2010 ch. 6, eq. 6.6 truncated at degree 2, unnormalised C20 = -J2):

    U(r) = GM/r [1 - J2 (a_E/r)^2 (3 sin^2(phi) - 1)/2],   sin(phi) = z/r,

phi the geocentric latitude.  J2 is symmetric about the z axis, so ``U`` is the
same function of the coordinates in the Earth-fixed (ECEF) and in a
geocentric inertial frame (ECI) that shares the z axis: no rotation needed for it.

Velocity, in contrast, is frame dependent.  The proper-time rate
``dtau/dTCG = 1 - (v^2/2 + U)/c^2`` needs the speed relative to the *inertial*
geocentric frame.  The centrifugal potential that appears in the rotating frame
is already inside the geoid potential W0 (= L_G c^2, IERS 2010 Table 1.1), which
belongs to the ground clock side (TT), and must not be counted again on the
satellite side.  An ECEF velocity therefore becomes inertial by adding the
transport term of the Earth's rotation:

    v_eci = v_ecef + omega x r_ecef,   omega = (0, 0, omega_E)

(the two frames taken coincident at the instant; precession, nutation and polar
motion change the orientation only, not the speed at the level that matters:
polar motion ~1e-6 rad gives ~1e-6 omega r ~ 2e-3 m/s on a 3.9 km/s speed, a
~1e-18 rate).  ``r.v`` does not change: omega x r is perpendicular to r.

Arrays: positions and velocities have shape ``(..., 3)``; results ``(...)``.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import A_EARTH_IERS_M, GM_EARTH_IERS_M3_S2, J2_IERS, OMEGA_EARTH_IERS_RAD_S
from gnssrel.orbits.frames import inertial_velocity

__all__ = [
    "eci_velocity",
    "inertial_speed_squared",
    "j2_potential_m2_s2",
    "point_mass_potential_m2_s2",
    "potential_m2_s2",
]


def point_mass_potential_m2_s2(position_m, gm: float = GM_EARTH_IERS_M3_S2) -> np.ndarray:
    """``GM/r`` (positive convention) in m^2/s^2."""
    r = np.linalg.norm(np.asarray(position_m, dtype=float), axis=-1)
    return gm / r


def j2_potential_m2_s2(position_m, gm: float = GM_EARTH_IERS_M3_S2, j2: float = J2_IERS,
                       a_earth: float = A_EARTH_IERS_M) -> np.ndarray:
    """The J2 part of ``U``: ``-GM J2 a_E^2 (3 z^2/r^2 - 1) / (2 r^3)`` (IERS 2010 eq. 6.6, n = 2)."""
    p = np.asarray(position_m, dtype=float)
    r2 = np.einsum("...i,...i->...", p, p)
    r = np.sqrt(r2)
    sin2_lat = p[..., 2] ** 2 / r2
    return -gm * j2 * a_earth**2 * (3.0 * sin2_lat - 1.0) / (2.0 * r2 * r)


def potential_m2_s2(position_m, gm: float = GM_EARTH_IERS_M3_S2, j2: float = J2_IERS,
                    a_earth: float = A_EARTH_IERS_M) -> np.ndarray:
    """``U(r) = GM/r [1 - J2 (a_E/r)^2 (3 sin^2 phi - 1)/2]`` in m^2/s^2 (IERS 2010 constants)."""
    return point_mass_potential_m2_s2(position_m, gm) + j2_potential_m2_s2(position_m, gm, j2, a_earth)


def eci_velocity(position_ecef_m, velocity_ecef_m_per_s,
                 omega_rad_s: float = OMEGA_EARTH_IERS_RAD_S) -> np.ndarray:
    """Inertial velocity ``v_ecef + omega x r`` with omega along z (frames coincident at the instant)."""
    return inertial_velocity(position_ecef_m, velocity_ecef_m_per_s, omega_rad_s)


def inertial_speed_squared(position_ecef_m, velocity_ecef_m_per_s,
                           omega_rad_s: float = OMEGA_EARTH_IERS_RAD_S) -> np.ndarray:
    """``|v_eci|^2`` in m^2/s^2 from an ECEF state."""
    v = eci_velocity(position_ecef_m, velocity_ecef_m_per_s, omega_rad_s)
    return np.einsum("...i,...i->...", v, v)
