"""NavIC (I) and SBAS (S): system rows, states, periodic terms and rates, --systems (issue 14).

Sources: IRNSS SPS ICD 1.1 (the GPS user algorithm and constants; from memory); RTCA DO-229
A.4.4.11 (the SBAS GEO message as a quadratic in t - t_0; from memory).  The records are written
here (RINEX 3.04 / 4.00 layouts, gnssrel/io/rinex_nav_messages.py).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from conftest import ONE_NANOSECOND, refdata_file
from test_rinex4_messages import HEADER4, I_LNAV, S_SBAS, WEEK_2012

from gnssrel.constants import ALL_SYSTEM_ORDER, SYSTEM_ORDER, SYSTEMS
from gnssrel.io.rinex_nav import read_navigation
from gnssrel.jobs.common import parse_systems
from gnssrel.orbits.broadcast import broadcast_states
from gnssrel.orbits.geo_states import sbas_states
from gnssrel.orbits.keplerian import kepler_states
from gnssrel.systems import system_model

BRD4 = "2023-071/BRD400DLR_S_20230710000_01D_MN.rnx.gz"


def test_system_rows():
    navic, sbas = system_model("I05"), system_model("S27")
    # F = -2 sqrt(mu)/c^2 with the GPS mu: IS-GPS-200 prints -4.442807633e-10 (published; NavIC from memory).
    assert navic.f_s_sqrt_m == pytest.approx(-4.442807633e-10, rel=1e-9) and navic.has_elements
    assert navic.user_applies_periodic and navic.nominal_rate is None and navic.nominal_rate_note
    assert sbas.orbit_model == "sbas_quadratic" and sbas.reference_column == "toc"
    assert sbas.clock_columns == ("clock_bias_s", "clock_drift_s_per_s", None)
    assert sbas.periodic_note.startswith("undetermined") and sbas.nominal_rate is None
    assert SYSTEM_ORDER == "GECJR" and ALL_SYSTEM_ORDER == "GECJRIS" and set(SYSTEMS) == set(ALL_SYSTEM_ORDER)


def test_systems_option_takes_navic_and_sbas():
    assert parse_systems("I") == "I" and parse_systems("navic,sbas") == "IS" and parse_systems("GIS") == "GIS"


def test_sbas_quadratic_by_hand():
    rec = {"toc": np.datetime64("2023-03-12T00:00:00", "ns"), "x_m": 1.0e7, "y_m": 4.0e7, "z_m": 1.0e5,
           "vx_m_per_s": 1.0, "vy_m_per_s": -2.0, "vz_m_per_s": 0.5,
           "ax_m_per_s2": 1.0e-3, "ay_m_per_s2": 0.0, "az_m_per_s2": -2.0e-3}
    t = rec["toc"] + np.timedelta64(100, "s")
    got = sbas_states(rec, np.array([t]))
    # r = r0 + v0 dt + a0 dt^2 / 2, v = v0 + a0 dt with dt = 100 s (hand computed).
    assert got["position_ecef_m"][0].tolist() == [1.0e7 + 100.0 + 5.0, 4.0e7 - 200.0, 1.0e5 + 50.0 - 10.0]
    assert got["velocity_ecef_m_per_s"][0].tolist() == [1.1, -2.0, 0.3]
    assert np.isnan(got["eccentric_anomaly_rad"][0]) and got["tk_s"][0] == 100.0


def test_states_of_both_from_a_file(tmp_path):
    path = tmp_path / "nav4.rnx"
    path.write_text(HEADER4 + I_LNAV + S_SBAS)
    nav = read_navigation(path)
    t = WEEK_2012 + np.array([32, 92, 3600], dtype="timedelta64[s]")
    ds = broadcast_states(nav, t, systems="IS")
    assert list(ds.sv.values) == ["I02", "S27"]
    # NavIC: the GPS algorithm with the GPS constants -> the same state as a GPS record of the same elements.
    row = nav.ephemerides["I"].iloc[0]
    as_gps = kepler_states(row.to_dict(), t, "G")
    assert np.array_equal(ds.position_ecef_m.sel(sv="I02").values, as_gps["position_ecef_m"])
    radius = np.linalg.norm(ds.position_ecef_m.sel(sv="I02").values, axis=-1)
    assert np.all(np.abs(radius - 42_164e3) < 100e3)                       # geosynchronous
    # SBAS: t_0 = 00:00:32; 60 s later x moves 0.16 m/s * 60 s, y 0.2 * 60 + 1.25e-3 * 60^2 / 2.
    s27 = ds.position_ecef_m.sel(sv="S27").values
    assert s27[1].tolist() == pytest.approx([2.417094016e7 + 9.6, 3.489281600e7 + 12.0 + 2.25, 5.12e5 - 24.0],
                                            abs=1e-6)
    assert ds.status.sel(sv="S27").values.tolist() == [0, 0, 1]               # 6-min limit of the message
    assert ds.clock_poly_s.sel(sv="S27").values[1] == pytest.approx(1.862645149231e-09, abs=1e-21)


@pytest.mark.refdata
def test_relativity_of_navic_and_sbas_on_brd400dlr(tmp_path):
    # 2023-071 at 10-min steps: NavIC I02 I03 I06 I09 (all healthy), SBAS the GEOs with health 0
    # records (health 1 = ranging off in the MT17 bits; RINEX 3.04 8.3.3, from memory).
    from gnssrel.cli import main

    summary = tmp_path / "rel.json"
    assert main(["relativity", str(refdata_file(BRD4)), "--systems", "I,S", "--step", "600", "-q",
                 "--summary", str(summary)]) == 0
    out = json.loads(summary.read_text())
    assert list(out["by_system"]) == ["I", "S"]
    assert out["by_system"]["I"]["satellites"] == 4 and out["by_system"]["S"]["satellites"] >= 3
    i02 = out["satellites"]["I02"]
    # Periodic amplitude F e sqrt(A) = 4.4428e-10 * 0.00198 * 6493.4 = 5.72 ns; A 42 164 km.
    assert i02["periodic_amplitude_ns"] == pytest.approx(5.72, abs=0.02)
    assert abs(i02["semi_major_axis_m"] - 42_164e3) < 50e3
    assert i02["icd_vs_state_max_diff_ns"] < 0.2
    # Rate of a geosynchronous clock against TT: gravity - velocity ~ +46.58 us/day (derived, as QZSS/BeiDou GEO).
    assert i02["us_per_day_total"] == pytest.approx(46.58, abs=0.05)
    for sv, entry in out["satellites"].items():
        if sv.startswith("S"):
            assert entry["us_per_day_total"] == pytest.approx(46.58, abs=0.1)
            assert entry["periodic_max_abs_ns"] < 5.0 * ONE_NANOSECOND * 1e9
    assert not math.isnan(out["by_system"]["S"]["median_rate_total"])
