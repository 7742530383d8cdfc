"""Record layouts of the navigation messages beyond the legacy ones: RINEX 4 CNAV, CNV2,
CNV1, NavIC LNAV and SBAS, and the RINEX 4 STO / EOP / ION records.

Each layout is a tuple of lines of field names (None: spare or not kept); the first
line holds the three fields after the epoch (3D19.12 from column 24), every other
line four fields (4X,4D19.12), as in every RINEX 3/4 navigation record.

Sources: RINEX 4.00 (IGS/RTCM, 2021) section 5.2 and its appendix tables of the
navigation records (GPS CNAV/CNV2, QZSS CNAV/CNV2, BeiDou CNV1/CNV2, NavIC LNAV,
SBAS), and section 5.3-5.5 (STO, EOP, ION).  The table numbers are not given here
because they were written from memory; every field position below was checked
against the text of BRD400DLR_S_20230710000_01D_MN (2023-071, a RINEX 4.00 file):
e.g. G01 CNAV line 3 field 1 is 542700 s, the prediction time t_op of the previous
week, not a toe (the CNAV toe is the epoch of the record, t_oe = t_oc); BeiDou CNAV
line 5 field 3 is the satellite type (3 for the MEO C19).

What RINEX stores for the CNAV orbit (RINEX 4.00 notes, from memory; consistent with
the file): ``sqrt_a_sqrt_m`` is sqrt(A_0) with A_0 = A_ref + Delta A already formed by
the writer (IS-GPS-200 30.3.3.1.3 Table 30-II: A_ref = 26 559 710 m; BDS-SIS-ICD-B1C
1.0, user algorithm, section from memory: A_ref = 27 906 100 m MEO, 42 162 200 m IGSO/GEO), and ``omega_dot_rad_per_s``
the full rate Omega_dot_ref + Delta Omega_dot (Omega_dot_ref = -2.6e-9 semicircles/s),
both in the units of the legacy records; A_dot (m/s) and Delta n_0 dot (rad/s^2) are
extra fields.  G01 CNAV of 2023-071: sqrt(A) 5153.66 (A 26 560 km, not a Delta A of a
few hundred metres) and Omega dot -7.43e-9 rad/s (the full rate) confirm this.
"""

from __future__ import annotations

import math
import re

# ----------------------------------------------------------------- ephemeris records
_CNAV_ORBIT = (
    ("clock_bias_s", "clock_drift_s_per_s", "clock_drift_rate_s_per_s2"),
    ("a_dot_m_per_s", "crs_m", "delta_n_rad_per_s", "mean_anomaly_rad"),
    ("cuc_rad", "eccentricity", "cus_rad", "sqrt_a_sqrt_m"),
)
_GPS_CNAV = _CNAV_ORBIT + (
    ("prediction_sow_s", "cic_rad", "omega0_rad", "cis_rad"),
    ("inclination_rad", "crc_m", "perigee_argument_rad", "omega_dot_rad_per_s"),
    ("idot_rad_per_s", "delta_n_dot_rad_per_s2", "urai_ned0", "urai_ned1"),
    ("urai_ed", "health", "tgd_s", "urai_ned2"),
    ("isc_l1ca_s", "isc_l2c_s", "isc_l5i5_s", "isc_l5q5_s"),
)
_BDS_CNAV = _CNAV_ORBIT + (
    ("toe_sow_s", "cic_rad", "omega0_rad", "cis_rad"),
    ("inclination_rad", "crc_m", "perigee_argument_rad", "omega_dot_rad_per_s"),
    ("idot_rad_per_s", "delta_n_dot_rad_per_s2", "satellite_type", "prediction_sow_s"),
    ("sisai_oe", "sisai_ocb", "sisai_oc1", "sisai_oc2"),
)
_BDS_TAIL = (("sismai", "health", "integrity_flags", "iodc"),
             ("transmission_sow_s", None, None, "iode"))

MESSAGE_FIELDS = {
    # GPS / QZSS CNAV (L2C, L5): 9 lines; CNV2 (L1C): the L1C ISCs add a line, 10 lines.
    ("G", "CNAV"): _GPS_CNAV + (("transmission_sow_s", "transmission_week", None, None),),
    ("J", "CNAV"): _GPS_CNAV + (("transmission_sow_s", "transmission_week", None, None),),
    ("G", "CNV2"): _GPS_CNAV + (("isc_l1cd_s", "isc_l1cp_s", None, None),
                                ("transmission_sow_s", "transmission_week", None, None)),
    ("J", "CNV2"): _GPS_CNAV + (("isc_l1cd_s", "isc_l1cp_s", None, None),
                                ("transmission_sow_s", "transmission_week", None, None)),
    # BeiDou-3 B-CNAV1 (B1C) and B-CNAV2 (B2a): 10 lines; the group delay line differs.
    ("C", "CNV1"): _BDS_CNAV + (("isc_b1cd_s", None, "tgd_b1cp_s", "tgd_b2ap_s"),) + _BDS_TAIL,
    ("C", "CNV2"): _BDS_CNAV + ((None, "isc_b2ad_s", "tgd_b1cp_s", "tgd_b2ap_s"),) + _BDS_TAIL,
}

# NavIC LNAV (RINEX 3.04 / 4.00 IRNSS record): the GPS layout with IODEC in the IODE
# slot, the week aligned to the GPS week (BRD400DLR: week 2253 on 2023-03-12, GPS week
# 2253), the user range accuracy in metres.  8 lines.
NAVIC_FIELDS = (
    ("clock_bias_s", "clock_drift_s_per_s", "clock_drift_rate_s_per_s2"),
    ("iode", "crs_m", "delta_n_rad_per_s", "mean_anomaly_rad"),
    ("cuc_rad", "eccentricity", "cus_rad", "sqrt_a_sqrt_m"),
    ("toe_sow_s", "cic_rad", "omega0_rad", "cis_rad"),
    ("inclination_rad", "crc_m", "perigee_argument_rad", "omega_dot_rad_per_s"),
    ("idot_rad_per_s", None, "week", None),
    ("accuracy_m", "health", "tgd_s", None),
    ("transmission_sow_s", None, None, None),
)

# SBAS (RINEX 3.04 / 4.00 SBAS record): a_Gf0, a_Gf1, message frame time (seconds of
# the GPS week); position, velocity, acceleration in km, km/s, km/s^2 (WGS-84), health,
# accuracy code (URA), IODN.  4 lines.
SBAS_FIELDS = (
    ("clock_bias_s", "clock_drift_s_per_s", "transmission_sow_s"),
    ("x_m", "vx_m_per_s", "ax_m_per_s2", "health"),
    ("y_m", "vy_m_per_s", "ay_m_per_s2", "accuracy_code"),
    ("z_m", "vz_m_per_s", "az_m_per_s2", "iodn"),
)

# CNAV-type records: the week comes from the epoch (BeiDou CNAV records carry no week; GPS/QZSS
# give only the week of t_tm, kept as ``transmission_week``); for GPS/QZSS the epoch is also
# the reference time (t_oe = t_oc, IS-GPS-200 30.3.3.1.1 as read here; the file's line-3
# field is t_op, BRD400DLR G01: 542700 s for an epoch at 5400 s).
TOE_FROM_EPOCH = frozenset(k for k in MESSAGE_FIELDS if k[0] in "GJ")
NO_WEEK_FIELD = frozenset(k for k in MESSAGE_FIELDS)

# BeiDou-3 satellite type in CNV1/CNV2 records (BDS-SIS-ICD-B1C 1.0 / RINEX 4.00, from
# memory; the file gives 3 for MEO C19-C37 and 2 for IGSO C38-C40).
BDS_SATELLITE_TYPES = {1: "GEO", 2: "IGSO", 3: "MEO"}


# ----------------------------------------------------------------- STO, EOP, ION
# RINEX 4.00 5.3-5.5 (from memory; checked on BRD400DLR): after the marker line, a line
# "4X, epoch (I4,5(1X,I2.2)), ..." then 4X,4D19.12 lines.
#   STO: epoch, 1X,A4 time-offset code (GPUT, GAGP, BDGA, IRGP, ...), 1X,A5 SBAS id,
#        1X,A18 UTC id; next line t_tm (seconds of the week), a0 (s), a1 (s/s), a2 (s/s^2).
#   EOP: epoch, x_p, dx_p/dt, d2x_p/dt2 (arcsec, /day, /day^2); next line (4X,19X) y_p and
#        its rates; next line t_tm, dUT1 (s), its rate (s/day), second rate (s/day^2).
#   ION: epoch and the coefficients (Klobuchar 8 + region code; NeQuick-G 3 + flags;
#        BDGIM 9 coefficients alpha1 ... alpha9, in TECu).
EPOCH_TEXT = re.compile(r"^    (\d{4}) (\d\d) (\d\d) (\d\d) (\d\d) (\d\d)")
FIELD_STARTS = (23, 42, 61)
CONTINUATION_STARTS = (4, 23, 42, 61)
ION_COEFFICIENTS = {"klobuchar": 8, "nequick_g": 3, "bdgim": 9}


def epoch_of(line):
    """'yyyy-mm-ddThh:mm:ss' of a STO/EOP/ION epoch line, or None when it cannot be read."""
    m = EPOCH_TEXT.match(line)
    if not m:
        return None
    y, mo, d, h, mi, s = (int(g) for g in m.groups())
    if not (1 <= mo <= 12 and 1 <= d <= 31 and h <= 23 and mi <= 59 and s <= 59):
        return None
    return f"{y:04d}-{mo:02d}-{d:02d}T{h:02d}:{mi:02d}:{s:02d}"


def values_of(lines, start, count, number):
    """Numbers of the fields of lines[start + 1 : start + count] (first line: 3 fields
    after the epoch, then 4 per line); ``number(text, line_index, line, what)`` reads one
    field strictly (None when blank)."""
    out = []
    for k in range(1, count):
        line = lines[start + k]
        for a in (FIELD_STARTS if k == 1 else CONTINUATION_STARTS):
            out.append(number(line[a:a + 19], start + k, line, f"columns {a + 1}-{a + 19}"))
    return out


def finite(values, need):
    """The first ``need`` values all present and finite (below 1e10 in magnitude)?"""
    head = values[:need]
    return len(head) == need and all(v is not None and math.isfinite(v) and abs(v) < 1e10 for v in head)
