"""Broadcast Keplerian orbit and periodic clock term, evaluated for the simulator.

The user algorithm of IS-GPS-200 20.3.3.4.3 (Table 20-IV), which Galileo
(OS SIS ICD 5.1.1) and BeiDou MEO/IGSO (BDS-SIS-ICD-B1I 5.2.4.12) share, with
each system's own mu and Earth rotation rate from ``gnssrel.constants``.
Elements are mappings of the DEVELOPERS.md contract column names (arrays of
shape ``(n_sat,)``); times are GPST ``datetime64[ns]`` of shape ``(n_t,)`` (or ``(n_t, n_sat)``, one
time per satellite, e.g. transmission times);
results have shape ``(n_t, n_sat[, 3])``.

This is the simulator's own minimal copy, kept so that the demo data can be
generated without the orbit stage; ``gnssrel.orbits.keplerian`` is the
project's implementation of the same equations.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import C_M_S, SYSTEMS
from gnssrel.timescales import seconds_between

KEPLER_ITERATIONS = 12  # Newton steps; converged to 1e-15 rad for e <= 0.2


def system_constants(sv) -> tuple[np.ndarray, np.ndarray]:
    """(mu m^3/s^2, Earth rotation rad/s) per satellite name."""
    letters = [s[0] for s in np.atleast_1d(sv)]
    mu = np.array([SYSTEMS[c].gm_m3_s2 for c in letters])
    omega_e = np.array([SYSTEMS[c].omega_earth_rad_s for c in letters])
    return mu, omega_e


def eccentric_anomaly(mean_anomaly_rad: np.ndarray, e: np.ndarray) -> np.ndarray:
    """Solve Kepler's equation M = E - e sin E (IS-GPS-200 Table 20-IV) by Newton steps."""
    E = np.array(mean_anomaly_rad, dtype=np.float64, copy=True)
    for _ in range(KEPLER_ITERATIONS):
        E = E - (E - e * np.sin(E) - mean_anomaly_rad) / (1.0 - e * np.cos(E))
    return E


def kepler_positions(elements, t_gpst) -> dict[str, np.ndarray]:
    """ECEF position (m) and eccentric anomaly of broadcast elements at GPST times.

    Returns ``position_ecef_m`` (n_t, n_sat, 3) and ``eccentric_anomaly_rad`` (n_t, n_sat), and the
    corrected argument of latitude ``argument_of_latitude_rad`` and inclination ``inclination_rad``
    (Table 20-IV u_k, i_k; the J2 clock term of :mod:`gnssrel.simulate.survey` needs them).
    """
    el = {k: np.asarray(v) for k, v in elements.items()}
    mu, omega_e = system_constants(el["sv"])
    t = np.asarray(t_gpst, dtype="datetime64[ns]")
    t = t[:, None] if t.ndim == 1 else t                            # (n_t,) or (n_t, n_sat)
    tk = seconds_between(t, el["toe"][None, :])                     # Table 20-IV t_k
    a = el["sqrt_a_sqrt_m"] ** 2
    n = np.sqrt(mu / a**3) + el["delta_n_rad_per_s"]
    e = el["eccentricity"]
    E = eccentric_anomaly(el["mean_anomaly_rad"] + n * tk, e)
    nu = np.arctan2(np.sqrt(1.0 - e**2) * np.sin(E), np.cos(E) - e)
    phi = nu + el["perigee_argument_rad"]
    s2, c2 = np.sin(2 * phi), np.cos(2 * phi)
    u = phi + el["cus_rad"] * s2 + el["cuc_rad"] * c2
    r = a * (1.0 - e * np.cos(E)) + el["crs_m"] * s2 + el["crc_m"] * c2
    i = el["inclination_rad"] + el["cis_rad"] * s2 + el["cic_rad"] * c2 + el["idot_rad_per_s"] * tk
    node = (el["omega0_rad"] + (el["omega_dot_rad_per_s"] - omega_e) * tk
            - omega_e * el["toe_sow_s"])
    xp, yp = r * np.cos(u), r * np.sin(u)
    pos = np.stack([xp * np.cos(node) - yp * np.cos(i) * np.sin(node),
                    xp * np.sin(node) + yp * np.cos(i) * np.cos(node),
                    yp * np.sin(i)], axis=-1)
    return {"position_ecef_m": pos, "eccentric_anomaly_rad": E, "argument_of_latitude_rad": u,
            "inclination_rad": i}


def periodic_term_s(elements, eccentric_anomaly_rad) -> np.ndarray:
    """Periodic relativistic clock term F e sqrt(A) sin E, s (IS-GPS-200 20.3.3.3.3.1)."""
    mu, _ = system_constants(elements["sv"])
    f = -2.0 * np.sqrt(mu) / C_M_S**2
    return f * np.asarray(elements["eccentricity"]) * np.asarray(elements["sqrt_a_sqrt_m"]) \
        * np.sin(eccentric_anomaly_rad)
