"""The system model (gnssrel.systems), the formulas it routes to, and the one table of status codes.

Values are hand computations from the cited specifications (derived) unless marked otherwise.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from gnssrel.constants import ALL_SYSTEM_ORDER, C_M_S, SYSTEM_ORDER, SYSTEMS
from gnssrel.orbits import status
from gnssrel.orbits.frames import inertial_velocity, omega_cross_r, osculating_elements, rotate_z
from gnssrel.orbits.models import ORBIT_MODELS, broadcast_clock_s, clock_polynomial_s, orbit_model
from gnssrel.orbits.precise import STATUS_CODES as PRECISE_STATUS
from gnssrel.orbits.selection import STATUS_CODES as SELECTION_STATUS
from gnssrel.orbits.selection import SYSTEM_LIMITS
from gnssrel.relativity.clock_terms import periodic_term_s
from gnssrel.signals import CARRIER_HZ
from gnssrel.systems import SYSTEM_MODELS, per_satellite, system_model
from gnssrel.timescales import SYSTEM_TIME_SCALE


def test_every_system_has_one_complete_row():
    assert set(SYSTEM_MODELS) == set(ALL_SYSTEM_ORDER) == set(SYSTEM_LIMITS)
    assert SYSTEM_ORDER == "GECJR" and ALL_SYSTEM_ORDER == "GECJRIS"   # NavIC, SBAS only when asked
    for letter, model in SYSTEM_MODELS.items():
        assert model.orbit_model in ORBIT_MODELS
        assert model.constants is SYSTEMS[letter] and model.time_scale == SYSTEM_TIME_SCALE[letter]
        assert model.record_types and model.carriers == CARRIER_HZ[letter]
        assert model.reference_column in ("toe", "toc")
    assert system_model("R07").orbit_model == "state_vector" and system_model("G05").has_elements
    with pytest.raises(KeyError, match="unknown GNSS system"):
        system_model("X01")


def test_conventions_as_the_specifications_state_them():
    # IS-GPS-200 20.3.3.3.3.1 (user adds dt_r, published); GLONASS: inside tau_n, gamma_n (Navipedia, published).
    assert per_satellite(["G05", "E11", "C20", "J02", "R07"], "user_applies_periodic").tolist() == \
        [True, True, True, True, False]
    # IS-GPS-200 20.3.3.3.3.1 prints F = -4.442807633e-10 s/m^0.5 (published).
    assert system_model("G").f_s_sqrt_m == pytest.approx(-4.442807633e-10, rel=1e-9)
    assert system_model("R").clock_columns[2] is None and not system_model("R").clock_week_fold
    assert system_model("E").record_types == ("INAV", "FNAV")


def test_clock_polynomial_folds_the_week_only_where_the_system_says_so():
    # A toc stored one week too early: IS-GPS-200 20.3.3.3.3.1 folds t - t_oc = 604 900 s to 100 s.
    t = np.array(["2020-06-25T00:01:40"], dtype="datetime64[ns]")
    toc = t - np.timedelta64(604_900, "s")
    kepler = {"toc": toc, "clock_bias_s": 1e-4, "clock_drift_s_per_s": 1e-11, "clock_drift_rate_s_per_s2": 1e-18}
    assert clock_polynomial_s(kepler, t, "G")[0] == pytest.approx(1e-4 + 1e-11 * 100 + 1e-18 * 100**2, abs=1e-20)
    # GLONASS ICD 2008 3.3.3: -tau_n + gamma_n (t - t_b), no fold (t_b is a full datetime).
    glonass = {"toc": toc, "clock_bias_s": 1e-4, "relative_frequency_bias": 1e-12}
    assert clock_polynomial_s(glonass, t, "R")[0] == pytest.approx(1e-4 + 1e-12 * 604_900, abs=1e-20)
    table = pd.DataFrame([{"sv": "G05", **kepler, "toc": toc[0]}])
    got = broadcast_clock_s(table, np.array([0, -1]), np.repeat(t, 2), "G")
    assert got[0] == pytest.approx(1e-4 + 1e-11 * 100 + 1e-18 * 100**2, abs=1e-20) and np.isnan(got[1])


def test_the_model_picks_the_form_of_the_periodic_term():
    r = np.array([[2.0e7, 1.0e7, 1.0e7]])
    v = np.array([[1000.0, -2000.0, 500.0]])
    # -2 r.v / c^2 (IS-GPS-200 20.3.3.3.3.1 note), hand computed: r.v = 2e10 - 2e10 + 5e9 = 5e9 m^2/s.
    state = -2.0 * 5.0e9 / C_M_S**2
    e, sqrt_a, big_e = np.array([0.01]), np.array([5153.7]), np.array([0.5])
    icd = SYSTEMS["E"].f_s_sqrt_m * 0.01 * 5153.7 * np.sin(0.5)
    got, form = periodic_term_s("E", r, v, e, sqrt_a, big_e)
    assert form == "icd" and got[0] == pytest.approx(icd, rel=1e-12)
    got, form = periodic_term_s("R", r, v, e, sqrt_a, big_e)       # GLONASS: no elements broadcast
    assert form == "state" and got[0] == pytest.approx(state, rel=1e-12)
    got, form = periodic_term_s("G", r, v, np.array([np.nan]), sqrt_a, big_e)   # no record: state form
    assert form == "state"


def test_orbit_model_columns_are_the_evaluators_inputs():
    assert "sqrt_a_sqrt_m" in orbit_model("G").columns and "x_m" in orbit_model("R").columns
    assert orbit_model("C").optional_columns == ("toe_sow_s", "is_geo", "a_dot_m_per_s", "delta_n_dot_rad_per_s2")
    assert orbit_model("I") is orbit_model("G") and "vx_m_per_s" in orbit_model("S").columns


def test_frame_helpers_are_the_rotation_and_omega_cross_r():
    w = 7.2921151467e-5
    r = np.array([7.0e6, -2.0e6, 3.0e6])
    np.testing.assert_allclose(omega_cross_r(r, w), np.cross([0.0, 0.0, w], r), rtol=1e-15)
    np.testing.assert_allclose(inertial_velocity(r, np.zeros(3), w), np.cross([0.0, 0.0, w], r), rtol=1e-15)
    np.testing.assert_allclose(rotate_z(np.array([1.0, 0.0, 2.0]), np.pi / 2), [0.0, 1.0, 2.0], atol=1e-15)
    # circular orbit at the node, i = 55 deg: a = r, e = 0, u = 0 (two-body relations, derived)
    gm, inc = SYSTEMS["G"].gm_m3_s2, np.radians(55.0)
    speed = np.sqrt(gm / 2.6e7)
    el = osculating_elements(np.array([2.6e7, 0, 0]), speed * np.array([0, np.cos(inc), np.sin(inc)]), gm)
    assert el["semi_major_axis_m"] == pytest.approx(2.6e7, rel=1e-12) and el["radius_m"] == 2.6e7
    assert el["eccentricity"] < 1e-12 and el["inclination_rad"] == pytest.approx(inc, abs=1e-12)
    assert el["argument_of_latitude_rad"] == pytest.approx(0.0, abs=1e-12)


def test_status_codes_are_one_table_without_collisions():
    assert len(set(status.STATUS_CODES.values())) == len(status.STATUS_CODES)
    assert set(status.BROADCAST_CODES) & set(status.PRECISE_CODES) == {status.STATUS_OK}
    # the texts of the selection module stay as they were written (ephemeris rules post/receiver)
    assert SELECTION_STATUS == {0: "ok", 1: "no record within the maximum age", 2: "unhealthy",
                                3: "excluded by rule", 4: "ephemeris not yet transmitted",
                                5: "satellite not in navigation data"}
    assert PRECISE_STATUS == {0: "ok", 6: "outside precise data", 7: "gap in precise data"}
    assert all(status.STATUS_CODES[k] == v for k, v in {**SELECTION_STATUS, **PRECISE_STATUS}.items())
