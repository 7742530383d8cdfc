"""Relativistic terms of the signal path: Sagnac, Shapiro, and the light-time iteration.

All positions ECEF in metres, shapes ``(..., 3)``; results ``(...)``.

Sagnac (Ashby 2003, Living Rev. Relativity 6, sec. 2 and "The Sagnac effect"):
a range computed in the Earth-fixed frame of the *reception* instant from
satellite coordinates of the *transmission* instant misses the Earth's rotation
during the flight.  To first order in omega tau the missing part is

    dt_sagnac = omega (x_s y_r - y_s x_r) / c^2 = omega . (r_s x r_r) / c^2,

to be *added* to the geometric time of flight |r_s - r_r|/c (range: times c).
The exact alternative, used by :func:`light_time`, rotates the transmit-time
satellite position by ``-omega tau`` about z into the reception-time frame.

Shapiro (IERS Conventions 2010, ch. 11, eq. 11.17, gamma = 1): the delay of a
signal in the Earth's field, ``(1 + gamma) GM/c^3 ln((r_s + r_r + rho)/(r_s + r_r - rho))``;
about 12.7 mm at zenith and 18.7 mm at the horizon for a GPS satellite (derived).
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import C_M_S, GM_EARTH_IERS_M3_S2, GPS
from gnssrel.orbits.frames import rotate_z

__all__ = [
    "equator_circumnavigation_sagnac_s",
    "light_time",
    "rotate_about_z",
    "sagnac_m",
    "sagnac_s",
    "shapiro_m",
    "shapiro_s",
]

OMEGA_GPS_RAD_S = GPS.omega_earth_rad_s  # IS-GPS-200 Table 20-IV (WGS-84)


def sagnac_s(sat_pos_ecef_m, rx_pos_ecef_m, omega: float = OMEGA_GPS_RAD_S) -> np.ndarray:
    """Sagnac time ``omega (x_s y_r - y_s x_r)/c^2`` in seconds (Ashby 2003); add to |r_s - r_r|/c."""
    s = np.asarray(sat_pos_ecef_m, dtype=float)
    r = np.asarray(rx_pos_ecef_m, dtype=float)
    return omega * (s[..., 0] * r[..., 1] - s[..., 1] * r[..., 0]) / C_M_S**2


def sagnac_m(sat_pos_ecef_m, rx_pos_ecef_m, omega: float = OMEGA_GPS_RAD_S) -> np.ndarray:
    """Sagnac term as a range, metres (:func:`sagnac_s` times c)."""
    return sagnac_s(sat_pos_ecef_m, rx_pos_ecef_m, omega) * C_M_S


def shapiro_s(sat_pos_m, rx_pos_m, gm: float = GM_EARTH_IERS_M3_S2, gamma: float = 1.0) -> np.ndarray:
    """Shapiro delay in seconds, IERS Conventions 2010 eq. 11.17 (equation number from memory)."""
    s = np.asarray(sat_pos_m, dtype=float)
    r = np.asarray(rx_pos_m, dtype=float)
    rs = np.linalg.norm(s, axis=-1)
    rr = np.linalg.norm(r, axis=-1)
    rho = np.linalg.norm(s - r, axis=-1)
    return (1.0 + gamma) * gm / C_M_S**3 * np.log((rs + rr + rho) / (rs + rr - rho))


def shapiro_m(sat_pos_m, rx_pos_m, gm: float = GM_EARTH_IERS_M3_S2, gamma: float = 1.0) -> np.ndarray:
    """Shapiro delay as a range, metres."""
    return shapiro_s(sat_pos_m, rx_pos_m, gm, gamma) * C_M_S


def rotate_about_z(position_m, angle_rad) -> np.ndarray:
    """Coordinates of fixed points in a frame turned by ``angle_rad`` about z
    (the Earth-fixed frame ``angle/omega`` seconds later): R3(angle) r."""
    return rotate_z(position_m, -np.asarray(angle_rad, dtype=float))


def light_time(state_function, rx_pos_ecef_m, t_receive_gpst, *, omega: float = OMEGA_GPS_RAD_S,
               with_shapiro: bool = False, tolerance_s: float = 1e-12, max_iterations: int = 10) -> dict:
    """Transmit time of a signal received at ``t_receive_gpst`` by a receiver at ``rx_pos_ecef_m``.

    ``state_function(t_gpst, offset_s)`` returns the satellite ECEF position(s)
    ``(..., 3)`` at ``t_gpst + offset_s`` (offset in float seconds, so the
    transmit time keeps sub-nanosecond resolution; datetime64 stops at 1 ns);
    ``offset_s`` is a scalar on the first call and then an array of shape ``(...)``,
    and the result must have the full shape ``(..., 3)`` in both cases.
    Fixed-point iteration ``tau <- |R3(omega tau) r_s(t_r - tau) - r_r| / c``
    (+ Shapiro if asked), vectorised over everything ``state_function`` returns,
    until every change is below ``tolerance_s``.

    Returns a dict: ``flight_time_s`` (tau), ``transmit_offset_s`` (= -tau),
    ``satellite_position_m`` (at transmission, in the reception-time ECEF frame),
    ``satellite_position_transmit_frame_m`` (ECEF of the transmission instant),
    ``range_m`` (|r_s' - r_r|), ``sagnac_s`` (range difference of the two frames / c,
    exact; compare :func:`sagnac_s`), ``iterations``.
    """
    rx = np.asarray(rx_pos_ecef_m, dtype=float)
    tau = np.full(np.shape(state_function(t_receive_gpst, 0.0))[:-1], 0.075)
    for iteration in range(1, max_iterations + 1):
        pos_tx = np.asarray(state_function(t_receive_gpst, -tau), dtype=float)
        pos_rx_frame = rotate_about_z(pos_tx, omega * tau)
        rho = np.linalg.norm(pos_rx_frame - rx, axis=-1)
        new_tau = rho / C_M_S
        if with_shapiro:
            new_tau = new_tau + shapiro_s(pos_rx_frame, rx)
        change = np.nanmax(np.abs(new_tau - tau)) if np.size(tau) else 0.0
        tau = new_tau
        if change < tolerance_s:
            break
    else:
        raise RuntimeError(f"light-time iteration did not converge to {tolerance_s} s "
                           f"in {max_iterations} steps (last change {change:.3g} s)")
    pos_tx = np.asarray(state_function(t_receive_gpst, -tau), dtype=float)
    pos_rx_frame = rotate_about_z(pos_tx, omega * tau)
    rng = np.linalg.norm(pos_rx_frame - rx, axis=-1)
    return {"flight_time_s": tau, "transmit_offset_s": -tau, "satellite_position_m": pos_rx_frame,
            "satellite_position_transmit_frame_m": pos_tx, "range_m": rng,
            "sagnac_s": (rng - np.linalg.norm(pos_tx - rx, axis=-1)) / C_M_S,
            "iterations": iteration}


def equator_circumnavigation_sagnac_s(radius_m: float = GPS.ellipsoid_a_m,
                                      omega: float = OMEGA_GPS_RAD_S) -> float:
    """Sagnac time of a clock carried slowly once round the equator, ``2 omega pi R^2 / c^2``
    (Ashby 2003: 207.4 ns; eastward the carried clock lags, westward it leads)."""
    return 2.0 * omega * np.pi * radius_m**2 / C_M_S**2

