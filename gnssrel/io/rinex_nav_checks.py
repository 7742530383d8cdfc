"""Physical ranges of the fields of broadcast navigation records, and the time checks.

A value outside its range cannot be a broadcast value (a garbled digit, an exponent
flipped, ``9.99E+99`` written for "unknown"): the record is refused and counted,
never read.  The bounds are the ranges the message formats can carry, or the
physics of the orbits, with a margin; every record of the real files in the
reference data lies inside them (checked when the bounds were set).

Sources (all "from memory" unless a section is named):
* clock a0/a1/a2: the largest values the message fields can hold -- GPS af0 22 bits
  x 2^-31 s (IS-GPS-200 Table 20-III: +-9.8e-4 s), Galileo af0 31 bits x 2^-34 s
  (OS SIS ICD Table 57: +-0.0625 s), GLONASS tau_n 22 bits x 2^-30 s (+-2e-3 s);
  af1 at most 21 bits x 2^-46 (Galileo: 1.5e-8), af2 at most 8 bits x 2^-55 (GPS:
  3.6e-15).  Bounds 0.1 s, 1e-7, 1e-12 keep an order of magnitude of margin.
* sqrt(A): nominal semi-major axes GPS 26 560 km (sqrt 5153.7), Galileo 29 600 km
  (5440.6; E14/E18 in their eccentric orbit 27 977 km, 5289), BeiDou MEO 27 906 km
  (5282.6) and GEO/IGSO 42 164 km (6493.4), QZSS 42 164 km.
* eccentricity: GPS below 0.03, BeiDou and QZSS IGSO about 0.075 (QZSS, the largest
  by design); Galileo E14/E18 are at 0.16-0.17 after their 2014 launch anomaly, so
  Galileo gets 0.25 and the others 0.15 (a bound of 0.1 would refuse nothing real
  but leaves QZSS little margin).
* inclination 0 to 1.3 rad (GPS 55 deg, BeiDou GEO near 0); Keplerian angles within
  one turn either side (writers use [0, 2 pi) or [-pi, pi)); rates (delta n,
  Omega dot, i dot) below 1e-6 rad/s (real values ~1e-8 and below); harmonic terms:
  angles below 0.01 rad, radii below 5 km.
* GLONASS: orbit radius 25 510 km, so each coordinate within 3e7 m and speed
  components within 5 km/s; luni-solar accelerations (field 5 bits x 2^-30 km/s^2,
  GLONASS ICD 4.4) within 1e-3 m/s^2; frequency channel -7 ... +13 (ICD 3.3.1.1,
  +7 ... +13 were planned, never used).
* CNAV-type rates (issue 14): A dot within 10 m/s (IS-GPS-200 Table 30-I: 25 bits x 2^-21 m/s,
  +-8 m/s), Delta n0 dot within 1e-9 rad/s^2 (23 bits x 2^-57 semicircles/s^2, +-9e-11);
  BRD400DLR 2023-071 reaches 0.21 m/s and 7e-13 rad/s^2 (QZSS).
* NavIC: geosynchronous, sqrt(A) as QZSS (BRD400DLR: 6493.3-6493.5).
* SBAS GEO message (RTCA DO-229 message type 9, field ranges from memory): X, Y within
  +-4.3e7 m, Z +-6.7e6 m (bounds 5e7), X/Y dot +-41 m/s and Z dot +-524 m/s (bound 600),
  accelerations +-0.0064 / +-0.032 m/s^2 (bound 0.05), a_Gf0 +-9.5e-7 s, a_Gf1 +-1.2e-10;
  BRD400DLR and MOJN reach 4.22e7 m, 106 m/s, 0.032 m/s^2, 9.5e-7 s.
* every other filled field: below 1e10 in magnitude, which keeps the marker
  0.999999999999E+09 the format documents for "unknown" (RINEX 3.05 Table A6 note
  on the transmission time) and refuses 9.99E+99.
"""

from __future__ import annotations

import numpy as np

_KEPLER = {
    "clock_bias_s": (-0.1, 0.1),
    "clock_drift_s_per_s": (-1e-7, 1e-7),
    "clock_drift_rate_s_per_s2": (-1e-12, 1e-12),
    "crs_m": (-5e3, 5e3), "crc_m": (-5e3, 5e3),
    "cuc_rad": (-0.01, 0.01), "cus_rad": (-0.01, 0.01),
    "cic_rad": (-0.01, 0.01), "cis_rad": (-0.01, 0.01),
    "delta_n_rad_per_s": (-1e-6, 1e-6),
    "omega_dot_rad_per_s": (-1e-6, 1e-6),
    "idot_rad_per_s": (-1e-6, 1e-6),
    "mean_anomaly_rad": (-2 * np.pi - 1e-6, 2 * np.pi + 1e-6),
    "omega0_rad": (-2 * np.pi - 1e-6, 2 * np.pi + 1e-6),
    "perigee_argument_rad": (-2 * np.pi - 1e-6, 2 * np.pi + 1e-6),
    "inclination_rad": (0.0, 1.3),
    "toe_sow_s": (0.0, 604800.0),
    "eccentricity": (0.0, 0.15),
    "a_dot_m_per_s": (-10.0, 10.0),
    "delta_n_dot_rad_per_s2": (-1e-9, 1e-9),
}

RANGES = {
    "G": {**_KEPLER, "sqrt_a_sqrt_m": (4900.0, 5400.0), "week": (0, 9999)},
    "J": {**_KEPLER, "sqrt_a_sqrt_m": (6200.0, 6700.0), "week": (0, 9999)},
    "E": {**_KEPLER, "sqrt_a_sqrt_m": (5150.0, 5700.0), "eccentricity": (0.0, 0.25),
          "week": (0, 9999)},
    "C": {**_KEPLER, "sqrt_a_sqrt_m": (5000.0, 6700.0), "week": (0, 9999)},
    "I": {**_KEPLER, "sqrt_a_sqrt_m": (6200.0, 6700.0), "week": (0, 9999)},
    "S": {
        "clock_bias_s": (-1e-3, 1e-3), "clock_drift_s_per_s": (-1e-7, 1e-7),
        "x_m": (-5e7, 5e7), "y_m": (-5e7, 5e7), "z_m": (-5e7, 5e7),
        "vx_m_per_s": (-600.0, 600.0), "vy_m_per_s": (-600.0, 600.0), "vz_m_per_s": (-600.0, 600.0),
        "ax_m_per_s2": (-0.05, 0.05), "ay_m_per_s2": (-0.05, 0.05), "az_m_per_s2": (-0.05, 0.05),
    },
    "R": {
        "clock_bias_s": (-0.1, 0.1),
        "relative_frequency_bias": (-1e-7, 1e-7),
        "x_m": (-3e7, 3e7), "y_m": (-3e7, 3e7), "z_m": (-3e7, 3e7),
        "vx_m_per_s": (-5e3, 5e3), "vy_m_per_s": (-5e3, 5e3), "vz_m_per_s": (-5e3, 5e3),
        "ax_m_per_s2": (-1e-3, 1e-3), "ay_m_per_s2": (-1e-3, 1e-3), "az_m_per_s2": (-1e-3, 1e-3),
        "frequency_channel": (-7, 13),
    },
}
ANY_FIELD_LIMIT = 1e10

# toe (the week and seconds of the file) against toc (the epoch line): the same
# broadcast set, so they lie within hours of each other in every real file (0 in
# most); two days apart means the week (or toe) was garbled.
MAX_TOE_TOC_S = 2 * 86400.0

# A record whose reference time lies farther than this outside the central span of
# the file's records (10 % to 90 % quantiles) is refused: a garbled week or year.
# Three days: the ELKO 2018-210 file carries an unhealthy C16 record 2.3 days after
# its 90 % quantile, which a reader must keep (it is what was broadcast); a garbled
# week or year moves a record by a week or more.
OUTLIER_MARGIN_S = 3 * 86400.0
OUTLIER_QUANTILES = (0.1, 0.9)


def out_of_range(letter, cols, healthy):
    """{field name: (n_records,) bool}, True where a filled value lies outside its range.

    The physical ranges apply to the records the satellite marks healthy
    (``healthy``, (n_records,) bool); an unhealthy record is kept as broadcast (no
    stage computes a state from it: status "unhealthy") and only needs finite values
    below :data:`ANY_FIELD_LIMIT` -- real files carry unhealthy records of satellites
    in test or in manoeuvre with impossible orbits (ELKO 2018-210: C16 with sqrt(A)
    1028-1991 and e 0.25-0.49, health 1).
    """
    ranges = RANGES.get(letter, {})
    out = {}
    for name, values in cols.items():
        v = np.asarray(values, dtype=np.float64)
        lo, hi = ranges.get(name, (-ANY_FIELD_LIMIT, ANY_FIELD_LIMIT))
        outside = (v < lo) | (v > hi)
        if name in ranges and name not in ("week", "frequency_channel"):
            outside &= healthy
        bad = outside | (np.abs(v) >= ANY_FIELD_LIMIT)
        if bad.any():
            out[name] = bad
    return out


def far_from_bulk(times_ns):
    """(n,) bool: reference times (int64 ns) far outside the central span of all of them.

    The span is taken between robust quantiles so that a few garbled records cannot
    widen it; multi-day files keep all their records (the margin is two days beyond
    the 10-90 % span).
    """
    t = np.asarray(times_ns, dtype=np.int64)
    if t.size < 3:
        return np.zeros(t.size, dtype=bool)
    lo, hi = np.quantile(t.astype(np.float64), OUTLIER_QUANTILES)
    margin = OUTLIER_MARGIN_S * 1e9
    return (t < lo - margin) | (t > hi + margin)
