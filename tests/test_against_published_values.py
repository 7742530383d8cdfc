"""Relativity terms against published (and derived) outside values.

Each check names its source and status as in ../shared/REFERENCE-CHECKS.md
(E1-E10 of section 8, sections 5-7 and 10): published = stated in the cited
document, derived = computed in double precision from published formulas and
constants, from memory = not confirmed.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import ONE_NANOSECOND
from relativity_orbits import kepler_state

from gnssrel.constants import (
    C_M_S,
    GM_EARTH_IERS_M3_S2,
    GPS,
    GPS_FACTORY_FREQUENCY_OFFSET,
    GPS_FUNDAMENTAL_FREQUENCY_HZ,
    GPS_NOMINAL_SEMI_MAJOR_AXIS_M,
    L_G,
    SECONDS_PER_DAY,
    SYSTEMS,
    W0_M2_S2,
)
from gnssrel.relativity import clock_terms, rules, signal_path

NS_PER_DAY = SECONDS_PER_DAY * 1e9


def circular_state(a_m):
    """Circular equatorial inertial state of radius a (ECI), shapes (3,)."""
    v = np.sqrt(GM_EARTH_IERS_M3_S2 / a_m)
    return np.array([a_m, 0.0, 0.0]), np.array([0.0, v, 0.0])


def mean_rate_point_mass(a_m, gm=GM_EARTH_IERS_M3_S2):
    """Orbit-mean dtau/dTT - 1 without J2: L_G - 3GM/(2ac^2) (Ashby 2003 eqs. 27-34; derived)."""
    return L_G - 1.5 * gm / (a_m * C_M_S**2)


def test_f_constant_gps_is_gps_200():
    # E4: IS-GPS-200 20.3.3.3.3.1, F = -4.442807633e-10 s/m^0.5 (published, V2); tolerance 5e-19
    assert SYSTEMS["G"].f_s_sqrt_m == pytest.approx(-4.442807633e-10, abs=5e-19)
    assert rules.RULES["G"].f_s_sqrt_m == SYSTEMS["G"].f_s_sqrt_m


@pytest.mark.parametrize("letter", ["E", "C"])
def test_f_constant_galileo_beidou(letter):
    # E5: F = -2 sqrt(3.986004418e14)/c^2 = -4.442807309e-10 (derived; ICD print from memory)
    assert SYSTEMS[letter].f_s_sqrt_m == pytest.approx(-4.442807309e-10, abs=5e-19)


def test_factory_frequency_is_gps_200():
    # E1: IS-GPS-200E 3.3.1.1: 10.23 MHz x (1 - 4.4647e-10) = 10.2299999954326 MHz,
    # df = -4.5674e-3 Hz (published V2 + derived)
    f = GPS_FUNDAMENTAL_FREQUENCY_HZ * (1.0 + GPS_FACTORY_FREQUENCY_OFFSET)
    assert f == pytest.approx(10_229_999.9954326, abs=1e-7)
    assert f - GPS_FUNDAMENTAL_FREQUENCY_HZ == pytest.approx(-4.5674e-3, abs=1e-7)


def test_geoid_rate_is_l_g():
    # E7: IERS Conventions 2010 Table 1.1 gives L_G = 6.969290134e-10 and W0 = 62 636 856.0 m^2/s^2
    # (published, V2); W0/c^2 = L_G is their consistency (derived), tolerance 1e-18
    assert W0_M2_S2 / C_M_S**2 == pytest.approx(L_G, abs=1e-18)


def test_nominal_gps_rate_and_split():
    # IS-GPS-200 3.3.1.1: the clock is set low by 4.4647e-10 (published) because in
    # orbit it runs fast by that much.  The split into gravity and velocity parts is derived
    # (REFERENCE-CHECKS 10 constants: a = 26 561 750 m, GM = 3.986004418e14, L_G = 6.969290134e-10,
    # one day = 86 400 s):
    #   gravity  = (L_G - GM/(a c^2)) x 86 400 s = (6.969290134e-10 - 1.669705e-10) x 86 400 s
    #            = 5.299585e-10 x 86 400 s = +45.7884 us/day
    #   velocity = -GM/(2 a c^2) x 86 400 s = -8.34852e-11 x 86 400 s = -7.2131 us/day
    # (sum 38.5753 us/day; REFERENCE-CHECKS 5 quotes +45.85 / -7.214 for a split against the
    # potential at the Earth's surface without rotation: a different split, not comparable).
    a = GPS_NOMINAL_SEMI_MAJOR_AXIS_M
    p, v = circular_state(a)
    # the point-mass part: evaluate with J2 = 0 (the nominal value ignores J2)
    r = clock_terms.rate_terms(p, v, frame="eci", j2=0.0)
    assert float(r["rate_total"]) == pytest.approx(4.4647e-10, abs=5e-15)
    assert float(r["rate_total"]) == pytest.approx(mean_rate_point_mass(a), abs=1e-20)
    us_gravity = float(r["rate_gravity"]) * SECONDS_PER_DAY * 1e6
    us_velocity = float(r["rate_velocity"]) * SECONDS_PER_DAY * 1e6
    assert us_gravity == pytest.approx(45.7884, abs=0.001)    # derived above
    assert us_velocity == pytest.approx(-7.2131, abs=0.001)   # derived above; E6: 7 213.1 ns/day (derived)
    assert float(-r["rate_velocity"]) == pytest.approx(8.349e-11, abs=2e-14)  # E6 (Wikipedia, V)


def test_kouba_hardware_rate():
    # E2: Kouba 2004 abstract: 38 575.008 ns/day for a = 26 561 400 m (published);
    # derived here with mu_GPS or the IERS GM (they differ by 4e-5 ns/day): 38 575.005.
    for gm in (GPS.gm_m3_s2, GM_EARTH_IERS_M3_S2):
        ns_per_day = mean_rate_point_mass(26_561_400.0, gm) * NS_PER_DAY
        assert ns_per_day == pytest.approx(38_575.008, abs=0.01)
    # the same through rate_terms on a circular orbit (J2 switched off: the published value ignores it)
    p, v = circular_state(26_561_400.0)
    got = float(clock_terms.rate_terms(p, v, frame="eci", j2=0.0)["rate_total"]) * NS_PER_DAY
    assert got == pytest.approx(38_575.008, abs=0.01)


def test_periodic_amplitude_for_e_001():
    # E3: |F| e sqrtA for e = 0.01, sqrtA = 5153.8 -> 22.897 ns (derived; Ashby 2003 "about 23 ns")
    amp = clock_terms.periodic_icd_s(0.01, 5153.8, np.pi / 2)
    assert -amp == pytest.approx(22.897 * ONE_NANOSECOND, abs=0.05 * ONE_NANOSECOND)
    assert -amp == pytest.approx(22.897e-9, abs=0.001e-9)


def test_kepler_state_form_equals_icd_form():
    # E10 (derived): on a Kepler orbit -2 r.v/c^2 = F e sqrtA sin E; e = 0.01, E = 1 rad,
    # sqrtA = 5153.8 -> -1.926745e-08 s; tolerance 1e-15 s
    expected = -1.926745e-08
    assert float(clock_terms.periodic_icd_s(0.01, 5153.8, 1.0)) == pytest.approx(expected, abs=1e-14)
    a = 5153.8**2
    m0 = 1.0 - 0.01 * np.sin(1.0)  # mean anomaly for E = 1 rad
    pos, vel, big_e = kepler_state(a, 0.01, 0.96, 0.3, 0.7, m0, [0.0], gm=GPS.gm_m3_s2)
    assert big_e[0, 0] == pytest.approx(1.0, abs=1e-14)
    state = float(clock_terms.periodic_state_s(pos, vel)[0, 0])
    assert state == pytest.approx(expected, abs=1e-14)  # the value is printed to 7 digits
    assert state == pytest.approx(float(clock_terms.periodic_icd_s(0.01, 5153.8, 1.0)), abs=1e-15)


def test_kepler_equality_over_an_orbit_and_shapes():
    # E10 (derived) along whole orbits of several satellites: shapes (n_t, n_sat) follow the input
    t = np.arange(0.0, 43_200.0, 600.0)
    a = np.array([26_561_750.0, 29_600_000.0, 42_164_000.0])
    e = np.array([0.02, 0.16, 0.08])
    pos, vel, big_e = kepler_state(a, e, [0.96, 0.9, 0.7], [0, 1, 2], [0.3, 0.2, 0.1], [0, 2, 4], t,
                                   gm=GPS.gm_m3_s2)
    state = clock_terms.periodic_state_s(pos, vel)
    icd = clock_terms.periodic_icd_s(e, np.sqrt(a), big_e)
    assert state.shape == icd.shape == (t.size, 3)
    assert np.max(np.abs(state - icd)) < 1e-15  # seconds
    # an eccentric Galileo-like orbit (e = 0.16) gives terms of several hundred ns
    assert np.max(np.abs(icd[:, 1])) > 300 * ONE_NANOSECOND


def test_osculating_elements_reproduce_the_kepler_elements():
    t = np.arange(0.0, 40_000.0, 1000.0)
    pos, vel, big_e = kepler_state(26_560e3, 0.01, np.radians(55), 0.4, 0.9, 0.2, t)
    el = clock_terms.osculating_elements(pos, vel, GM_EARTH_IERS_M3_S2)
    assert np.allclose(el["semi_major_axis_m"], 26_560e3, rtol=0, atol=1e-4)
    assert np.allclose(el["eccentricity"], 0.01, rtol=0, atol=1e-12)
    assert np.allclose(el["inclination_rad"], np.radians(55), rtol=0, atol=1e-12)
    assert np.allclose(np.angle(np.exp(1j * (el["eccentric_anomaly_rad"] - big_e))), 0, atol=1e-10)


def test_j2_term_size_and_period():
    # REFERENCE-CHECKS 6 and 10 (derived from the from-memory formula, which
    # tests/test_proper_time_integral.py confirms numerically): coefficient
    # 1.0720e-10 s, x sin^2(55 deg) = 7.1934e-11 s; Kouba 2004 (published): ~0.1 ns, ~6 h period
    a = GPS_NOMINAL_SEMI_MAJOR_AXIS_M
    amp90 = float(clock_terms.j2_amplitude_s(a, np.pi / 2, a_earth=6_378_137.0))
    amp55 = float(clock_terms.j2_amplitude_s(a, np.radians(55), a_earth=6_378_137.0))
    assert amp90 == pytest.approx(1.0720e-10, abs=0.0005e-10)
    assert amp55 == pytest.approx(7.1934e-11, abs=0.0005e-11)
    # sin(2u): period half the orbit
    u = np.linspace(0, 2 * np.pi, 9)
    term = clock_terms.j2_periodic_s(a, np.radians(55), u)
    assert np.allclose(term[:5], term[4:], atol=1e-25)
    assert term[1] < 0  # at u = 45 deg the term is negative: -(3/2) J2 ... sin(2u)


def test_sagnac_equator_circumnavigation():
    # E8: Ashby 2003: a clock carried once round the equator, 2 omega pi R^2/c^2 = 207.4 ns
    # (published V2 + derived); tolerance 0.1 ns
    assert signal_path.equator_circumnavigation_sagnac_s() == pytest.approx(207.4e-9, abs=0.1e-9)
    # the same as the sum of the per-step Sagnac terms omega (r_1 x r_2)_z / c^2 round the equator
    lon = np.linspace(0, 2 * np.pi, 100_001)
    ring = 6_378_137.0 * np.stack([np.cos(lon), np.sin(lon), 0 * lon], axis=-1)
    steps = signal_path.sagnac_s(ring[1:], ring[:-1])  # (x_s y_r - y_s x_r) with s ahead of r
    assert -steps.sum() == pytest.approx(207.4e-9, abs=0.1e-9)


def test_sagnac_maximum_and_range():
    # REFERENCE-CHECKS 7/10 (derived): maximum 133.3 ns (39.96 m), equatorial receiver,
    # satellite on the horizon in the equatorial plane (receiver radius 6 371 km as in section 10)
    rr, rs = 6_371_000.0, GPS_NOMINAL_SEMI_MAJOR_AXIS_M
    rx = np.array([rr, 0.0, 0.0])
    ang = np.arccos(rr / rs)
    sat = rs * np.array([np.cos(ang), np.sin(ang), 0.0])
    assert abs(float(signal_path.sagnac_s(sat, rx))) == pytest.approx(133.3e-9, abs=0.1e-9)
    assert abs(float(signal_path.sagnac_m(sat, rx))) == pytest.approx(39.96, abs=0.01)


def test_shapiro_zenith_and_horizon():
    # REFERENCE-CHECKS 7/10 (derived from IERS 2010 eq. 11.17): 12.66 mm zenith, 18.68 mm horizon
    # (r_r = 6 371 km, r_s = 26 561.75 km); REFERENCE-CHECKS 7 rounds them to 12.7 / 18.7 mm
    rr, rs = 6_371_000.0, GPS_NOMINAL_SEMI_MAJOR_AXIS_M
    rx = np.array([0.0, 0.0, rr])
    zenith = np.array([0.0, 0.0, rs])
    horizon = np.array([np.sqrt(rs**2 - rr**2), 0.0, rr])
    assert float(signal_path.shapiro_m(zenith, rx)) == pytest.approx(12.66e-3, abs=0.01e-3)
    assert float(signal_path.shapiro_m(horizon, rx)) == pytest.approx(18.68e-3, abs=0.01e-3)
    assert float(signal_path.shapiro_s(zenith, rx)) * C_M_S == pytest.approx(12.66e-3, abs=0.01e-3)


def test_rate_uses_inertial_speed_from_ecef_states():
    # An ECEF state of a circular equatorial orbit has v_ecef = v_eci - omega x r:
    # the rate must be the same as from the inertial state (potential.py docstring).
    omega = 7.292115e-5
    p, v = circular_state(GPS_NOMINAL_SEMI_MAJOR_AXIS_M)
    v_ecef = v - np.cross([0.0, 0.0, omega], p)
    eci = clock_terms.rate_terms(p, v, frame="eci")
    ecef = clock_terms.rate_terms(p, v_ecef, frame="ecef", omega_rad_s=omega)
    assert float(ecef["rate_total"]) == pytest.approx(float(eci["rate_total"]), abs=1e-22)
    naive = clock_terms.rate_terms(p, v_ecef, frame="eci")  # the mistake: ECEF speed as if inertial
    assert abs(float(naive["rate_total"] - eci["rate_total"])) > 5e-11


def test_glonass_rule_is_reported_not_applied():
    # ESA Navipedia "Relativistic Clock Correction" (published): GLONASS broadcast clock
    # terms already contain the periodic term; GPS/Galileo/BeiDou/QZSS users apply it.
    flags = rules.per_satellite(["G05", "E11", "C20", "J02", "R07"], "user_applies_periodic")
    assert flags.tolist() == [True, True, True, True, False]
    assert rules.per_satellite(["G01", "E01"], "nominal_rate")[0] == pytest.approx(4.4647e-10)
    assert np.isnan(rules.per_satellite(["G01", "E01"], "nominal_rate")[1])
    with pytest.raises(KeyError):
        rules.rule_for("X01")
