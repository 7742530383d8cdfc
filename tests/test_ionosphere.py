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


# BeiDou's eight-parameter model, BDS-SIS-ICD-B1I 3.0 (2019) 5.2.4.7 (equations from memory).
BDS_ALPHA = [1.0e-8, 2.0e-8, -6.0e-8, 0.0]
BDS_BETA = [9.0e4, 0.0, 0.0, 0.0]


def test_bds_model_at_zenith_and_local_noon_is_5_ns_plus_the_amplitude():
    # Derived by hand: at zenith psi = 0 (the pierce point is the receiver), slant factor 1;
    # lat 30 N: |phi_M/pi| = 1/6, A2 = 1e-8 + 2e-8/6 - 6e-8/36 = 1.166667e-8 s;
    # lon 120 E: local time t = t_BDT + 120/180 x 43200 = 21600 + 28800 = 50400 s -> cos 0 = 1.
    t = io.klobuchar_bds_b1i_delay_s(math.radians(30), math.radians(120), math.radians(90), 0.0,
                                     21_600.0, BDS_ALPHA, BDS_BETA)
    assert t == pytest.approx(5e-9 + 1.1666667e-8, rel=1e-6)


def test_bds_model_night_constant_and_slant_factor_at_375_km():
    # Derived: E = 30 deg, R/(R+h) = 6378/6753; (R cos E/(R+h))^2 = 0.669016 -> factor 1/sqrt(0.330984)
    # = 1.738188; at local midnight the vertical delay is the night-time constant 5 ns (ICD 5.2.4.7).
    t = io.klobuchar_bds_b1i_delay_s(math.radians(30), math.radians(120), math.radians(30), 0.0,
                                     21_600.0 + 43_200.0, BDS_ALPHA, BDS_BETA)
    assert t == pytest.approx(5e-9 * 1.738188, rel=1e-5)


def test_bds_period_is_clipped_to_72000_s_and_the_day_term_is_a_full_cosine():
    # A4 below 72 000 s takes 72 000 s: the day term lives while |t - 50400| < 18 000 s.
    beta = [1.0e4, 0.0, 0.0, 0.0]
    zenith = (math.radians(30), math.radians(120), math.radians(90), 0.0)
    inside = io.klobuchar_bds_b1i_delay_s(*zenith, 21_600.0 + 9_000.0, BDS_ALPHA, beta)
    outside = io.klobuchar_bds_b1i_delay_s(*zenith, 21_600.0 + 18_001.0, BDS_ALPHA, beta)
    # Derived: t - 50400 = 9000 s = A4/8 -> cos(pi/4)
    assert inside == pytest.approx(5e-9 + 1.1666667e-8 * math.cos(math.pi / 4), rel=1e-6)
    assert outside == pytest.approx(5e-9, rel=1e-12)


def test_bds_pierce_point_due_north_moves_only_the_latitude():
    # Derived: E = 30 deg: psi = pi/2 - pi/6 - asin(0.8179343) = 1.0471976 - 0.9578111 = 0.0893864 rad;
    # azimuth 0: phi_M = phi + psi.
    lat, lon = math.radians(30), math.radians(120)
    phi, lam, slant = io.bds_pierce_point(lat, lon, math.radians(30), 0.0)
    assert phi - lat == pytest.approx(0.0893864, rel=1e-5)
    assert lam == pytest.approx(lon, abs=1e-12)
    assert slant == pytest.approx(1.738188, rel=1e-6)


def test_bds_model_takes_the_absolute_latitude_unlike_gps():
    # ICD 5.2.4.7: the polynomials take |phi_M / pi| (geographic); IS-GPS-200 takes the signed
    # geomagnetic latitude.  At zenith, 40 N and 40 S give the same BeiDou delay, not the same GPS one.
    north = (math.radians(40), math.radians(10), math.radians(90), 0.0, 45_000.0)
    south = (math.radians(-40), math.radians(10), math.radians(90), 0.0, 45_000.0)
    assert io.klobuchar_bds_b1i_delay_s(*north, ALPHA, BETA) == pytest.approx(
        io.klobuchar_bds_b1i_delay_s(*south, ALPHA, BETA), rel=1e-12)
    gps_n, gps_s = io.klobuchar_l1_delay_s(*north, ALPHA, BETA), io.klobuchar_l1_delay_s(*south, ALPHA, BETA)
    assert abs(gps_n - gps_s) > 0.05 * gps_n


def test_model_choice_per_system_follows_the_coefficients_in_the_headers():
    gps_only = {"GPSA": ALPHA, "GPSB": BETA, "GAL": [100.0, 0.1, 0.0]}
    full = dict(gps_only, QZSA=[1e-8, 0, 0, 0], QZSB=[9e4, 0, 0, 0], BDSA=BDS_ALPHA, BDSB=BDS_BETA)
    assert io.model_for("G", gps_only)["coefficients"] == "GPSA/GPSB"
    assert io.model_for("J", gps_only)["coefficients"] == "GPSA/GPSB"       # stated approximation
    assert io.model_for("J", full)["coefficients"] == "QZSA/QZSB"           # QZSS's own where given
    assert io.model_for("C", full)["model"] == io.BDS_MODEL
    assert io.model_for("C", gps_only)["model"] == io.GPS_MODEL             # no BDSA/BDSB: approximation
    assert "NeQuick G is not implemented" in io.model_for("E", gps_only)["note"]
    assert io.model_for("G", {"GAL": [100.0, 0.1, 0.0]})["model"] == io.NO_MODEL


def test_broadcast_delay_per_observation():
    t = np.array(["2024-04-01T08:31:00"] * 4, dtype="datetime64[ns]")
    sow = 86_400.0 + 8 * 3600 + 31 * 60             # Monday 08:31 GPST
    systems = np.array(["G", "C", "E", "G"])
    freq = np.array([1575.42e6, 1561.098e6, np.nan, 1176.45e6])
    lat, lon, el, az = math.radians(48), math.radians(2), math.radians(40), math.radians(60)
    header = {"GPSA": ALPHA, "GPSB": BETA, "BDSA": BDS_ALPHA, "BDSB": BDS_BETA}
    d = io.broadcast_delay_m(systems, freq, lat, lon, el, az, t, header)
    assert d[0] == pytest.approx(C_M_S * io.klobuchar_l1_delay_s(lat, lon, el, az, sow, ALPHA, BETA), rel=1e-12)
    # BeiDou: its own model on BDT = GPST - 14 s (BDS-SIS-ICD 5.2.2)
    assert d[1] == pytest.approx(C_M_S * io.klobuchar_bds_b1i_delay_s(lat, lon, el, az, sow - 14.0,
                                                                      BDS_ALPHA, BDS_BETA), rel=1e-12)
    assert d[2] == 0.0                                # an ionosphere-free combination
    assert d[3] / d[0] == pytest.approx((1575.42 / 1176.45) ** 2, rel=1e-12)
    assert np.isnan(io.broadcast_delay_m(systems[:1], freq[:1], lat, lon, el, az, t[:1], {}))[0]
    assert io.model_variance_m2(np.array([4.0, 0.0, np.nan])).tolist() == [4.0, 0.0, 0.0]


def test_frequency_modes_of_the_code_choice():
    have = {"C1C", "C5Q", "C2W"}
    assert io.choose_codes("G", have, "auto") == ("C1C", "C2W")
    assert io.choose_codes("G", have, "single") == ("C1C",)
    assert io.choose_codes("G", {"C1C", "C5Q"}, "auto") == ("C1C",)    # L1 + L5 only when asked for
    assert io.choose_codes("G", {"C1C", "C5Q"}, "dual") == ("C1C", "C5Q")
    assert io.choose_codes("G", {"C1C", "C2W", "C5Q"}, "dual") == ("C1C", "C2W")   # L1/L2 first
    assert io.choose_codes("R", {"C1C"}, "dual") is None
    assert io.choose_codes("E", {"C1C", "C5Q"}, "dual") == ("C1C", "C5Q")
    with pytest.raises(ValueError):
        io.choose_codes("G", have, "triple")


@pytest.mark.refdata
def test_bds_model_on_the_coefficients_of_a_real_rinex_4_file():
    # BRD400DLR 2023-071 (RINEX 4.00) carries ION records of every kind: BeiDou D1D2 -> BDSA/BDSB,
    # QZSS -> QZSA/QZSB.  Beijing (40 N, 116 E) at zenith, 06:00 GPST (local early afternoon):
    # measured 12.7 m on B1I with BeiDou's model, 10.3 m on L1 with GPS's.  Two models of one
    # ionosphere, each good to ~50 % RMS (common practice): they agree within that.
    from conftest import refdata_file

    from gnssrel import read_navigation
    header = read_navigation(refdata_file("2023-071/BRD400DLR_S_20230710000_01D_MN.rnx.gz")).header["ionosphere"]
    assert io.model_for("C", header)["model"] == io.BDS_MODEL
    assert io.model_for("J", header)["coefficients"] == "QZSA/QZSB"
    t = np.array(["2023-03-12T06:00:00"] * 2, dtype="datetime64[ns]")
    bds, gps = io.broadcast_delay_m(np.array(["C", "G"]), np.array([1561.098e6, 1575.42e6]), math.radians(40),
                                    math.radians(116), math.radians(90), 0.0, t, header)
    assert 5.0 < bds < 30.0 and 5.0 < gps < 30.0
    assert abs(bds - gps) < 0.5 * gps
