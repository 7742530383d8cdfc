"""The carrier table (gnssrel.signals) against the interface specifications it cites."""

from __future__ import annotations

import pytest

from gnssrel import signals
from gnssrel.constants import GPS_FUNDAMENTAL_FREQUENCY_HZ


def test_gps_carriers_are_the_published_multiples_of_f0():
    # IS-GPS-200 3.3.1.1: L1 = 154 f0, L2 = 120 f0 (published; REFERENCE-CHECKS 1.2);
    # IS-GPS-705 3.3.1.1: L5 = 115 f0 (from memory).
    f0 = GPS_FUNDAMENTAL_FREQUENCY_HZ
    assert signals.CARRIER_HZ["G"] == {"L1": 154 * f0, "L2": 120 * f0, "L5": 115 * f0}
    # gamma = (77/60)^2, IS-GPS-200 20.3.3.3.3.2 (published).
    gamma = (signals.CARRIER_HZ["G"]["L1"] / signals.CARRIER_HZ["G"]["L2"]) ** 2
    assert gamma == pytest.approx((77 / 60) ** 2, rel=1e-15)


def test_rinex_band_digits_map_to_the_carriers():
    # RINEX 3.05 section 5.1 (from memory): band digit per system.
    band = signals.RINEX_BAND_HZ
    assert band["E"]["7"] == 1207.14e6 and band["E"]["8"] == 1191.795e6 and band["E"]["6"] == 1278.75e6
    assert band["C"]["2"] == 1561.098e6 and band["C"]["6"] == 1268.52e6 and band["C"]["1"] == 1575.42e6
    assert band["J"]["6"] == 1278.75e6 and band["R"]["3"] == 1202.025e6
    assert "1" not in band["R"] and "2" not in band["R"]        # FDMA: per channel
    assert signals.frequency_hz("E", "C5Q") == 1176.45e6
    assert signals.frequency_hz("G", "P2") == 1227.60e6          # RINEX 2 name, band 2
    with pytest.raises(KeyError, match="no frequency"):
        signals.frequency_hz("G", "C7Q")


def test_signals_sharing_a_band_share_the_carrier_and_each_names_its_source():
    for c in signals.CARRIERS:
        assert signals.RINEX_BAND_HZ[c.system][c.rinex_band] == c.frequency_hz, (c.system, c.name)
        assert any(word in c.source for word in ("published", "derived", "common practice", "from memory"))
        assert c.frequency_hz / 1e6 == float(f"{c.frequency_hz / 1e6:.6f}")   # whole kHz


def test_glonass_fdma_channel_formula():
    # GLONASS ICD 2008 ed. 5.1, 3.3.1.4: 1602 + k 0.5625 MHz, 1246 + k 0.4375 MHz (from memory).
    assert signals.glonass_frequency_hz("1", -7) == 1598.0625e6
    assert signals.glonass_frequency_hz("2", 6) == 1248.625e6
    for k in range(-7, 7):
        ratio = signals.glonass_frequency_hz("1", k) / signals.glonass_frequency_hz("2", k)
        assert ratio == pytest.approx(9 / 7, rel=1e-15)
    assert signals.frequency_hz("R", "C1P") == 1602.0e6
