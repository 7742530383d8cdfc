"""Relativistic terms of a satellite clock: the periodic eccentricity term (two
ways), the J2 periodic term, and the rate of proper time against TT.

Sign conventions
----------------
*Periodic terms* are what the user adds to the broadcast clock offset:
``dt_sv = a0 + a1 (t - toc) + a2 (t - toc)^2 + dt_r`` (IS-GPS-200 20.3.3.3.3.1),
i.e. the amount by which the satellite clock reads ahead of its secular model.

*Rates* are fractional frequencies of the satellite's proper time tau against
TT (a clock on the geoid); positive means the satellite clock runs fast.  With
the IERS 2010 (ch. 10) weak-field form and TT = (1 - L_G) TCG:

    dtau/dTT - 1 = L_G - (v^2/2 + U)/c^2          (terms of order 1e-19 dropped)
                 = rate_velocity + rate_gravity,
    rate_velocity = -v^2 / (2 c^2)                 (v: inertial speed, see potential.py)
    rate_gravity  = L_G - U(r)/c^2 = (W0 - U)/c^2  (U positive, with J2; W0 = L_G c^2)

For the nominal GPS orbit the time mean of the sum is +4.4647e-10, the
offset by which the clock is set low before launch (IS-GPS-200 3.3.1.1).

Arrays: positions/velocities ``(..., 3)``; per-epoch results ``(...)``.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import (
    A_EARTH_IERS_M,
    C_M_S,
    GM_EARTH_IERS_M3_S2,
    J2_IERS,
    L_G,
    OMEGA_EARTH_IERS_RAD_S,
    SYSTEMS,
)
from gnssrel.orbits.frames import osculating_elements  # public here too (__all__)
from gnssrel.relativity.potential import inertial_speed_squared, potential_m2_s2
from gnssrel.systems import system_model

__all__ = ["PERIODIC_FORMS", "j2_amplitude_s", "j2_periodic_s", "osculating_elements", "periodic_icd_s",
           "periodic_state_s", "periodic_term_s", "rate_terms"]

PERIODIC_FORMS = {"icd": "F e sqrt(A) sin E (broadcast elements)", "state": "-2 r.v/c^2 (broadcast state)"}
"""The two forms of the periodic term, as :func:`periodic_term_s` names them."""


def periodic_icd_s(eccentricity, sqrt_a_sqrt_m, eccentric_anomaly_rad, system: str = "G",
                   f_s_sqrt_m=None) -> np.ndarray:
    """Interface-specification form ``F e sqrt(A) sin(E)`` in seconds.

    IS-GPS-200 20.3.3.3.3.1 (dt_r), ``F = -2 sqrt(mu)/c^2`` with the system's own
    mu (Galileo OS SIS ICD 5.1.4, BDS-SIS-ICD 5.2.4.10, IS-QZSS-PNT: same form;
    section numbers from memory).  ``f_s_sqrt_m`` (broadcastable, e.g. one F per
    satellite) replaces the F of ``system`` where given.
    """
    f = SYSTEMS[system].f_s_sqrt_m if f_s_sqrt_m is None else f_s_sqrt_m
    return f * np.asarray(eccentricity) * np.asarray(sqrt_a_sqrt_m) * np.sin(eccentric_anomaly_rad)


def periodic_term_s(system: str, position_m, velocity_m_per_s, eccentricity=None, sqrt_a_sqrt_m=None,
                    eccentric_anomaly_rad=None) -> tuple[np.ndarray, str]:
    """The periodic term as the user of a system's broadcast message computes it, and its form.

    The one place that decides the form: F e sqrt(A) sin E (:func:`periodic_icd_s`) where
    the system's records carry Keplerian elements (``has_elements`` of
    :data:`gnssrel.systems.SYSTEM_MODELS`) and elements are given (finite somewhere);
    -2 r.v/c^2 (:func:`periodic_state_s`, REFERENCE-CHECKS 1.3, the equivalent vector form)
    otherwise (GLONASS, precise states).  Returns (values, key of :data:`PERIODIC_FORMS`).
    Whether the user *applies* it is ``user_applies_periodic`` of the same model.
    """
    if system_model(system).has_elements and eccentricity is not None \
            and np.any(np.isfinite(eccentricity)):
        return periodic_icd_s(eccentricity, sqrt_a_sqrt_m, eccentric_anomaly_rad, system), "icd"
    return periodic_state_s(position_m, velocity_m_per_s), "state"


def periodic_state_s(position_m, velocity_m_per_s) -> np.ndarray:
    """State form ``-2 r.v / c^2`` in seconds (IS-GPS-200 20.3.3.3.3.1 note; Ashby 2003 eq. 37).

    ``r.v`` is the same with ECEF or ECI velocity (omega x r is perpendicular to r).
    """
    r = np.asarray(position_m, dtype=float)
    v = np.asarray(velocity_m_per_s, dtype=float)
    return -2.0 * np.einsum("...i,...i->...", r, v) / C_M_S**2


def j2_periodic_s(semi_major_axis_m, inclination_rad, argument_of_latitude_rad,
                  gm: float = GM_EARTH_IERS_M3_S2, j2: float = J2_IERS,
                  a_earth: float = A_EARTH_IERS_M) -> np.ndarray:
    """Periodic clock term from J2 that ``-2 r.v/c^2`` leaves out, in seconds:

        dt_J2 = -(3/2) J2 (a_E^2 / (a c^2)) sqrt(GM/a) sin^2(i) sin(2u)

    (Kouba 2004, GPS Solutions 8; the coefficient was only remembered, so it is
    derived here and checked against a numerical proper-time integral on a
    J2-perturbed orbit in ``tests/test_proper_time_integral.py``.)

    Derivation.  In the inertial frame the J2 field is static, so the energy
    ``E = v^2/2 - U`` is conserved, ``U = GM/r + U2`` with ``U2`` the J2 part
    (potential.py).  Then ``v^2/2 + U = E + 2U``.  Along the orbit
    ``d(r.v)/dt = v^2 + r.grad(U) = v^2 - GM/r - 3 U2`` (U2 is homogeneous of
    degree -3 in r), i.e. ``GM/r = d(r.v)/dt - 2E + U2``.  Hence exactly

        tau - t = -(1/c^2) int (E + 2U) dt
                = 3E t/c^2 - 2 r.v/c^2 - (4/c^2) int U2 dt   (+ const).

    The first term is the secular rate (-3GM/(2ac^2) for J2 = 0), the second the
    state form.  With ``sin(phi) = sin(i) sin(u)`` and r ~ a (terms of order e J2
    dropped), ``U2 = -(GM J2 a_E^2 / (2 a^3)) (3/2 sin^2 i - 1 - 3/2 sin^2 i cos 2u)``;
    its periodic part ``(3/4) n^2 J2 a_E^2 sin^2 i cos 2u`` (n^2 = GM/a^3),
    integrated with du/dt = n, gives ``-(4/c^2)(3/8) n J2 a_E^2 sin^2 i sin 2u``
    = the formula above, since ``n a_E^2 = (a_E^2/a) sqrt(GM/a)``.  So the
    remembered sign and coefficient are right, *as a correction to the state form*
    ``-2 r.v/c^2`` evaluated on the true (perturbed) positions and velocities.
    The constant part of ``U2`` only changes the secular rate.
    """
    a = np.asarray(semi_major_axis_m, dtype=float)
    coefficient = -1.5 * j2 * a_earth**2 / (a * C_M_S**2) * np.sqrt(gm / a)
    return coefficient * np.sin(inclination_rad) ** 2 * np.sin(2.0 * np.asarray(argument_of_latitude_rad))


def j2_amplitude_s(semi_major_axis_m, inclination_rad, gm: float = GM_EARTH_IERS_M3_S2,
                   j2: float = J2_IERS, a_earth: float = A_EARTH_IERS_M) -> np.ndarray:
    """Amplitude of :func:`j2_periodic_s` (about 0.072 ns for GPS, i = 55 deg; derived)."""
    return np.abs(j2_periodic_s(semi_major_axis_m, inclination_rad, np.pi / 4, gm, j2, a_earth))


def rate_terms(position_m, velocity_m_per_s, *, frame: str = "ecef",
               omega_rad_s: float = OMEGA_EARTH_IERS_RAD_S, gm: float = GM_EARTH_IERS_M3_S2,
               j2: float = J2_IERS, a_earth: float = A_EARTH_IERS_M) -> dict:
    """Instantaneous fractional rates of proper time against TT (positive: clock fast).

    Returns ``rate_velocity = -v^2/(2c^2)``, ``rate_gravity = L_G - U/c^2`` and
    ``rate_total`` (their sum), each of shape ``(...)``.  ``frame="ecef"`` turns
    the velocity inertial first (``v + omega x r``); ``frame="eci"`` takes it as is.
    IERS Conventions 2010 ch. 10 (L_G, Table 1.1).
    """
    if frame == "ecef":
        v2 = inertial_speed_squared(position_m, velocity_m_per_s, omega_rad_s)
    elif frame == "eci":
        v = np.asarray(velocity_m_per_s, dtype=float)
        v2 = np.einsum("...i,...i->...", v, v)
    else:
        raise ValueError(f"frame must be 'ecef' or 'eci', not {frame!r}")
    rate_velocity = -0.5 * v2 / C_M_S**2
    rate_gravity = L_G - potential_m2_s2(position_m, gm, j2, a_earth) / C_M_S**2
    return {"rate_velocity": rate_velocity, "rate_gravity": rate_gravity,
            "rate_total": rate_velocity + rate_gravity}
