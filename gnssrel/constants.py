"""Physical and per-system constants, each with its published source.

SI units throughout; the unit is in the name where it is not obvious.
Status marks as in ``../shared/REFERENCE-CHECKS.md``: a value is *published*
when the cited document states it, *derived* when computed here from
published values.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

# --- Universal ---------------------------------------------------------------
C_M_S = 299_792_458.0
"""Speed of light in vacuum, m/s (exact; IS-GPS-200 20.3.4.3, SI definition)."""

# --- IERS Conventions (2010), Technical Note 36, Table 1.1 ---------------------
GM_EARTH_IERS_M3_S2 = 3.986004418e14
"""Geocentric gravitational constant (TT-compatible), IERS 2010 Table 1.1."""
W0_M2_S2 = 62_636_856.0
"""Potential of the geoid, IERS 2010 Table 1.1."""
L_G = 6.969290134e-10
"""1 - d(TT)/d(TCG), IERS 2010 Table 1.1 (defining constant; = W0/c^2)."""
J2_IERS = 1.0826359e-3
"""Dynamical form factor of the Earth, IERS 2010 Table 1.1."""
A_EARTH_IERS_M = 6_378_136.6
"""Equatorial radius of the Earth, IERS 2010 Table 1.1."""
OMEGA_EARTH_IERS_RAD_S = 7.292115e-5
"""Nominal mean angular velocity of the Earth, IERS 2010 Table 1.1."""
GM_SUN_M3_S2 = 1.32712442099e20
"""Heliocentric gravitational constant (TDB-compatible), IERS 2010 Table 1.1."""
GM_MOON_M3_S2 = 4.9028e12
"""Lunar gravitational constant, IERS 2010 Table 1.1 (Moon/Earth mass ratio x GM)."""

# --- Nominal GPS orbit and clock offset ----------------------------------------
GPS_NOMINAL_SEMI_MAJOR_AXIS_M = 26_561_750.0
"""Nominal GPS semi-major axis, IS-GPS-200 Table 20-I notes (derived: 26 559.7 km
orbit radius is also quoted; this value is the common-practice nominal)."""
GPS_FACTORY_FREQUENCY_OFFSET = -4.4647e-10
"""Fractional offset of the satellite clock set before launch:
10.23 MHz -> 10.22999999543 MHz, IS-GPS-200 3.3.1.1 (published)."""
GPS_FUNDAMENTAL_FREQUENCY_HZ = 10.23e6
"""Fundamental frequency, IS-GPS-200 3.3.1.1 (published)."""

SECONDS_PER_DAY = 86_400.0


@dataclass(frozen=True)
class SystemConstants:
    """What a system's interface specification fixes for its user algorithm."""

    letter: str
    name: str
    time_scale: str
    gm_m3_s2: float
    omega_earth_rad_s: float
    ellipsoid_a_m: float
    ellipsoid_inverse_flattening: float
    j2: float
    source: str

    @property
    def f_s_sqrt_m(self) -> float:
        """Relativistic constant F = -2 sqrt(mu) / c^2 in s/m^0.5 (derived;
        IS-GPS-200 20.3.3.3.3.1 prints -4.442807633e-10 for GPS)."""
        return -2.0 * math.sqrt(self.gm_m3_s2) / C_M_S**2


GPS = SystemConstants(
    letter="G", name="GPS", time_scale="GPST",
    gm_m3_s2=3.986005e14,            # IS-GPS-200 Table 20-IV (WGS-84 value for the user algorithm)
    omega_earth_rad_s=7.2921151467e-5,  # IS-GPS-200 Table 20-IV
    ellipsoid_a_m=6_378_137.0,       # WGS-84, NGA TR8350.2
    ellipsoid_inverse_flattening=298.257223563,  # WGS-84, NGA TR8350.2
    j2=1.08262982131e-3,             # WGS-84 C20 unnormalised, NGA TR8350.2 (from memory)
    source="IS-GPS-200 Table 20-IV; WGS-84 (NGA TR8350.2)",
)
QZSS = SystemConstants(
    letter="J", name="QZSS", time_scale="QZSST",
    gm_m3_s2=3.986005e14,            # IS-QZSS-PNT 5.x: same user algorithm as GPS
    omega_earth_rad_s=7.2921151467e-5,
    ellipsoid_a_m=6_378_137.0, ellipsoid_inverse_flattening=298.257223563,
    j2=1.08262982131e-3,
    source="IS-QZSS-PNT (GPS user algorithm and constants)",
)
GALILEO = SystemConstants(
    letter="E", name="Galileo", time_scale="GST",
    gm_m3_s2=3.986004418e14,         # Galileo OS SIS ICD 5.1.1
    omega_earth_rad_s=7.2921151467e-5,  # Galileo OS SIS ICD 5.1.1
    ellipsoid_a_m=6_378_137.0, ellipsoid_inverse_flattening=298.257222101,  # GTRF (GRS-80)
    j2=1.0826359e-3,                 # IERS 2010 (GTRF is ITRF-aligned)
    source="Galileo OS SIS ICD 5.1.1",
)
BEIDOU = SystemConstants(
    letter="C", name="BeiDou", time_scale="BDT",
    gm_m3_s2=3.986004418e14,         # BDS-SIS-ICD-B1I 5.2.4 (CGCS2000)
    omega_earth_rad_s=7.2921150e-5,  # BDS-SIS-ICD-B1I 5.2.4 (CGCS2000)
    ellipsoid_a_m=6_378_137.0, ellipsoid_inverse_flattening=298.257222101,  # CGCS2000
    j2=1.0826359e-3,
    source="BDS-SIS-ICD-B1I 3.0, 5.2.4 (CGCS2000)",
)
GLONASS = SystemConstants(
    letter="R", name="GLONASS", time_scale="GLONASST",
    gm_m3_s2=3.986004418e14,         # GLONASS ICD 2008 ed. 5.1, Table 3.2 (PZ-90)
    omega_earth_rad_s=7.292115e-5,   # GLONASS ICD 2008, Table 3.2
    ellipsoid_a_m=6_378_136.0,       # GLONASS ICD 2008, Table 3.2
    ellipsoid_inverse_flattening=298.25784,  # GLONASS ICD 2008, Table 3.2
    j2=1.0826257e-3,                 # GLONASS ICD 2008 A.3.1.2 (J02 = 1082625.75e-9)
    source="GLONASS ICD 2008 ed. 5.1, Table 3.2 and A.3.1.2 (PZ-90.02)",
)

NAVIC = SystemConstants(
    letter="I", name="NavIC", time_scale="IRNST",
    gm_m3_s2=3.986005e14,            # IRNSS SPS ICD 1.1, user algorithm: the GPS value (from memory)
    omega_earth_rad_s=7.2921151467e-5,  # IRNSS SPS ICD 1.1 (from memory), as GPS
    ellipsoid_a_m=6_378_137.0, ellipsoid_inverse_flattening=298.257223563,  # WGS-84
    j2=1.08262982131e-3,             # WGS-84, as GPS (from memory)
    source="IRNSS SPS ICD 1.1 (GPS values of mu, Omega_e and so F; from memory); WGS-84",
)
SBAS = SystemConstants(
    letter="S", name="SBAS", time_scale="GPST",
    gm_m3_s2=3.986005e14,            # WGS-84 as used by GPS (RTCA DO-229 works in WGS-84; from memory)
    omega_earth_rad_s=7.2921151467e-5,  # WGS-84 / IS-GPS-200 value (from memory)
    ellipsoid_a_m=6_378_137.0, ellipsoid_inverse_flattening=298.257223563,  # WGS-84
    j2=1.08262982131e-3,
    source="RTCA DO-229 (WGS-84 frame, GPST; from memory); WGS-84 (NGA TR8350.2)",
)

SYSTEMS: dict[str, SystemConstants] = {s.letter: s for s in (GPS, GALILEO, BEIDOU, QZSS, GLONASS, NAVIC, SBAS)}
"""Constants by RINEX system letter."""

SYSTEM_ORDER = "GECJR"
"""The systems gnssrel handles by default, in the order tables and plots show them."""

EXTRA_SYSTEM_ORDER = "IS"
"""Systems handled when asked for (``--systems I``, ``systems="IS"``) but not by default:
NavIC and SBAS (issue 14).  Kept out of :data:`SYSTEM_ORDER` so that the default runs, the
tables and the figures of the other systems stay as they were."""

ALL_SYSTEM_ORDER = SYSTEM_ORDER + EXTRA_SYSTEM_ORDER
"""Every system letter gnssrel handles, in display order."""

# BeiDou satellites in geostationary orbit (PRN 1-5 and 59-63), BDS-SIS-ICD-B1I 5.2.4.12
# note; common practice identifies them by PRN.
BEIDOU_GEO_PRNS = frozenset((1, 2, 3, 4, 5, 59, 60, 61, 62, 63))

