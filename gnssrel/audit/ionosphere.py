"""Ionospheric delay: the broadcast Klobuchar model and the ionosphere-free code combination.

Klobuchar: IS-GPS-200 (Rev. H, 2013) 20.3.3.5.2.5 and Figure 20-4, the
single-frequency user algorithm with the eight coefficients alpha_n, beta_n of
subframe 4 page 18 (RINEX 3 header ``IONOSPHERIC CORR`` GPSA/GPSB).  It returns
the L1 group delay; other frequencies scale with (f_L1 / f)^2
(IS-GPS-200 20.3.3.3.3.2 for L2: gamma = (77/60)^2).

Ionosphere-free code combination (first order, common practice):
P_IF = (f1^2 P1 - f2^2 P2) / (f1^2 - f2^2).  The pair used per system is
:data:`CODE_PAIRS`, chosen so that the combination matches the signals the
broadcast satellite clock refers to:

* GPS and QZSS: L1 + L2 (the LNAV clock refers to the L1/L2 P(Y) combination,
  IS-GPS-200 20.3.3.3.3.2; no TGD in the combination).  C1W is preferred to C1C;
  with C1C the P1-C1 code bias of a few decimetres stays in the combination.
* Galileo: E1 + E5b (the I/NAV clock refers to E1/E5b, Galileo OS SIS ICD
  5.1.5), falling back to E1 + E5a (the F/NAV reference).
* BeiDou: B1I + B3I (the D1/D2 clock refers to B3I, BDS-SIS-ICD-B1I 3.0 5.2.4.10;
  the combination carries c TGD1 f1^2/(f1^2 - f3^2), see :func:`group_delay_m`).
* GLONASS FDMA: L1 + L2 (P code preferred).  Each satellite has its own carriers,
  L1 = 1602 + k 0.5625 MHz and L2 = 1246 + k 0.4375 MHz with k the frequency channel
  (GLONASS ICD 2008 ed. 5.1, 3.3.1.4; every carrier is in ``gnssrel.signals``).
  f1/f2 = 9/7 for every k, so the ionosphere-free combination has the same
  coefficients for all channels; only single-frequency use needs k
  (``gnssrel.signals.glonass_frequency_hz``).  The broadcast clock refers to L1 (tau_n); the L1/L2 combination is off by a constant per satellite, which the
  audit's per-satellite offsets absorb.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import C_M_S
from gnssrel.signals import CARRIER_HZ, frequency_hz, glonass_frequency_hz

SEMICIRCLE_RAD = np.pi          # IS-GPS-200 works in semicircles: 1 semicircle = pi rad
F_L1_HZ = CARRIER_HZ["G"]["L1"]

# Ionosphere-free pairs per system in order of preference: (first-band codes, second-band codes).
CODE_PAIRS = {
    "G": [(("C1W", "C1C", "C1P", "P1", "C1"), ("C2W", "C2P", "P2", "C2L", "C2X", "C2S"))],
    "J": [(("C1C", "C1X", "C1L"), ("C2L", "C2X", "C2S"))],
    "E": [(("C1C", "C1X", "C1B"), ("C7Q", "C7X", "C7I")), (("C1C", "C1X", "C1B"), ("C5Q", "C5X", "C5I"))],
    "C": [(("C2I", "C2X", "C1I"), ("C6I", "C6X"))],
    "R": [(("C1P", "C1C", "P1", "C1"), ("C2P", "C2C", "P2", "C2"))],
}
# Single-frequency fallback codes per system (RINEX 3 first, then RINEX 2 names).
SINGLE_CODES = {"G": ("C1C", "C1W", "C1", "P1"), "J": ("C1C", "C1X"), "E": ("C1C", "C1X"),
                "C": ("C2I", "C2X", "C1I"), "R": ("C1C", "C1P", "C1", "P1")}


def klobuchar_l1_delay_s(lat_rad, lon_rad, elevation_rad, azimuth_rad, gps_seconds_of_day_s,
                         alpha, beta):
    """L1 ionospheric group delay in seconds, IS-GPS-200 20.3.3.5.2.5 (Figure 20-4).

    ``gps_seconds_of_day_s`` is GPS time of week (or of day: only its value modulo
    86 400 s matters).  ``alpha``, ``beta``: the four broadcast coefficients each
    (units s/semicircle^n).  Arrays broadcast against each other.
    """
    alpha = np.asarray(alpha, dtype=float)
    beta = np.asarray(beta, dtype=float)
    phi_u = np.asarray(lat_rad, float) / SEMICIRCLE_RAD
    lam_u = np.asarray(lon_rad, float) / SEMICIRCLE_RAD
    el = np.asarray(elevation_rad, float) / SEMICIRCLE_RAD        # semicircles
    az = np.asarray(azimuth_rad, float)                           # radians, as the ICD uses it
    psi = 0.0137 / (el + 0.11) - 0.022                            # Earth-centred angle, semicircles
    phi_i = np.clip(phi_u + psi * np.cos(az), -0.416, 0.416)      # sub-ionospheric latitude
    lam_i = lam_u + psi * np.sin(az) / np.cos(phi_i * SEMICIRCLE_RAD)
    phi_m = phi_i + 0.064 * np.cos((lam_i - 1.617) * SEMICIRCLE_RAD)  # geomagnetic latitude
    t = np.mod(4.32e4 * lam_i + np.asarray(gps_seconds_of_day_s, float), 86_400.0)  # local time
    slant = 1.0 + 16.0 * (0.53 - el) ** 3                         # obliquity factor F
    powers = np.stack([np.ones_like(phi_m), phi_m, phi_m**2, phi_m**3], axis=-1)
    amp = np.maximum(powers @ alpha, 0.0)
    per = np.maximum(powers @ beta, 72_000.0)
    x = 2.0 * np.pi * (t - 50_400.0) / per                         # phase, radians
    day = 5.0e-9 + amp * (1.0 - x**2 / 2.0 + x**4 / 24.0)
    return slant * np.where(np.abs(x) < 1.57, day, 5.0e-9)


def klobuchar_delay_m(frequency_hz_, lat_rad, lon_rad, elevation_rad, azimuth_rad,
                      gps_seconds_s, alpha, beta):
    """Klobuchar group delay in metres on a carrier ``frequency_hz_`` (scaled by (f_L1/f)^2)."""
    scale = (F_L1_HZ / np.asarray(frequency_hz_, float)) ** 2
    return C_M_S * scale * klobuchar_l1_delay_s(lat_rad, lon_rad, elevation_rad, azimuth_rad,
                                                gps_seconds_s, alpha, beta)


def ionosphere_free(p1_m, p2_m, f1_hz, f2_hz):
    """First-order ionosphere-free combination of two code pseudoranges (metres)."""
    g1, g2 = np.square(f1_hz), np.square(f2_hz)
    return (g1 * np.asarray(p1_m, float) - g2 * np.asarray(p2_m, float)) / (g1 - g2)


def choose_codes(system: str, available) -> tuple[str, ...] | None:
    """The code pair (or a single code when no pair exists) used for ``system``,
    given the observation codes ``available`` in the file; None when none fits."""
    available = set(available)
    for firsts, seconds in CODE_PAIRS.get(system, []):
        a = next((c for c in firsts if c in available), None)
        b = next((c for c in seconds if c in available), None)
        if a and b:
            return (a, b)
    single = next((c for c in SINGLE_CODES.get(system, ()) if c in available), None)
    return (single,) if single else None


def group_delay_m(system: str, codes: tuple[str, ...], ephemeris_rows) -> np.ndarray:
    """Satellite group delay in metres to ADD to the modelled pseudorange for ``codes``.

    The broadcast clock refers to a reference signal; the other signals are late
    or early by a broadcast group delay:

    * GPS/QZSS (IS-GPS-200 20.3.3.3.3.2): L1 P(Y) and C/A are late by TGD, L2 by
      gamma TGD; the L1/L2 combination by nothing.
    * Galileo (OS SIS ICD 5.1.5): E1 late by BGD(E1,E5b) for I/NAV, E5b by
      (f1/f7)^2 BGD; the E1/E5b combination by nothing (same for E1/E5a with F/NAV).
    * BeiDou (BDS-SIS-ICD-B1I 3.0 5.2.4.10): B1I late by TGD1, B3I the reference.
    """
    n = len(ephemeris_rows)
    zero = np.zeros(n)
    if system in ("G", "J"):
        tgd = np.asarray(ephemeris_rows["tgd_s"], float)
        if len(codes) == 2 and codes[1][1] == "2":
            return zero
        band = codes[0][1]
        gamma = (CARRIER_HZ["G"]["L1"] / CARRIER_HZ["G"]["L2"]) ** 2 if band == "2" else 1.0
        return C_M_S * gamma * tgd
    if system == "E":
        if len(codes) == 2:
            return zero
        return C_M_S * np.asarray(ephemeris_rows["bgd_e5b_e1_s"], float)
    if system == "C":
        tgd1 = np.asarray(ephemeris_rows["tgd1_b1_b3_s"], float)
        f1 = frequency_hz("C", codes[0])
        if len(codes) == 2:
            f3 = frequency_hz("C", codes[1])
            return C_M_S * tgd1 * f1**2 / (f1**2 - f3**2)
        return C_M_S * tgd1
    return zero
