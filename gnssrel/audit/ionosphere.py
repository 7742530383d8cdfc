"""Ionospheric delay: the broadcast Klobuchar model and the ionosphere-free code combination.

Klobuchar: IS-GPS-200 (Rev. H, 2013) 20.3.3.5.2.5 and Figure 20-4, the
single-frequency user algorithm with the eight coefficients alpha_n, beta_n of
subframe 4 page 18 (RINEX 3 header ``IONOSPHERIC CORR`` GPSA/GPSB).  It returns
the L1 group delay; other frequencies scale with (f_L1 / f)^2
(IS-GPS-200 20.3.3.3.3.2 for L2: gamma = (77/60)^2).

BeiDou's own eight-parameter model (BDS-SIS-ICD-B1I 3.0 5.2.4.7, BDSA/BDSB): another
algorithm on the same kind of coefficients, :func:`klobuchar_bds_b1i_delay_s`.  Which model
corrects which system's single-frequency codes, and the expected error (half the delay, one
sigma), is :func:`model_for`; Galileo's NeQuick G is not implemented (GPS Klobuchar stands in).

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
from gnssrel.signals import CARRIER_HZ, frequency_hz, glonass_frequency_hz  # noqa: F401 (re-exported)
from gnssrel.timescales import GPS_EPOCH, seconds_between

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
# Pairs taken only when two frequencies are asked for (``dual``): GPS/QZSS L1 + L5.  The LNAV clock
# refers to L1/L2 P(Y); the L1/L5 combination is off from it by the L5 inter-signal corrections of
# CNAV (IS-GPS-705 20.3.3.3.1.2, not read here: up to ~1 m per satellite, from memory), which the
# k fit's per-satellite offsets absorb and the fixes do not.  Not in ``auto``: satellites without L5
# (GPS IIR) would be lost, and a phone's L1 + L5 combination is noisier than L1 with a model.
DUAL_ONLY_PAIRS = {"G": [(("C1C", "C1W", "C1X", "C1L"), ("C5Q", "C5X", "C5I"))],
                   "J": [(("C1C", "C1X", "C1L"), ("C5Q", "C5X", "C5I"))]}
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


BDS_EARTH_RADIUS_M = 6_378_000.0   # BDS-SIS-ICD-B1I 3.0 5.2.4.7: R = 6378 km (from memory)
BDS_SHELL_HEIGHT_M = 375_000.0     # BDS-SIS-ICD-B1I 3.0 5.2.4.7: the single layer at 375 km (from memory)
F_B1I_HZ = CARRIER_HZ["C"]["B1I"]


def bds_pierce_point(lat_rad, lon_rad, elevation_rad, azimuth_rad):
    """Geographic latitude and longitude (rad) of the ionospheric pierce point at 375 km and the
    obliquity factor, BDS-SIS-ICD-B1I 3.0 5.2.4.7 (spherical Earth of radius 6378 km):

    psi = pi/2 - E - arcsin(R/(R+h) cos E); phi_M = arcsin(sin phi_u cos psi + cos phi_u sin psi cos A);
    lambda_M = lambda_u + arcsin(sin psi sin A / cos phi_M); obliquity 1/sqrt(1 - (R/(R+h) cos E)^2).
    """
    el = np.asarray(elevation_rad, float)
    az = np.asarray(azimuth_rad, float)
    lat = np.asarray(lat_rad, float)
    ratio = BDS_EARTH_RADIUS_M / (BDS_EARTH_RADIUS_M + BDS_SHELL_HEIGHT_M) * np.cos(el)
    psi = 0.5 * np.pi - el - np.arcsin(ratio)
    phi_m = np.arcsin(np.clip(np.sin(lat) * np.cos(psi) + np.cos(lat) * np.sin(psi) * np.cos(az), -1.0, 1.0))
    lam_m = np.asarray(lon_rad, float) + np.arcsin(np.clip(np.sin(psi) * np.sin(az) / np.cos(phi_m), -1.0, 1.0))
    return phi_m, lam_m, 1.0 / np.sqrt(1.0 - ratio**2)


def klobuchar_bds_b1i_delay_s(lat_rad, lon_rad, elevation_rad, azimuth_rad, bdt_seconds_s, alpha, beta):
    """B1I ionospheric group delay in seconds, BeiDou's eight-parameter model,
    BDS-SIS-ICD-B1I 3.0 (2019) 5.2.4.7 (worked from the ICD's equations, from memory).

    It differs from IS-GPS-200's: the pierce point is the geographic one at 375 km (no
    geomagnetic latitude, no semicircle approximations); the coefficients take |phi_M / pi|
    (the pierce point's latitude in semicircles, absolute value); the local time is
    t = t_BDT + lambda_M 43200/pi (mod 86 400 s); the day-time term is a full cosine,
    I'z = 5 ns + A2 cos(2 pi (t - 50 400)/A4) while |t - 50 400| < A4/4, else the night-time
    constant 5 ns; A2 = sum alpha_n |phi_M/pi|^n (0 if negative), A4 = sum beta_n |phi_M/pi|^n
    clipped to [72 000, 172 800] s; the slant factor is 1/sqrt(1 - (R cos E/(R + h))^2).
    ``bdt_seconds_s``: BDT seconds of week or of day (only the value modulo 86 400 s matters).
    Other frequencies scale with (f_B1I / f)^2 (ICD 5.2.4.7).
    """
    alpha = np.asarray(alpha, dtype=float)
    beta = np.asarray(beta, dtype=float)
    phi_m, lam_m, slant = bds_pierce_point(lat_rad, lon_rad, elevation_rad, azimuth_rad)
    u = np.abs(phi_m / np.pi)
    powers = np.stack([np.ones_like(u), u, u**2, u**3], axis=-1)
    a2 = np.maximum(powers @ alpha, 0.0)
    a4 = np.clip(powers @ beta, 72_000.0, 172_800.0)
    t = np.mod(np.asarray(bdt_seconds_s, float) + lam_m * 43_200.0 / np.pi, 86_400.0)
    day = np.abs(t - 50_400.0) < a4 / 4.0
    vertical = 5.0e-9 + np.where(day, a2 * np.cos(2.0 * np.pi * (t - 50_400.0) / a4), 0.0)
    return slant * vertical


MODEL_RMS_FRACTION = 0.5
"""Error of a broadcast Klobuchar correction, as a fraction of the delay (1 sigma): the model is
designed to remove at least about half of the delay RMS (IS-GPS-200 20.3.3.5.2.5 and common
practice); BeiDou's eight-parameter model is of the same class (BDS-SIS-ICD-B1I 3.0 5.2.4.7)."""

NO_MODEL = "none"
GPS_MODEL, BDS_MODEL = "klobuchar-gps", "klobuchar-bds"


def model_for(system: str, header) -> dict:
    """Which broadcast ionosphere model corrects a single-frequency code of ``system``, with which
    header coefficients: ``{"model", "alpha", "beta", "coefficients", "note"}`` (``alpha``/``beta``
    None and ``model`` "none" when the headers hold nothing usable).

    * GPS: Klobuchar with GPSA/GPSB (IS-GPS-200 20.3.3.5.2.5).
    * QZSS: the same algorithm with QZSS's own QZSA/QZSB where a file gives them (IS-QZSS-PNT
      5.2.2 uses the GPS algorithm), else GPSA/GPSB: the coefficients describe the same
      ionosphere (stated approximation).
    * BeiDou: BeiDou's model (BDS-SIS-ICD-B1I 3.0 5.2.4.7) with BDSA/BDSB where given; else
      GPS Klobuchar with GPSA/GPSB scaled to the carrier (stated approximation).
    * Galileo: NeQuick G (GAL, ai0-ai2) is not implemented: GPS Klobuchar with GPSA/GPSB
      scaled to the carrier stands in (stated approximation, same expected error).
    * GLONASS: no broadcast model exists: GPS Klobuchar scaled to each channel's carrier.
    Expected error of each: :data:`MODEL_RMS_FRACTION` of the delay (1 sigma).
    """
    header = header or {}
    gps = (header.get("GPSA"), header.get("GPSB"))
    have_gps = all(v is not None and len(v) == 4 for v in gps)
    if system == "C" and all(header.get(k) is not None and len(header[k]) == 4 for k in ("BDSA", "BDSB")):
        return {"model": BDS_MODEL, "alpha": header["BDSA"], "beta": header["BDSB"], "coefficients": "BDSA/BDSB",
                "note": "BeiDou eight-parameter model, BDS-SIS-ICD-B1I 3.0 5.2.4.7"}
    if system == "J" and all(header.get(k) is not None and len(header[k]) == 4 for k in ("QZSA", "QZSB")):
        return {"model": GPS_MODEL, "alpha": header["QZSA"], "beta": header["QZSB"], "coefficients": "QZSA/QZSB",
                "note": "Klobuchar with QZSS's own coefficients (IS-QZSS-PNT, the IS-GPS-200 algorithm)"}
    if not have_gps:
        return {"model": NO_MODEL, "alpha": None, "beta": None, "coefficients": None,
                "note": "no usable broadcast ionosphere coefficients in the navigation headers: "
                        "single-frequency codes of this system carry the whole ionospheric delay"}
    notes = {"G": "Klobuchar, IS-GPS-200 20.3.3.5.2.5",
             "J": "Klobuchar with GPS coefficients (no QZSA/QZSB in the headers): approximation",
             "C": "GPS Klobuchar scaled to B1I (no BDSA/BDSB in the headers): approximation",
             "E": "GPS Klobuchar scaled to E1 (NeQuick G is not implemented): approximation",
             "R": "GPS Klobuchar scaled to each channel's carrier (GLONASS broadcasts no model): approximation"}
    return {"model": GPS_MODEL, "alpha": gps[0], "beta": gps[1], "coefficients": "GPSA/GPSB",
            "note": notes.get(system, "GPS Klobuchar: approximation")}


def broadcast_delay_m(systems, frequency_hz_, lat_rad, lon_rad, elevation_rad, azimuth_rad, t_gpst,
                      header) -> np.ndarray:
    """Broadcast-model ionospheric group delay in metres per observation (1-D arrays ``(n,)``).

    0 where ``frequency_hz_`` is NaN (an ionosphere-free combination); NaN for a single-frequency
    code of a system without a model (:func:`model_for`).  ``t_gpst``: datetime64 GPST receive times.
    """
    systems = np.asarray(systems).astype(str)
    freq = np.asarray(frequency_hz_, float)
    out = np.zeros(freq.shape)
    single = np.isfinite(freq)
    if not single.any():
        return out
    args = [np.broadcast_to(np.asarray(a, float), freq.shape) for a in (lat_rad, lon_rad, elevation_rad, azimuth_rad)]
    sow = np.mod(seconds_between(np.asarray(t_gpst, "datetime64[ns]"), GPS_EPOCH), 604_800.0)
    for system in np.unique(systems[single]):
        m = single & (systems == system)
        model = model_for(system, header)
        lat, lon, el, az = (a[m] for a in args)
        if model["model"] == NO_MODEL:
            out[m] = np.nan
        elif model["model"] == BDS_MODEL:             # BDT = GPST - 14 s (BDS-SIS-ICD 5.2.2)
            delay = klobuchar_bds_b1i_delay_s(lat, lon, el, az, sow[m] - 14.0, model["alpha"], model["beta"])
            out[m] = C_M_S * (F_B1I_HZ / freq[m]) ** 2 * delay
        else:
            out[m] = klobuchar_delay_m(freq[m], lat, lon, el, az, sow[m], model["alpha"], model["beta"])
    return out


def model_variance_m2(iono_m) -> np.ndarray:
    """Variance (m^2) of a broadcast-model correction ``iono_m``: (MODEL_RMS_FRACTION x delay)^2;
    0 for the ionosphere-free combination (delay 0) and where no model was applied (NaN)."""
    iono = np.nan_to_num(np.asarray(iono_m, float), nan=0.0)
    return (MODEL_RMS_FRACTION * iono) ** 2


def models_used(systems, header) -> dict:
    """{system: {"model", "coefficients", "note", "expected_error"}} for the summary."""
    out = {}
    for system in systems:
        m = model_for(system, header)
        out[system] = {"model": m["model"], "coefficients": m["coefficients"], "note": m["note"],
                       "expected_error": (f"{MODEL_RMS_FRACTION:.0%} of the delay (1 sigma)"
                                          if m["model"] != NO_MODEL else "the whole delay")}
    return out


def ionosphere_free(p1_m, p2_m, f1_hz, f2_hz):
    """First-order ionosphere-free combination of two code pseudoranges (metres)."""
    g1, g2 = np.square(f1_hz), np.square(f2_hz)
    return (g1 * np.asarray(p1_m, float) - g2 * np.asarray(p2_m, float)) / (g1 - g2)


FREQUENCY_MODES = ("auto", "single", "dual")
"""``auto``: the pair of :data:`CODE_PAIRS` where the file has one, else one code; ``single``: one
code per system even where a pair exists (broadcast ionosphere model); ``dual``: pairs only."""


NOISY_COMBINATION_M = 3.0
"""An ionosphere-free combination noisier than this (m, one sigma, :func:`pair_noise_m`) loses to one
code with a broadcast model, whose error is half a slant delay of a few metres (our choice: the
frequency choice "auto" then takes one code; geodetic receivers measure ~1 m, phones 3-10 m)."""


def pair_noise_m(p1_m, p2_m, f1_hz, f2_hz) -> dict | None:
    """Code noise of a pair from the data: the epoch-to-epoch change of the geometry-free
    combination P2 - P1 ``(n_t, n_sv)`` (range, clocks and troposphere cancel; the ionosphere
    and the biases barely move between epochs), robust scatter 1.4826 MAD.  With equal noise on
    both codes, one code's sigma = scatter / 2; the ionosphere-free combination's is that times
    sqrt(g1^2 + g2^2), g1 = f1^2/(f1^2 - f2^2), g2 = g1 - 1 (first order, common practice).
    Returns {"code_m", "ionosphere_free_m", "amplification"} or None with fewer than 10 changes."""
    gf = np.asarray(p2_m, float) - np.asarray(p1_m, float)
    d = np.diff(gf, axis=0)
    d = d[np.isfinite(d)]
    if d.size < 10:
        return None
    scatter = 1.4826 * float(np.median(np.abs(d - np.median(d))))
    g1 = f1_hz**2 / (f1_hz**2 - f2_hz**2)
    amplification = float(np.hypot(g1, g1 - 1.0))
    return {"code_m": scatter / 2.0, "ionosphere_free_m": scatter / 2.0 * amplification,
            "amplification": amplification}


def choose_codes(system: str, available, mode: str = "auto") -> tuple[str, ...] | None:
    """The code pair (or a single code when no pair exists) used for ``system``,
    given the observation codes ``available`` in the file; None when none fits.
    ``mode``: one of :data:`FREQUENCY_MODES`."""
    if mode not in FREQUENCY_MODES:
        raise ValueError(f"frequency mode must be one of {', '.join(FREQUENCY_MODES)}, not {mode!r}")
    available = set(available)
    if mode != "single":
        pairs = CODE_PAIRS.get(system, []) + (DUAL_ONLY_PAIRS.get(system, []) if mode == "dual" else [])
        for firsts, seconds in pairs:
            a = next((c for c in firsts if c in available), None)
            b = next((c for c in seconds if c in available), None)
            if a and b:
                return (a, b)
    if mode == "dual":
        return None
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
        if len(codes) == 2:             # L1/L2: the reference; L1/L5: approximation (DUAL_ONLY_PAIRS)
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
