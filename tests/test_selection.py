"""Ephemeris selection rules (gnssrel.orbits.selection) and the NaN-with-reason contract of broadcast_states."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import refdata_file
from ephemeris_tables import ephemeris_table

from gnssrel.orbits.broadcast import broadcast_states, time_grid
from gnssrel.orbits.selection import STATUS_CODES, select_ephemerides

T0 = np.datetime64("2020-06-25T00:00", "ns")


def _at(hours):
    return T0 + np.round(np.asarray(hours, dtype=float) * 3600e9).astype("int64").astype("timedelta64[ns]")


_table = ephemeris_table


def gps_table():
    return _table([
        {"sv": "G01", "toe": _at(0), "toc": _at(0), "transmission_time": _at(-2), "health": 0, "fit_interval_h": 4.0},
        {"sv": "G01", "toe": _at(2), "toc": _at(2), "transmission_time": _at(0), "health": 0, "fit_interval_h": 4.0},
        {"sv": "G01", "toe": _at(4), "toc": _at(4), "transmission_time": _at(3.5), "health": 0, "fit_interval_h": 4.0},
        {"sv": "G02", "toe": _at(2), "toc": _at(2), "transmission_time": _at(0), "health": 1, "fit_interval_h": 4.0},
        {"sv": "G03", "toe": _at(2), "toc": _at(2), "transmission_time": _at(0), "health": 0, "fit_interval_h": 10.0},
    ])


def test_gps_nearest_toe_within_half_fit_interval_and_already_transmitted():
    times = _at([0.5, 1.5, 3.2, 3.6, 6.1, 7.0])
    rows, status = select_ephemerides(gps_table(), ["G01", "G02", "G03", "G09"], times, "G", rule="receiver")
    # receiver rule, G01: 0.5 h -> toe 0; 1.5 h -> toe 2; 3.2 h -> toe 4 nearest but sent at 3.5 h -> toe 2;
    # 3.6 h -> toe 4; 6.1 h -> beyond 4 h + 2 h -> none; 7 h -> none.
    assert rows[:, 0].tolist() == [0, 1, 1, 2, -1, -1]
    assert status[:, 0].tolist() == [0, 0, 0, 0, 1, 1]
    assert status[:, 1].tolist() == [2, 2, 2, 2, 1, 1]          # unhealthy inside its window
    assert rows[:, 2].tolist() == [4] * 6                       # 10 h fit interval: toe +- 5 h
    assert status[:, 3].tolist() == [5] * 6                     # not in the navigation data
    rows_u, status_u = select_ephemerides(gps_table(), ["G02"], times, "G", include_unhealthy=True,
                                          rule="receiver")
    assert rows_u[:4, 0].tolist() == [3, 3, 3, 3] and status_u[:4, 0].tolist() == [0] * 4
    # post rule (the default): the nearest toe whatever the transmission time -> toe 4 at 3.2 h
    rows_p, status_p = select_ephemerides(gps_table(), ["G01"], times, "G")
    assert rows_p[:, 0].tolist() == [0, 1, 2, 2, -1, -1] and status_p[:, 0].tolist() == [0, 0, 0, 0, 1, 1]


@pytest.mark.parametrize("system, fit_h, half_h", [
    ("G", np.nan, 2.0),   # no fit interval given: the 4-h fit's half, IS-GPS-200 20.3.4.4 (toe mid-fit)
    ("G", 0.0, 2.0),      # RINEX 2 writes 0 for "4 h" (a flag, not hours): the same default
    ("G", 6.0, 3.0),      # hours given: half of them
    ("J", 2.0, 1.0),      # QZSS flag 0 read as 2 h (IS-QZSS-PNT 4.1.2.4, from memory): +- 1 h
    ("J", np.nan, 1.0),   # QZSS flag 1 ("longer"): the 2-h fit's half all the same
])
def test_default_half_window_where_the_record_gives_no_fit_interval(system, fit_h, half_h):
    table = _table([{"sv": f"{system}07", "toe": _at(5), "toc": _at(5), "transmission_time": _at(3),
                     "health": 0, "fit_interval_h": fit_h}])
    one_s = 1 / 3600
    times = _at([5 - half_h - one_s, 5 - half_h, 5 + half_h, 5 + half_h + one_s])
    rows, status = select_ephemerides(table, [f"{system}07"], times, system)
    assert rows[:, 0].tolist() == [-1, 0, 0, -1]
    assert status[:, 0].tolist() == [1, 0, 0, 1]


def test_not_yet_transmitted_has_its_own_reason_under_the_receiver_rule():
    table = _table([{"sv": "G05", "toe": _at(4), "toc": _at(4), "transmission_time": _at(3), "health": 0,
                         "fit_interval_h": 4.0}])
    rows, status = select_ephemerides(table, ["G05"], _at([2.5, 3.0, 5.9]), "G", rule="receiver")
    assert rows[:, 0].tolist() == [-1, 0, 0]
    assert STATUS_CODES[status[0, 0]] == "ephemeris not yet transmitted"
    rows, status = select_ephemerides(table, ["G05"], _at([2.5, 3.0, 5.9]), "G", rule="post")
    assert rows[:, 0].tolist() == [0, 0, 0] and status[:, 0].tolist() == [0, 0, 0]


def test_galileo_prefers_inav_limits_3_h_after_toe_30_min_before_and_excludes_e14_e18():
    table = _table([
        {"sv": "E01", "toe": _at(1.0), "toc": _at(1.0), "transmission_time": _at(1.2), "nav_type": "FNAV", "health": 0, "accuracy_m": 3.12},
        {"sv": "E01", "toe": _at(0.5), "toc": _at(0.5), "transmission_time": _at(0.7), "nav_type": "INAV", "health": 0, "accuracy_m": 3.12},
        {"sv": "E02", "toe": _at(0.5), "toc": _at(0.5), "transmission_time": _at(0.7), "nav_type": "INAV", "health": 0, "accuracy_m": -1.0},
        {"sv": "E14", "toe": _at(0.5), "toc": _at(0.5), "transmission_time": _at(0.7), "nav_type": "INAV", "health": 0, "accuracy_m": 3.12},
    ])
    times = _at([-0.1, 0.05, 1.1, 3.4, 3.6, 4.1])
    rows, status = select_ephemerides(table, ["E01", "E02", "E14"], times, "E")
    e01_inav, e01_fnav = (table.index[(table.sv == "E01") & (table.nav_type == k)][0] for k in ("INAV", "FNAV"))
    # -0.1 h: I/NAV toe 0.6 h ahead (> 30 min before toe) -> none; 0.05 h: 0.45 h ahead -> I/NAV;
    # 1.1 h: I/NAV (0.6 h old) preferred over the fresher F/NAV; 3.4 h: I/NAV 2.9 h old;
    # 3.6 h: I/NAV 3.1 h old (> 3 h) -> F/NAV (2.6 h); 4.1 h: both older than 3 h -> none.
    assert rows[:, 0].tolist() == [-1, e01_inav, e01_inav, e01_inav, e01_fnav, -1]
    assert status[:, 0].tolist() == [1, 0, 0, 0, 0, 1]
    assert status[:, 1].tolist() == [1, 2, 2, 2, 1, 1]           # SISA NAPA counts as unhealthy
    assert status[:, 2].tolist() == [3] * 6                      # excluded by rule
    # asked for, E14 keeps its own limits (eccentric orbit): 1.5 h after toe, none before
    _, status_u = select_ephemerides(table, ["E14"], times, "E", include_unhealthy=True)
    assert status_u[:, 0].tolist() == [1, 1, 0, 1, 1, 1]


def test_glonass_within_20_minutes_of_tb_ties_to_the_newer():
    table = _table([{"sv": "R07", "toc": _at(0.5), "health": 0}, {"sv": "R07", "toc": _at(1.0), "health": 0}])
    rows, status = select_ephemerides(table, ["R07"], _at([0.16, 0.2, 0.74, 0.75, 4 / 3, 1.34]), "R")
    # 0.75 h is 15 min from both t_b: the newer (t_b 1.0 h) wins; 1 h 20 min is exactly 20 min after t_b
    assert rows[:, 0].tolist() == [-1, 0, 0, 1, 1, -1]
    assert status[:, 0].tolist() == [1, 0, 0, 0, 0, 1]


@pytest.mark.refdata
def test_broadcast_states_give_nan_rows_with_reasons_and_go_on():
    from gnssrel.io.rinex_nav import read_navigation

    nav = read_navigation(refdata_file("2020-177/MOJN00DNK_R_20201770000_01D_MN.rnx.gz"))
    times = time_grid(np.datetime64("2020-06-25T10:00"), np.datetime64("2020-06-25T12:00"), 300)
    ds = broadcast_states(nav, times)
    assert set(ds.sizes.items()) >= {("time", 25), ("axis", 3)}
    assert ds.attrs["time_scale"] == "GPST" and ds["status"].attrs["status_codes"][0] == "ok"
    ok = ds["status"].values == 0
    pos = ds["position_ecef_m"].values
    assert np.all(np.isfinite(pos[ok])) and np.all(np.isnan(pos[~ok]))
    assert np.all(ds["ephemeris_row"].values[~ok] == -1) and np.all(ds["ephemeris_row"].values[ok] >= 0)
    assert np.all(ds["status"].sel(sv="E14").values == 3)         # excluded, the others go on
    assert set("GECJR") == {str(s)[0] for s in ds["sv"].values}
    # every satellite sits at its orbit radius (derived from the ICD nominal orbits:
    # MEO 25.5-29.6 Mm, IGSO/GEO/QZSS ~42.2 Mm +- the QZSS eccentricity 0.075)
    radius = np.linalg.norm(pos[ok], axis=1)
    assert np.all((radius > 25.3e6) & (radius < 45.5e6))
    # the used record's toe lies within the system's window of each epoch
    toe = ds["toe"].values[ok]
    age_s = np.abs((np.broadcast_to(times[:, None], ok.shape)[ok] - toe).astype(np.int64)) / 1e9
    assert age_s.max() <= 3 * 3600
    # clock polynomial at toc equals a_f0 (row lookup in the table)
    g = ds.sel(sv="G05")
    i = int(np.flatnonzero(g["status"].values == 0)[0])
    row = nav.ephemerides["G"].iloc[int(g["ephemeris_row"].values[i])]
    dt = (times[i] - np.datetime64(row["toc"], "ns")).astype(np.int64) / 1e9
    expected = row["clock_bias_s"] + row["clock_drift_s_per_s"] * dt + row["clock_drift_rate_s_per_s2"] * dt**2
    assert g["clock_poly_s"].values[i] == pytest.approx(expected, abs=1e-18)


@pytest.mark.refdata
def test_eci_frame_option_adds_inertial_states():
    from gnssrel.io.rinex_nav import read_navigation

    nav = read_navigation(refdata_file("2020-177/MOJN00DNK_R_20201770000_01D_MN.rnx.gz"), systems="GR")
    times = time_grid(np.datetime64("2020-06-25T10:00"), np.datetime64("2020-06-25T11:00"), 600)
    ds = broadcast_states(nav, times, frame="eci")
    assert np.allclose(ds["position_eci_m"].values[0], ds["position_ecef_m"].values[0], equal_nan=True)
    r_ecef = np.linalg.norm(ds["position_ecef_m"].values, axis=-1)
    r_eci = np.linalg.norm(ds["position_eci_m"].values, axis=-1)
    assert np.allclose(r_eci, r_ecef, equal_nan=True, rtol=0, atol=1e-6)
    speed = np.linalg.norm(ds["velocity_eci_m_per_s"].values, axis=-1)
    assert np.nanmin(speed) > 3.4e3 and np.nanmax(speed) < 4.1e3    # GPS ~3.87, GLONASS ~3.95 km/s (derived)
