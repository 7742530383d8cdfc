"""Broadcast Keplerian orbits: the user algorithm of IS-GPS-200 Table 20-IV, with velocity.

One algorithm serves GPS, QZSS, Galileo and BeiDou; only the constants and the
BeiDou GEO rotation differ:

* GPS: IS-GPS-200 20.3.3.4.3, Table 20-IV (mu = 3.986005e14, Omega_e = 7.2921151467e-5).
* QZSS: IS-QZSS-PNT, same algorithm and constants as GPS.
* Galileo: Galileo OS SIS ICD 5.1.1 (mu = 3.986004418e14, Omega_e = 7.2921151467e-5).
* BeiDou: BDS-SIS-ICD-B1I 5.2.4.12 (CGCS2000 mu = 3.986004418e14, Omega_e = 7.2921150e-5);
  GEO satellites (``is_geo``) get the node in inertial form and the
  R_Z(Omega_e t_k) R_X(-5 deg) rotation (REFERENCE-CHECKS 2.1).
* NavIC: IRNSS SPS ICD 1.1, the GPS algorithm with the GPS values of mu and Omega_e
  (from memory; :data:`gnssrel.constants.NAVIC`).

CNAV-type records (GPS/QZSS CNAV and CNV2, IS-GPS-200 30.3.3.1.3 Table 30-II and IS-GPS-800;
BeiDou-3 CNV1/CNV2, BDS-SIS-ICD-B1C 1.0 / B2a 1.0, same form) add two optional columns,
``a_dot_m_per_s`` (A dot) and ``delta_n_dot_rad_per_s2`` (Delta n_0 dot); with them
A_k = A_0 + A_dot t_k, n_A = n_0 + Delta n_0 + Delta n_0 dot t_k / 2, M_k = M_0 + n_A t_k,
r_k = A_k (1 - e cos E_k) + corrections, where A_0 = (``sqrt_a_sqrt_m``)^2 (RINEX 4 stores
sqrt(A_ref + Delta A)) and ``omega_dot_rad_per_s`` is already Omega_dot_ref + Delta Omega_dot
(:mod:`gnssrel.io.rinex_nav_messages`).  Absent or NaN, both are 0 and the legacy algorithm
results, bit for bit.  ``semi_major_axis_m`` (A_k) is returned, and with the CNAV rates also
``sqrt_a_sqrt_m`` = sqrt(A_k), which the state builder keeps for the periodic term: IS-GPS-200
30.3.3.3.1.1 gives Delta t_r = F e sqrt(A) sin E_k for CNAV with "A" the semi-major axis of the
CNAV orbit, which we read as A_k at t (from memory; A_0 instead changes the term by
A_dot t_k / 2 A_0 of itself, < 2e-6 relative, below 1e-13 s).

Constants come from ``gnssrel.constants.SYSTEMS[letter]``.  Time from the
ephemeris reference epoch t_k is taken from full GPST datetimes differenced in
integer nanoseconds (``timescales.seconds_between``), so no week-crossover
folding is needed and BDT is handled by the reader's toe in GPST.  The node
term ``-Omega_e * toe`` uses toe counted from the start of the system's own
week (``toe_sow_s``, BDT for BeiDou), as the ICDs define Omega0 at that week start.

Velocity is the analytic time derivative of every step (harmonic corrections,
IDOT, node rate and Earth rotation included), not a finite difference.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from gnssrel.constants import SYSTEMS
from gnssrel.orbits.frames import ecef_to_eci, omega_cross_r, rotate_z
from gnssrel.timescales import SYSTEM_TIME_SCALE, seconds_between, to_week_seconds

KEPLER_TOLERANCE_RAD = 1e-15
KEPLER_MAX_ITERATIONS = 30
BEIDOU_GEO_TILT_RAD = np.deg2rad(-5.0)  # BDS-SIS-ICD-B1I 5.2.4.12: R_X(-5 deg)

ELEMENT_COLUMNS = (
    "toe", "sqrt_a_sqrt_m", "delta_n_rad_per_s", "mean_anomaly_rad", "eccentricity",
    "perigee_argument_rad", "cuc_rad", "cus_rad", "crc_m", "crs_m", "cic_rad", "cis_rad",
    "inclination_rad", "idot_rad_per_s", "omega0_rad", "omega_dot_rad_per_s",
)
"""Contract columns the algorithm reads (:data:`OPTIONAL_COLUMNS` where the table has them)."""
CNAV_COLUMNS = ("a_dot_m_per_s", "delta_n_dot_rad_per_s2")
OPTIONAL_COLUMNS = ("toe_sow_s", "is_geo") + CNAV_COLUMNS
KEPLER_SYSTEMS = ("G", "E", "C", "J", "I")


def solve_kepler(mean_anomaly_rad, eccentricity) -> np.ndarray:
    """Eccentric anomaly E from M = E - e sin E by vectorized Newton iteration.

    Iterates until every |dE| <= 1e-15 rad (or stops changing at machine
    precision); NaN inputs give NaN and do not hold the loop.
    """
    m = np.asarray(mean_anomaly_rad, dtype=np.float64)
    e = np.asarray(eccentricity, dtype=np.float64)
    big_e = m + e * np.sin(m)
    previous = np.inf
    for _ in range(KEPLER_MAX_ITERATIONS):
        step = (big_e - e * np.sin(big_e) - m) / (1.0 - e * np.cos(big_e))
        big_e = big_e - step
        worst = np.nanmax(np.abs(step)) if step.size and not np.all(np.isnan(step)) else 0.0
        if worst <= KEPLER_TOLERANCE_RAD or worst >= previous:
            break
        previous = worst
    return big_e


def _toe_seconds_of_week(elements: Mapping, toe, letter: str) -> np.ndarray:
    if "toe_sow_s" in elements:
        return np.asarray(elements["toe_sow_s"], dtype=np.float64)
    return to_week_seconds(toe, SYSTEM_TIME_SCALE[letter])[1]


def kepler_states(elements: Mapping, t_gpst, system: str, frame: str = "ecef") -> dict:
    """Satellite states from broadcast Keplerian elements at GPST times.

    elements: mapping of contract column names (``ELEMENT_COLUMNS``; optional
        ``toe_sow_s``, ``is_geo``) to arrays broadcastable with ``t_gpst``.
    t_gpst: datetime64[ns] GPST, any shape S broadcastable with the elements.
    system: RINEX letter ``G``, ``E``, ``C``, ``J`` or ``I``.
    frame: ``"ecef"`` (the system's Earth-fixed frame) or ``"eci"``: the ECEF frame
        frozen at the start of the system's week of toe, turned at the system's
        Omega_e (for GPS this is the algorithm without its Earth-rotation step,
        Omega_k = Omega0 + OmegaDot t_k).  For one ECI shared by all systems use
        ``gnssrel.orbits.frames.ecef_to_eci`` on the ECEF states.

    Returns a dict of arrays of shape S (vectors S + (3,)): ``position_ecef_m``,
    ``velocity_ecef_m_per_s`` (keys keep these names in the ECI case too; the
    caller labels the frame), ``eccentric_anomaly_rad``, ``argument_of_latitude_rad``
    (corrected u_k), ``radius_m``, ``inclination_rad`` (corrected i_k), ``tk_s``,
    ``semi_major_axis_m`` (A_k; A for legacy records).
    """
    if system not in KEPLER_SYSTEMS:
        raise ValueError(f"kepler_states handles {', '.join(KEPLER_SYSTEMS)}, not {system!r}")
    if frame not in ("ecef", "eci"):
        raise ValueError(f"frame must be 'ecef' or 'eci', not {frame!r}")
    const = SYSTEMS[system]
    mu, omega_e = const.gm_m3_s2, const.omega_earth_rad_s
    f = {k: np.asarray(elements[k], dtype=np.float64) for k in ELEMENT_COLUMNS if k != "toe"}
    toe = np.asarray(elements["toe"]).astype("datetime64[ns]")
    t = np.asarray(t_gpst).astype("datetime64[ns]")
    tk = seconds_between(t, toe)                       # Table 20-IV: t_k = t - toe
    tk = np.where(np.isnat(toe) | np.isnat(t), np.nan, tk)
    toe_sow = _toe_seconds_of_week(elements, toe, system)

    a = f["sqrt_a_sqrt_m"] ** 2                        # A = (sqrt A)^2
    n = np.sqrt(mu / a**3) + f["delta_n_rad_per_s"]    # n = n0 + delta n
    a_dot, n_dot = _cnav_rates(elements)
    m_rate = n                                         # dM_k/dt
    if a_dot is not None:                              # Table 30-II: A_k, n_A
        a = a + a_dot * tk
        m_rate = n + n_dot * tk
        n = n + 0.5 * n_dot * tk
    e = f["eccentricity"]
    m = f["mean_anomaly_rad"] + n * tk                 # M_k = M0 + n t_k
    big_e = solve_kepler(m, e)                         # M_k = E_k - e sin E_k
    sin_e, cos_e = np.sin(big_e), np.cos(big_e)
    one_minus = 1.0 - e * cos_e
    root = np.sqrt(1.0 - e * e)
    nu = np.arctan2(root * sin_e, cos_e - e)           # true anomaly
    phi = nu + f["perigee_argument_rad"]               # argument of latitude
    s2, c2 = np.sin(2 * phi), np.cos(2 * phi)
    u = phi + f["cus_rad"] * s2 + f["cuc_rad"] * c2    # second-harmonic corrections
    r = a * one_minus + f["crs_m"] * s2 + f["crc_m"] * c2
    inc = f["inclination_rad"] + f["cis_rad"] * s2 + f["cic_rad"] * c2 + f["idot_rad_per_s"] * tk

    # Derivatives (analytic): dE/dt, dnu/dt = dPhi/dt, then each correction.
    e_dot = m_rate / one_minus
    phi_dot = e_dot * root / one_minus
    u_dot = phi_dot * (1.0 + 2.0 * (f["cus_rad"] * c2 - f["cuc_rad"] * s2))
    r_dot = a * e * sin_e * e_dot + 2.0 * phi_dot * (f["crs_m"] * c2 - f["crc_m"] * s2)
    if a_dot is not None:
        r_dot = r_dot + a_dot * one_minus
    inc_dot = f["idot_rad_per_s"] + 2.0 * phi_dot * (f["cis_rad"] * c2 - f["cic_rad"] * s2)

    xp, yp = r * np.cos(u), r * np.sin(u)              # position in the orbital plane
    xp_dot = r_dot * np.cos(u) - r * u_dot * np.sin(u)
    yp_dot = r_dot * np.sin(u) + r * u_dot * np.cos(u)

    is_geo = np.asarray(elements.get("is_geo", False), dtype=bool) if system == "C" else np.False_
    # Corrected longitude of the node, Table 20-IV: Omega_k = Omega0 + (OmegaDot - Omega_e) t_k
    # - Omega_e toe.  BeiDou GEO (5.2.4.12): Omega_k = Omega0 + OmegaDot t_k - Omega_e toe, then
    # the rotation below.
    node_rate = f["omega_dot_rad_per_s"] - np.where(is_geo, 0.0, omega_e)
    node = f["omega0_rad"] + node_rate * tk - omega_e * toe_sow
    cn, sn, ci, si = np.cos(node), np.sin(node), np.cos(inc), np.sin(inc)
    pos = np.stack((xp * cn - yp * ci * sn, xp * sn + yp * ci * cn, yp * si), axis=-1)
    vel = np.stack((
        xp_dot * cn - yp_dot * ci * sn + yp * si * sn * inc_dot - node_rate * pos[..., 1],
        xp_dot * sn + yp_dot * ci * cn - yp * si * cn * inc_dot + node_rate * pos[..., 0],
        yp_dot * si + yp * ci * inc_dot), axis=-1)

    if system == "C" and np.any(is_geo):
        pos, vel = _beidou_geo_rotation(pos, vel, tk, is_geo, omega_e)
    if frame == "eci":
        week_start = toe - np.round(toe_sow * 1e9).astype("int64").astype("timedelta64[ns]")
        pos, vel = ecef_to_eci(pos, vel, t, week_start, omega_e)

    return {"position_ecef_m": pos, "velocity_ecef_m_per_s": vel,
            "eccentric_anomaly_rad": big_e, "argument_of_latitude_rad": u,
            "radius_m": r, "inclination_rad": inc,
            "tk_s": np.broadcast_to(tk, big_e.shape).copy(),
            "semi_major_axis_m": np.broadcast_to(a, big_e.shape).copy(),
            **({} if a_dot is None else {"sqrt_a_sqrt_m": np.sqrt(np.broadcast_to(a, big_e.shape))})}


def _cnav_rates(elements: Mapping):
    """(A dot, Delta n_0 dot) as arrays with NaN read as 0, or (None, None) when the
    records have neither (legacy messages: the algorithm stays as it was)."""
    if not any(k in elements for k in CNAV_COLUMNS):
        return None, None
    rates = [np.nan_to_num(np.asarray(elements.get(k, 0.0), dtype=np.float64)) for k in CNAV_COLUMNS]
    if not any(np.any(r != 0.0) for r in rates):
        return None, None
    return rates[0], rates[1]


def _beidou_geo_rotation(pos, vel, tk, is_geo, omega_e):
    """BDS-SIS-ICD-B1I 5.2.4.12: [X Y Z]_k = R_Z(Omega_e t_k) R_X(-5 deg) [X Y Z]_GK.

    R_X(phi) = [[1,0,0],[0,c,s],[0,-s,c]], R_Z(a) = [[c,s,0],[-s,c,0],[0,0,1]] (passive); the
    velocity adds d R_Z/dt (the GK frame turns at -Omega_e relative to the Earth).
    """
    c5, s5 = np.cos(BEIDOU_GEO_TILT_RAD), np.sin(BEIDOU_GEO_TILT_RAD)
    rx = np.array([[1.0, 0.0, 0.0], [0.0, c5, s5], [0.0, -s5, c5]])
    angle = omega_e * np.where(np.isnan(tk), 0.0, tk)
    p_tilt = pos @ rx.T
    v_tilt = vel @ rx.T
    # R_Z(angle) r = rotate_z(r, -angle) (passive); d(R_Z r)/dt = R_Z (-omega x r) for r fixed
    geo_pos = rotate_z(p_tilt, -angle)
    geo_vel = rotate_z(v_tilt - omega_cross_r(p_tilt, omega_e), -angle)
    mask = np.broadcast_to(np.asarray(is_geo)[..., None], pos.shape)
    return np.where(mask, geo_pos, pos), np.where(mask, geo_vel, vel)
