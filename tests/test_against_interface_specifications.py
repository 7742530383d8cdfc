"""Per-system constants against the interface specifications (REFERENCE-CHECKS E4, E5, E7)."""

import math

import pytest

from gnssrel import constants as k


def test_f_constant_gps_is_published_value():
    # IS-GPS-200 20.3.3.3.3.1 prints F = -4.442807633e-10 s/m^0.5 (published)
    assert k.GPS.f_s_sqrt_m == pytest.approx(-4.442807633e-10, abs=5e-19)


@pytest.mark.parametrize("system", [k.GALILEO, k.BEIDOU])
def test_f_constant_galileo_beidou(system):
    # mu = 3.986004418e14 (Galileo OS SIS ICD 5.1.1, BDS-SIS-ICD 5.2.4); F derived = -4.442807309e-10
    assert system.f_s_sqrt_m == pytest.approx(-4.442807309e-10, abs=5e-19)


def test_geoid_rate_constant():
    # IERS Conventions 2010 Table 1.1: L_G = 6.969290134e-10 and W0 = 62 636 856.0 m^2/s^2 (published)
    assert k.W0_M2_S2 / k.C_M_S**2 == pytest.approx(k.L_G, abs=1e-18)


def test_factory_frequency_offset():
    # IS-GPS-200 3.3.1.1: 10.23 MHz x (1 - 4.4647e-10) = 10.22999999543 MHz (published)
    f = k.GPS_FUNDAMENTAL_FREQUENCY_HZ * (1 + k.GPS_FACTORY_FREQUENCY_OFFSET)
    assert f == pytest.approx(10.2299999954326e6, abs=1e-7)


def test_every_system_has_a_source_and_own_time_scale():
    assert set(k.SYSTEMS) == set(k.SYSTEM_ORDER)
    scales = {s.time_scale for s in k.SYSTEMS.values()}
    assert scales == {"GPST", "GST", "BDT", "QZSST", "GLONASST"}
    for s in k.SYSTEMS.values():
        assert s.source and 3.9e14 < s.gm_m3_s2 < 4.0e14
        assert math.isclose(s.omega_earth_rad_s, 7.2921e-5, rel_tol=1e-5)
