"""Troposphere: Saastamoinen zenith delays with a standard atmosphere, Niell mapping."""

import numpy as np
import pytest

from gnssrel.audit import troposphere as tr

ONE_CENTIMETRE = 0.01


def test_zenith_delay_at_sea_level_is_about_2_3_m():
    # Common practice: the hydrostatic zenith delay at sea level is ~2.3 m (1013 hPa).
    zhd, zwd = tr.saastamoinen_zenith_m(np.radians(45.0), 0.0)
    assert zhd == pytest.approx(2.307, abs=ONE_CENTIMETRE)
    # Derived: 0.0022768 * 1013.25 / (1 - 0.00266 cos 90 deg) = 2.30697 m.
    assert zhd == pytest.approx(0.0022768 * 1013.25, abs=1e-6)
    assert 0.05 < zwd < 0.15                  # common practice: wet part ~0.1 m, 50 % humidity


def test_zenith_delay_shrinks_with_height_as_the_pressure():
    # Derived from the standard atmosphere: p(2000 m) = 1013.25 (1 - 2.2557e-5 * 2000)^5.2568 = 795.0 hPa.
    p, t, _ = tr.standard_atmosphere(2000.0)
    assert p == pytest.approx(795.0, abs=0.2)
    assert t == pytest.approx(275.15, abs=1e-9)
    zhd0, _ = tr.saastamoinen_zenith_m(0.0, 0.0)
    zhd2, _ = tr.saastamoinen_zenith_m(0.0, 2000.0)
    assert zhd2 / zhd0 == pytest.approx(795.0 / 1013.25, rel=2e-3)


def test_given_weather_is_used():
    zhd, zwd = tr.saastamoinen_zenith_m(0.0, 0.0, pressure_hpa=1000.0, temperature_k=300.0, vapour_hpa=20.0)
    assert zhd == pytest.approx(0.0022768 * 1000.0 / (1 - 0.00266), rel=1e-12)
    assert zwd == pytest.approx(0.002277 * (1255 / 300 + 0.05) * 20.0, rel=1e-12)


def test_mapping_is_one_at_zenith_and_about_ten_at_five_degrees():
    # Exact at zenith by construction (Niell 1996 eq. 4 normalisation); ~10 at 5 deg is common practice.
    el = np.radians([90.0, 30.0, 15.0, 5.0])
    dry, wet = tr.niell_mapping(el, np.radians(52.0), 100.0, 150.0)
    assert dry[0] == pytest.approx(1.0, abs=1e-12) and wet[0] == pytest.approx(1.0, abs=1e-12)
    assert dry[1] == pytest.approx(1.0 / np.sin(el[1]), rel=0.01)   # thin-shell limit at 30 deg
    assert 9.5 < dry[3] < 10.6 and 9.5 < wet[3] < 11.5
    assert np.all(np.diff(dry) > 0) and np.all(np.diff(wet) > 0)


def test_slant_delay_follows_input_shapes():
    el = np.radians(np.linspace(5, 90, 12)).reshape(3, 4)
    d = tr.slant_delay_m(el, np.radians(78.9), 84.0, 124.0)
    assert d.shape == (3, 4)
    assert d[-1, -1] == pytest.approx(sum(tr.saastamoinen_zenith_m(np.radians(78.9), 84.0)), abs=1e-9)


def test_southern_hemisphere_seasons_are_shifted_half_a_year():
    n = tr.niell_mapping(np.radians(5.0), np.radians(45.0), 0.0, 28.0)[0]
    s = tr.niell_mapping(np.radians(5.0), np.radians(-45.0), 0.0, 28.0 + 365.25 / 2)[0]
    assert n == pytest.approx(s, rel=1e-12)
