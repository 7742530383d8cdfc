"""The numerical proper-time integral against the closed-form clock terms.

Synthetic orbits we integrate ourselves (tests/relativity_orbits.py):
* a two-body Kepler orbit, where F e sqrt(A) sin E is exact (REFERENCE-CHECKS E10, derived);
* a J2-perturbed orbit from GPS-like initial conditions (a = 26 560 km, e = 0.01,
  i = 55 deg), integrated with scipy solve_ivp (DOP853), where the J2 clock term
  (Kouba 2004; coefficient from memory, REFERENCE-CHECKS 6) must close the gap.

Limits from REFERENCE-CHECKS 9 (Kouba 2004, published: J2 effect <= ~0.2 ns, improved
formula within ~0.015 ns): the specification form reproduces the numerical periodic
part within 0.2 ns, and with the J2 term within 0.02 ns (the 0.015 ns rounded up;
measured ~0.001 ns).

Which elements?  The closed forms are evaluated with *osculating* elements of
the integrated state (clock_terms.osculating_elements).  With them F e sqrt(A)
sin E equals -2 r.v/c^2 identically, and the J2 term is exactly the correction
that -2 r.v/c^2 misses (derivation in clock_terms.j2_periodic_s).  With *mean*
elements (a line fitted to the mean anomaly, mean a and e), the specification
form already follows part of the J2 short-period motion of r.v: it stays within
0.2 ns of the integral but the J2 term must not be added to it (see
test_mean_elements_behave_differently).
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import ONE_NANOSECOND
from relativity_orbits import integrate_j2_orbit, kepler_state

from gnssrel.constants import C_M_S, GM_EARTH_IERS_M3_S2, L_G
from gnssrel.relativity import clock_terms, proper_time

GM = GM_EARTH_IERS_M3_S2
DAY = np.arange(0.0, 86_400.0 + 1.0, 30.0)


def icd_from_elements(el):
    f = -2.0 * np.sqrt(GM) / C_M_S**2
    return f * el["eccentricity"] * np.sqrt(el["semi_major_axis_m"]) * np.sin(el["eccentric_anomaly_rad"])


def closure_ns(t, offset, closed_form):
    """Largest residual of a line fit to (integral - closed form), ns."""
    return np.max(np.abs(proper_time.decompose(t, offset - closed_form)["periodic_s"])) / ONE_NANOSECOND


@pytest.fixture(scope="module")
def j2_orbit():
    p0, v0, _ = kepler_state(26_560e3, 0.01, np.radians(55), np.radians(30), np.radians(40), 0.3, [0.0])
    pos, vel, state_function = integrate_j2_orbit(p0[0], v0[0], DAY)
    return pos, vel, state_function


def test_kepler_orbit_spec_form_is_exact():
    # two-body: integrand uses J2 = 0; the periodic part is F e sqrtA sin E to ~1e-15 s
    # (REFERENCE-CHECKS E10, derived), the rate is L_G - 3GM/(2ac^2) (Ashby 2003 eqs. 27-34)
    a = np.array([26_560e3, 29_600e3])
    e = np.array([0.01, 0.16])
    pos, vel, big_e = kepler_state(a, e, np.radians([55, 50]), [0.5, 1.0], [0.2, 2.0], [0.1, 3.0], DAY)
    offset = proper_time.proper_time_offset(DAY, pos, vel, frame="eci", j2=0.0)
    icd = clock_terms.periodic_icd_s(e, np.sqrt(a), big_e, system="E")  # E: mu = IERS GM
    parts = proper_time.decompose(DAY, offset - icd)
    assert np.max(np.abs(parts["periodic_s"])) < 2e-15
    assert parts["rate"] == pytest.approx(L_G - 1.5 * GM / (a * C_M_S**2), abs=1e-19)


def test_two_quadratures_agree(j2_orbit):
    # cumulative Simpson on 30 s samples vs adaptive DOP853 on the dense state function
    pos, vel, state_function = j2_orbit
    sampled = proper_time.proper_time_offset(DAY, pos, vel, frame="eci")
    adaptive = proper_time.proper_time_offset_along(state_function, DAY)
    assert sampled.shape == adaptive.shape == (DAY.size, 1)
    assert np.max(np.abs(sampled - adaptive)) < 1e-15


def test_j2_orbit_spec_form_within_the_j2_effect(j2_orbit):
    pos, vel, _ = j2_orbit
    offset = proper_time.proper_time_offset(DAY, pos, vel, frame="eci")
    el = clock_terms.osculating_elements(pos, vel, GM)
    icd = icd_from_elements(el)
    state = clock_terms.periodic_state_s(pos, vel)
    assert np.max(np.abs(icd - state)) < 1e-15  # osculating elements: identical forms
    j2 = clock_terms.j2_periodic_s(el["semi_major_axis_m"].mean(), el["inclination_rad"].mean(),
                                   el["argument_of_latitude_rad"])
    without = closure_ns(DAY, offset, icd)
    with_j2 = closure_ns(DAY, offset, icd + j2)
    assert without <= 0.2                      # Kouba 2004 (published): within the J2 effect
    assert without > 0.05                      # and the J2 effect is really there (~0.078 ns)
    assert with_j2 <= 0.02                     # Kouba 2004 ~0.015 ns, rounded up (measured ~0.001 ns)
    # the opposite sign, or half the coefficient, would not close: the formula is confirmed
    assert closure_ns(DAY, offset, icd - j2) > 0.1
    assert closure_ns(DAY, offset, icd + 0.5 * j2) > 0.02


def test_mean_elements_behave_differently(j2_orbit):
    # mean elements: a line through the osculating mean anomaly, mean a and e
    pos, vel, _ = j2_orbit
    offset = proper_time.proper_time_offset(DAY, pos, vel, frame="eci")
    el = clock_terms.osculating_elements(pos, vel, GM)
    e_osc, big_e = el["eccentricity"][:, 0], el["eccentric_anomaly_rad"][:, 0]
    m_line = np.polyval(np.polyfit(DAY, np.unwrap(big_e - e_osc * np.sin(big_e)), 1), DAY)
    e_mean, a_mean = e_osc.mean(), el["semi_major_axis_m"].mean()
    e_anom = m_line.copy()
    for _ in range(30):
        e_anom -= (e_anom - e_mean * np.sin(e_anom) - m_line) / (1.0 - e_mean * np.cos(e_anom))
    icd_mean = icd_from_elements({"eccentricity": e_mean, "semi_major_axis_m": a_mean,
                                  "eccentric_anomaly_rad": e_anom})[:, None]
    assert closure_ns(DAY, offset, icd_mean) <= 0.2
    state = clock_terms.periodic_state_s(pos, vel)
    assert np.max(np.abs(icd_mean - state)) / ONE_NANOSECOND > 0.03  # a real twice-per-rev difference


def test_decompose_handles_nan_and_shapes():
    t = np.arange(0.0, 1000.0, 10.0)
    y = np.stack([3e-9 + 4e-10 * t + 1e-9 * np.sin(t / 50), -2e-9 * t], axis=1)
    y[5, 0] = np.nan
    parts = proper_time.decompose(t, y)
    assert parts["rate"].shape == (2,)
    assert parts["rate"][1] == pytest.approx(-2e-9, rel=1e-12)
    assert np.isnan(parts["periodic_s"][5, 0]) and np.isfinite(parts["periodic_s"][6, 0])
    assert proper_time.longest_valid_run([False, True, True, False, True, True, True]) == (4, 7)
    assert proper_time.longest_valid_run([False, False]) == (0, 0)


def test_engine_on_synthetic_ecef_states():
    # relativity_terms / relativity_summary on J2 orbits turned into ECEF states (our own
    # propagation), GPS-like and GLONASS-like: osculating elements are used, the integral closes
    # with the J2 term (<= 0.02 ns, module text), the GPS-like rate is the factory offset
    # (IS-GPS-200 3.3.1.1, published) to the J2 level, GLONASS is reported but not applied.
    from relativity_orbits import eci_to_ecef, state_dataset

    from gnssrel.relativity.engine import relativity_summary, relativity_terms

    t = np.arange(0.0, 43_200.0, 60.0)
    p0, v0, _ = kepler_state([26_561_750.0, 25_510_000.0], [0.01, 0.001], np.radians([55, 64.8]),
                             [0.3, 2.0], [0.4, 1.0], [0.5, 2.0], [0.0])
    pos, vel, _ = integrate_j2_orbit(p0[0], v0[0], t)
    pos_ecef, vel_ecef = eci_to_ecef(t, pos, vel)
    states = state_dataset("2020-06-25T00:00:00", t, ["G99", "R99"], pos_ecef, vel_ecef)
    states["position_ecef_m"][100:103, 0, :] = np.nan  # a gap: two runs for G99
    ds = relativity_terms(states)
    assert ds["periodic_icd_s"].shape == (t.size, 2)
    assert np.isnan(ds["periodic_icd_s"][101, 0]) and np.isnan(ds["proper_time_offset_s"][101, 0])
    summary = relativity_summary(ds)
    g, r = summary["satellites"]["G99"], summary["satellites"]["R99"]
    assert g["integral_runs"] == 2
    # no broadcast elements: the specification form is evaluated with osculating ones, equal to
    # the state form by construction, so no specification-vs-state figure is claimed
    assert g["icd_vs_state_max_diff_ns"] is None and g["periodic_elements"] == "osculating"
    assert np.nanmax(np.abs(ds["periodic_diff_s"].values)) < 1e-15
    assert g["integral_vs_closed_form_with_j2_max_ns"] <= 0.02
    assert 0.04 < g["integral_vs_closed_form_max_ns"] <= 0.2
    assert g["rate_total"] == pytest.approx(4.4647e-10, abs=3e-14)
    assert g["rate_velocity"] + g["rate_gravity"] == pytest.approx(g["rate_total"], abs=1e-22)
    assert g["eccentricity"] == pytest.approx(0.01, abs=2e-4)
    assert g["periodic_amplitude_ns"] == pytest.approx(22.9, abs=0.5)
    assert g["user_applies_periodic"] and not r["user_applies_periodic"]
    assert r["integral_vs_closed_form_with_j2_max_ns"] <= 0.02
