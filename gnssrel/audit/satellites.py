"""Broadcast satellite position and clock at arbitrary (per-observation) transmit times.

The receiver audit needs each satellite at its own transmit time, which differs
per observation; so it picks one ephemeris record per observation and evaluates
the Keplerian model there (not on a fixed grid as ``gnssrel.orbits`` does).

* Record choice (common practice): the healthy record of the satellite whose
  ``toe`` is nearest to the time, within ``max_age_s`` (2 h: half the GPS 4-h
  fit interval, IS-GPS-200 20.3.4.4).
* Orbit: IS-GPS-200 Table 20-IV (GPS, QZSS), the same algorithm in Galileo OS
  SIS ICD 5.1.1 and BDS-SIS-ICD-B1I 3.0 5.2.4.12 (with the extra rotation of the
  geostationary satellites), each with its own mu and Earth rotation rate from
  ``gnssrel.constants``.
* Clock: a_f0 + a_f1 (t - toc) + a_f2 (t - toc)^2, IS-GPS-200 20.3.3.3.3.1
  (same form in the other ICDs); the periodic relativistic term
  F e sqrt(A) sin E of the same section is returned separately.

All arrays are 1-D over observations, ``(n,)``, positions ``(n, 3)``.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import BEIDOU_GEO_PRNS, C_M_S, SYSTEMS
from gnssrel.timescales import seconds_between, week_crossover

MAX_EPHEMERIS_AGE_S = 7_200.0

_KEPLER_COLUMNS = ("sqrt_a_sqrt_m", "eccentricity", "mean_anomaly_rad", "delta_n_rad_per_s",
                   "perigee_argument_rad", "cuc_rad", "cus_rad", "crc_m", "crs_m", "cic_rad",
                   "cis_rad", "inclination_rad", "idot_rad_per_s", "omega0_rad", "omega_dot_rad_per_s",
                   "clock_bias_s", "clock_drift_s_per_s", "clock_drift_rate_s_per_s2")


def select_records(ephemerides, sv, t_gpst, max_age_s: float = MAX_EPHEMERIS_AGE_S,
                   include_unhealthy: bool = False) -> np.ndarray:
    """Row index (into ``ephemerides``) of the record used for each (sv, time); -1 when none.

    ``ephemerides``: one system's table as in the data model (columns ``sv``, ``toe``,
    ``health``); ``sv``, ``t_gpst``: arrays ``(n,)``.
    """
    sv = np.asarray(sv)
    t = np.asarray(t_gpst, dtype="datetime64[ns]")
    out = np.full(sv.shape, -1, dtype=np.int64)
    eph_sv = ephemerides["sv"].to_numpy()
    toe = ephemerides["toe"].to_numpy().astype("datetime64[ns]")
    usable = np.ones(len(ephemerides), bool) if include_unhealthy else \
        (ephemerides["health"].to_numpy() == 0)
    for name in np.unique(sv):                      # a loop over satellites, vectorized over times
        rows = np.flatnonzero((eph_sv == name) & usable)
        if rows.size == 0:
            continue
        rows = rows[np.argsort(toe[rows], kind="stable")]
        mine = np.flatnonzero(sv == name)
        pos = np.searchsorted(toe[rows], t[mine])
        lo, hi = np.clip(pos - 1, 0, rows.size - 1), np.clip(pos, 0, rows.size - 1)
        d_lo = np.abs(seconds_between(t[mine], toe[rows[lo]]))
        d_hi = np.abs(seconds_between(t[mine], toe[rows[hi]]))
        best = np.where(d_hi < d_lo, rows[hi], rows[lo])
        ok = np.minimum(d_lo, d_hi) <= max_age_s
        out[mine] = np.where(ok, best, -1)
    return out


def record_arrays(ephemerides, rows) -> dict[str, np.ndarray]:
    """The Keplerian and clock columns of the chosen rows (NaN where ``rows`` is -1)."""
    rows = np.asarray(rows)
    valid = rows >= 0
    take = np.where(valid, rows, 0)
    out = {}
    for name in _KEPLER_COLUMNS:
        col = ephemerides[name].to_numpy(dtype=float)[take] if len(ephemerides) else np.zeros(rows.shape)
        out[name] = np.where(valid, col, np.nan)
    for name in ("toe", "toc"):
        col = ephemerides[name].to_numpy().astype("datetime64[ns]")[take] if len(ephemerides) \
            else np.zeros(rows.shape, "datetime64[ns]")
        out[name] = np.where(valid, col, np.datetime64("NaT"))
    return out


def kepler_position(rec: dict, t_gpst, system: str, sv=None, offset_s=0.0):
    """(ECEF position ``(n, 3)`` in the frame of ``t_gpst``, eccentric anomaly, argument of
    latitude, inclination), the angles ``(n,)`` in radians.  The time is ``t_gpst + offset_s``
    (the float offset keeps sub-nanosecond transmit times).

    IS-GPS-200 Table 20-IV; ``sv`` names are needed for BeiDou GEO satellites.
    """
    const = SYSTEMS[system]
    mu, omega_e = const.gm_m3_s2, const.omega_earth_rad_s
    tk = week_crossover(seconds_between(t_gpst, rec["toe"]) + offset_s)
    a = rec["sqrt_a_sqrt_m"] ** 2
    n = np.sqrt(mu / a**3) + rec["delta_n_rad_per_s"]             # corrected mean motion
    m = rec["mean_anomaly_rad"] + n * tk
    e = rec["eccentricity"]
    ecc = m.copy()
    for _ in range(30):                                            # Kepler's equation, Newton steps
        step = (ecc - e * np.sin(ecc) - m) / (1.0 - e * np.cos(ecc))
        ecc = ecc - step
        if np.nanmax(np.abs(step), initial=0.0) < 1e-14:
            break
    nu = np.arctan2(np.sqrt(1.0 - e**2) * np.sin(ecc), np.cos(ecc) - e)
    phi = nu + rec["perigee_argument_rad"]
    s2, c2 = np.sin(2 * phi), np.cos(2 * phi)
    u = phi + rec["cus_rad"] * s2 + rec["cuc_rad"] * c2
    r = a * (1.0 - e * np.cos(ecc)) + rec["crs_m"] * s2 + rec["crc_m"] * c2
    inc = rec["inclination_rad"] + rec["idot_rad_per_s"] * tk + rec["cis_rad"] * s2 + rec["cic_rad"] * c2
    xp, yp = r * np.cos(u), r * np.sin(u)
    toe_sow = _seconds_of_week(rec["toe"], system)
    geo = np.zeros(tk.shape, bool)
    if system == "C" and sv is not None:
        geo = np.isin(np.char.ljust(np.asarray(sv, dtype=str), 3), [f"C{p:02d}" for p in BEIDOU_GEO_PRNS])
    # MEO/IGSO: longitude of the ascending node in the Earth-fixed frame.
    omega = rec["omega0_rad"] + (rec["omega_dot_rad_per_s"] - omega_e) * tk - omega_e * toe_sow
    # BDS GEO (BDS-SIS-ICD-B1I 3.0 5.2.4.12): node in inertial-like frame, then R_Z(w tk) R_X(-5 deg).
    omega_geo = rec["omega0_rad"] + rec["omega_dot_rad_per_s"] * tk - omega_e * toe_sow
    omega = np.where(geo, omega_geo, omega)
    co, so, ci, si = np.cos(omega), np.sin(omega), np.cos(inc), np.sin(inc)
    x = xp * co - yp * ci * so
    y = xp * so + yp * ci * co
    z = yp * si
    if geo.any():
        x, y, z = _beidou_geo_rotation(x, y, z, omega_e * tk, geo)
    return np.stack([x, y, z], axis=-1), ecc, u, inc


def _beidou_geo_rotation(x, y, z, angle, geo):
    f = np.radians(-5.0)
    yg = y * np.cos(f) + z * np.sin(f)
    zg = -y * np.sin(f) + z * np.cos(f)
    ca, sa = np.cos(angle), np.sin(angle)
    xr = x * ca + yg * sa
    yr = -x * sa + yg * ca
    return np.where(geo, xr, x), np.where(geo, yr, y), np.where(geo, zg, z)


def _seconds_of_week(t_gpst, system: str) -> np.ndarray:
    """Seconds of week of GPST times counted on the system's own scale (BDT is GPST - 14 s)."""
    from gnssrel.timescales import GPS_EPOCH, SECONDS_PER_WEEK
    shift = 14.0 if system == "C" else 0.0
    s = seconds_between(t_gpst, GPS_EPOCH) - shift
    return np.mod(s, SECONDS_PER_WEEK)


def clock_polynomial_s(rec: dict, t_gpst, offset_s=0.0) -> np.ndarray:
    """Broadcast clock polynomial a_f0 + a_f1 dt + a_f2 dt^2 at ``t_gpst + offset_s``
    (IS-GPS-200 20.3.3.3.3.1)."""
    dt = week_crossover(seconds_between(t_gpst, rec["toc"]) + offset_s)
    return rec["clock_bias_s"] + rec["clock_drift_s_per_s"] * dt + rec["clock_drift_rate_s_per_s2"] * dt**2


def periodic_term_s(rec: dict, ecc_anomaly_rad, system: str) -> np.ndarray:
    """Periodic relativistic clock term F e sqrt(A) sin E (IS-GPS-200 20.3.3.3.3.1)."""
    return SYSTEMS[system].f_s_sqrt_m * rec["eccentricity"] * rec["sqrt_a_sqrt_m"] * np.sin(ecc_anomaly_rad)


def j2_clock_term_s(rec: dict, argument_of_latitude_rad, inclination_rad, system: str) -> np.ndarray:
    """J2 periodic clock term -(3/2) J2 (a_E^2 / (a c^2)) sqrt(mu/a) sin^2 i sin 2u
    (Kouba 2004, GPS Solutions 8:170-180; status M), u the argument of latitude."""
    const = SYSTEMS[system]
    a = rec["sqrt_a_sqrt_m"] ** 2
    return (-1.5 * const.j2 * const.ellipsoid_a_m**2 / (a * C_M_S**2) * np.sqrt(const.gm_m3_s2 / a)
            * np.sin(inclination_rad) ** 2 * np.sin(2.0 * argument_of_latitude_rad))
