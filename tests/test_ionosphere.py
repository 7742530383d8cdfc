"""Klobuchar broadcast model (IS-GPS-200 20.3.3.5.2.5) and the ionosphere-free combination."""

import math

import numpy as np
import pandas as pd
import pytest

from gnssrel.audit import ionosphere as io
from gnssrel.constants import C_M_S

ALPHA = [3.82e-8, 1.49e-8, -1.79e-7, 0.0]
BETA = [1.43e5, 0.0, -3.28e5, 1.13e5]


def test_klobuchar_against_hand_computation_of_is_gps_200():
    # Derived: the steps of IS-GPS-200 20.3.3.5.2.5 worked one by one in double precision for
    # lat 40 N, lon 100 W, el 20 deg, az 210 deg, t = 593 100 s of week:
    #   psi = 0.0137/(0.11111+0.11) - 0.022 = 0.0399598 semicircles
    #   phi_i = 0.2222 + psi cos(210 deg) = 0.187616;  lam_i = -0.555556 + psi sin A / cos(phi_i pi) = -0.579591
    #   phi_m = phi_i + 0.064 cos((lam_i - 1.617) pi) = 0.239793
    #   t = 4.32e4 lam_i + 593100 mod 86400 = 49661.67 s;  F = 1 + 16 (0.53 - 0.11111)^3 = 2.176025
    #   PER = 125697.85 s, AMP = 3.14803e-8 s, x = -0.0369066 rad
    #   T = F (5e-9 + AMP (1 - x^2/2 + x^4/24)) = 7.93354e-8 s (23.78 m)
    t = io.klobuchar_l1_delay_s(math.radians(40), math.radians(-100), math.radians(20), math.radians(210),
                                593_100.0, ALPHA, BETA)
    assert t == pytest.approx(7.93354e-8, rel=1e-5)


def test_klobuchar_night_value_is_the_constant_5_ns_times_obliquity():
    # IS-GPS-200 20.3.3.5.2.5: for |x| >= 1.57 the delay is F * 5e-9 s.  At 90 deg elevation F = 1 + 16 (0.03)^3.
    t = io.klobuchar_l1_delay_s(0.0, 0.0, math.radians(90), 0.0, 0.0, ALPHA, BETA)   # local midnight
    assert t == pytest.approx((1 + 16 * 0.03**3) * 5e-9, rel=1e-12)


def test_klobuchar_scales_with_inverse_frequency_squared():
    args = (math.radians(40), math.radians(-100), math.radians(20), math.radians(210), 593_100.0, ALPHA, BETA)
    l1 = io.klobuchar_delay_m(1575.42e6, *args)
    l2 = io.klobuchar_delay_m(1227.60e6, *args)
    assert l2 / l1 == pytest.approx((77 / 60) ** 2, rel=1e-12)   # gamma, IS-GPS-200 20.3.3.3.3.2 (published)


def test_ionosphere_free_combination_removes_a_first_order_delay():
    f1, f2 = 1575.42e6, 1227.60e6
    rho, iono_l1 = 21_000_000.0, np.array([3.0, 12.0, 30.0])
    p1 = rho + iono_l1
    p2 = rho + iono_l1 * (f1 / f2) ** 2
    assert np.allclose(io.ionosphere_free(p1, p2, f1, f2), rho, atol=1e-6)


def test_code_choice_per_system():
    assert io.choose_codes("G", {"C1C", "C2W", "C2X", "L1C"}) == ("C1C", "C2W")
    assert io.choose_codes("G", {"C1C", "C1W", "C2W"}) == ("C1W", "C2W")
    assert io.choose_codes("G", {"C1", "P2"}) == ("C1", "P2")              # RINEX 2 names
    assert io.choose_codes("E", {"C1X", "C5X", "C7X"}) == ("C1X", "C7X")   # E1/E5b: the I/NAV reference
    assert io.choose_codes("E", {"C1X", "C5X"}) == ("C1X", "C5X")
    assert io.choose_codes("C", {"C2X", "C6X", "C7X"}) == ("C2X", "C6X")   # B1I/B3I
    assert io.choose_codes("G", {"C1C"}) == ("C1C",)
    assert io.choose_codes("G", {"L1C"}) is None


def test_group_delays_follow_the_reference_signal_of_the_clock():
    rows = pd.DataFrame({"tgd_s": [5e-9], "tgd1_b1_b3_s": [2e-9]})
    assert io.group_delay_m("G", ("C1C", "C2W"), rows)[0] == 0.0
    assert io.group_delay_m("G", ("C1C",), rows)[0] == pytest.approx(C_M_S * 5e-9)
    f1, f3 = 1561.098e6, 1268.52e6
    assert io.group_delay_m("C", ("C2I", "C6I"), rows)[0] == pytest.approx(C_M_S * 2e-9 * f1**2 / (f1**2 - f3**2))


def test_glonass_fdma_carriers_and_the_channel_free_combination():
    # GLONASS ICD 2008 ed. 5.1, 3.3.1.4 (values as given in the task; section number M):
    # L1 = 1602 + k 0.5625 MHz, L2 = 1246 + k 0.4375 MHz.  Derived: f1/f2 = 9/7 for every k.
    k = np.arange(-7, 7)
    f1, f2 = io.glonass_frequency_hz("1", k), io.glonass_frequency_hz("2", k)
    assert io.glonass_frequency_hz("1", 1) == 1602.5625e6 and io.glonass_frequency_hz("2", -7) == 1242.9375e6
    assert np.allclose(f1 / f2, 9.0 / 7.0, rtol=0, atol=1e-15)
    # the combination with channel-0 frequencies equals the one with any channel's own
    p1, p2 = 2.1e7 + 3.0, 2.1e7 + 8.0
    ref = io.ionosphere_free(p1, p2, io.frequency_hz("R", "C1P"), io.frequency_hz("R", "C2P"))
    assert np.allclose(io.ionosphere_free(p1, p2, f1, f2), ref, rtol=0, atol=1e-7)
    assert ref == pytest.approx((81 * p1 - 49 * p2) / 32, abs=1e-7)
    assert io.choose_codes("R", {"C1C", "C1P", "C2P", "C2C"}) == ("C1P", "C2P")
