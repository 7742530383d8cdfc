"""Carrier frequencies of the GNSS signals, per system and band, each with its source.

One table, :data:`CARRIERS`, names every carrier gnssrel knows (system letter, signal
name, RINEX 3 band digit, frequency in Hz, source and status).  Derived from it:

* :data:`CARRIER_HZ` ``[letter][signal name]``, e.g. ``CARRIER_HZ["E"]["E5b"]``;
* :data:`RINEX_BAND_HZ` ``[letter][band digit]``: the frequency of the RINEX 3
  observation band (the second character of ``C1C``, ``L5Q``, ...; RINEX 2 ``C1``/``P2``
  use the same digit).  RINEX 3.05 section 5.1 (observation code table; from memory
  for the table layout) gives one frequency per (system, band): where two signals
  share a band (BeiDou B2I and B2b on band 7) they share the carrier.
* GLONASS FDMA (bands 1 and 2) has a carrier per satellite, set by its frequency
  channel k: :data:`GLONASS_FDMA_HZ` and :func:`glonass_frequency_hz`.

Values are written in Hz as exact integers (every carrier is a multiple of 1 kHz),
so ``x / 1e6`` gives the same float as the MHz literal.  Many carriers are integer
(or half-integer) multiples of the fundamental f0 = 10.23 MHz
(``gnssrel.constants.GPS_FUNDAMENTAL_FREQUENCY_HZ``); the multiplier is noted beside
each for reading, the Hz value is what is used.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Carrier:
    """One carrier: system letter, signal name, RINEX 3 band digit, frequency, source."""

    system: str
    name: str
    rinex_band: str
    frequency_hz: float
    source: str


CARRIERS = (
    # GPS
    Carrier("G", "L1", "1", 1575.42e6, "IS-GPS-200 3.3.1.1 (154 f0; published)"),
    Carrier("G", "L2", "2", 1227.60e6, "IS-GPS-200 3.3.1.1 (120 f0; published)"),
    Carrier("G", "L5", "5", 1176.45e6, "IS-GPS-705 3.3.1.1 (115 f0; from memory)"),
    # Galileo
    Carrier("E", "E1", "1", 1575.42e6, "Galileo OS SIS ICD 2.3, carrier table (154 f0; from memory)"),
    Carrier("E", "E5a", "5", 1176.45e6, "Galileo OS SIS ICD 2.3, carrier table (115 f0; from memory)"),
    Carrier("E", "E5b", "7", 1207.140e6, "Galileo OS SIS ICD 2.3, carrier table (118 f0; from memory)"),
    Carrier("E", "E5", "8", 1191.795e6, "Galileo OS SIS ICD 2.3, E5 AltBOC centre (116.5 f0; from memory)"),
    Carrier("E", "E6", "6", 1278.75e6, "Galileo E6 / HAS SIS ICD (125 f0; from memory)"),
    # BeiDou
    Carrier("C", "B1I", "2", 1561.098e6, "BDS-SIS-ICD-B1I 3.0, 4.2.1 (152.6 f0; from memory)"),
    Carrier("C", "B1C", "1", 1575.42e6, "BDS-SIS-ICD-B1C 1.0, 4.2.1 (154 f0; from memory)"),
    Carrier("C", "B2a", "5", 1176.45e6, "BDS-SIS-ICD-B2a 1.0, 4.2.1 (115 f0; from memory)"),
    Carrier("C", "B2I", "7", 1207.140e6, "BDS-SIS-ICD 2.1, 4.2.1 (118 f0; from memory)"),
    Carrier("C", "B2b", "7", 1207.140e6, "BDS-SIS-ICD-B2b 1.0, 4.2.1 (118 f0; from memory)"),
    Carrier("C", "B2", "8", 1191.795e6, "BDS B2a+B2b AltBOC centre, RINEX 3.05 5.1 (from memory)"),
    Carrier("C", "B3I", "6", 1268.52e6, "BDS-SIS-ICD-B3I 1.0, 4.2.1 (124 f0; from memory)"),
    # QZSS
    Carrier("J", "L1", "1", 1575.42e6, "IS-QZSS-PNT 3.1.1 (as GPS L1; from memory)"),
    Carrier("J", "L2", "2", 1227.60e6, "IS-QZSS-PNT 3.1.1 (as GPS L2; from memory)"),
    Carrier("J", "L5", "5", 1176.45e6, "IS-QZSS-PNT 3.1.1 (as GPS L5; from memory)"),
    Carrier("J", "L6", "6", 1278.75e6, "IS-QZSS-L6 3.1.1 (125 f0; from memory)"),
    # GLONASS CDMA (the FDMA bands 1 and 2 are in GLONASS_FDMA_HZ)
    Carrier("R", "G1a", "4", 1600.995e6, "GLONASS CDMA ICD L1 (2016), RINEX 3.05 5.1 (from memory)"),
    Carrier("R", "G2a", "6", 1248.06e6, "GLONASS CDMA ICD L2 (2016), RINEX 3.05 5.1 (from memory)"),
    Carrier("R", "L3", "3", 1202.025e6, "GLONASS CDMA ICD L3 (2016) (117.5 f0; from memory)"),
    # SBAS and NavIC: only as RINEX 3.05 5.1 lists their bands
    Carrier("S", "L1", "1", 1575.42e6, "RINEX 3.05 5.1 (as GPS L1; from memory)"),
    Carrier("S", "L5", "5", 1176.45e6, "RINEX 3.05 5.1 (as GPS L5; from memory)"),
    Carrier("I", "L5", "5", 1176.45e6, "IRNSS SPS ICD 1.1, 3 (from memory)"),
    Carrier("I", "S", "9", 2492.028e6, "IRNSS SPS ICD 1.1, 3 (from memory)"),
)
"""Every fixed carrier gnssrel knows, with its source and status."""

GLONASS_FDMA_HZ = {"1": (1602.0e6, 0.5625e6), "2": (1246.0e6, 0.4375e6)}
"""GLONASS FDMA bands: (carrier of channel 0, channel step) in Hz; the carrier of
channel k is base + k step, k = -7..+6.  L1 = 1602 + k 0.5625 MHz, L2 = 1246 + k
0.4375 MHz (GLONASS ICD 2008 ed. 5.1, 3.3.1.4; from memory, values and section).
f_L1 / f_L2 = 9/7 for every k."""

FDMA_BANDS_HZ = {"R": GLONASS_FDMA_HZ}
"""Systems whose carriers in some bands depend on the satellite's frequency channel, by letter."""


def _by(attribute: str) -> dict:
    table: dict = {}
    for carrier in CARRIERS:
        table.setdefault(carrier.system, {}).setdefault(getattr(carrier, attribute), carrier.frequency_hz)
    return table


CARRIER_HZ = _by("name")
"""Carrier frequency in Hz by system letter and signal name (``CARRIER_HZ["C"]["B3I"]``)."""

RINEX_BAND_HZ = _by("rinex_band")
"""Carrier frequency in Hz by system letter and RINEX 3 band digit (RINEX 3.05 section 5.1).
GLONASS bands 1 and 2 (FDMA) are absent: see :func:`glonass_frequency_hz`."""


def glonass_frequency_hz(band: str, channel) -> np.ndarray:
    """GLONASS FDMA carrier in Hz of band ``"1"`` or ``"2"`` for frequency channel(s) ``channel``."""
    base, step = GLONASS_FDMA_HZ[band]
    return base + step * np.asarray(channel, dtype=float)


def frequency_hz(system: str, code: str) -> float:
    """Carrier frequency of an observation code (``C1C``; RINEX 2 ``C1``/``P2`` map to bands 1/2).
    GLONASS FDMA: the channel-0 carrier (only the ratio f1/f2 = 9/7 is channel-free)."""
    band = code[1]
    if band in FDMA_BANDS_HZ.get(system, {}):
        return float(glonass_frequency_hz(band, 0))
    try:
        return RINEX_BAND_HZ[system][band]
    except KeyError:
        raise KeyError(f"no frequency for system {system!r} code {code!r}") from None
