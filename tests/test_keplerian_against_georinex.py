"""Keplerian broadcast orbits against the reference library georinex, and against themselves.

georinex.keplerian2ecef (georinex 1.16.2) evaluates IS-GPS-200 Table 20-IV with
two simplifications of its own: one fixed-point step for Kepler's equation
(E = M + e sin M) and mu = 3.986004418e14 for GPS.  To compare the rest of its
algorithm (true anomaly, harmonic corrections, IDOT, node, rotations) at genuine
t_k, the test hands it a mean anomaly M0' chosen so that its single step lands
on our converged E_k (x + e sin x = E_k solved here, M0' = x - n_georinex t_k).
Then both must give the same ECEF position to well under a millimetre.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from conftest import ONE_MILLIMETRE, refdata_file

from gnssrel.constants import BEIDOU_GEO_PRNS
from gnssrel.orbits.frames import ecef_to_eci, eci_to_ecef
from gnssrel.orbits.keplerian import kepler_states, solve_kepler
from gnssrel.timescales import GPS_EPOCH

MOJN = "2020-177/MOJN00DNK_R_20201770000_01D_MN.rnx.gz"
GEORINEX_GM = 3.986004418e14  # georinex/keplerian.py (read from the installed source)

# georinex variable -> contract column
GEORINEX_NAMES = {
    "sqrtA": "sqrt_a_sqrt_m", "DeltaN": "delta_n_rad_per_s", "M0": "mean_anomaly_rad",
    "Eccentricity": "eccentricity", "omega": "perigee_argument_rad", "Cuc": "cuc_rad",
    "Cus": "cus_rad", "Crc": "crc_m", "Crs": "crs_m", "Cic": "cic_rad", "Cis": "cis_rad",
    "Io": "inclination_rad", "IDOT": "idot_rad_per_s", "Omega0": "omega0_rad",
    "OmegaDot": "omega_dot_rad_per_s", "Toe": "toe_sow_s", "GPSWeek": "week",
}


@pytest.fixture(scope="module")
def georinex_gps():
    georinex = pytest.importorskip("georinex")
    nav = georinex.load(refdata_file(MOJN), use={"G"})
    frame = nav.to_dataframe().dropna(subset=["sqrtA"]).reset_index()
    table = frame.rename(columns=GEORINEX_NAMES)
    table["toe"] = GPS_EPOCH + (table["week"].to_numpy(np.int64) * 604_800
                                + table["toe_sow_s"].to_numpy()).astype("timedelta64[s]")
    return table


def _georinex_positions(table: pd.DataFrame, targets: np.ndarray, big_e: np.ndarray) -> np.ndarray:
    from georinex.keplerian import keplerian2ecef

    e = table["eccentricity"].to_numpy()
    x = big_e.copy()  # solve x + e sin x = E so that georinex's one step gives E
    for _ in range(50):
        x = x - (x + e * np.sin(x) - big_e) / (1 + e * np.cos(x))
    a = table["sqrt_a_sqrt_m"].to_numpy() ** 2
    n_geo = np.sqrt(GEORINEX_GM / a**3) + table["delta_n_rad_per_s"].to_numpy()
    tk = (targets - table["toe"].to_numpy()).astype("timedelta64[ns]").astype(np.int64) / 1e9
    inverse = {v: k for k, v in GEORINEX_NAMES.items()}
    data = {inverse[c]: ("time", table[c].to_numpy(dtype=float)) for c in GEORINEX_NAMES.values()}
    data["M0"] = ("time", x - n_geo * tk)
    ds = xr.Dataset(data, coords={"time": targets})
    ds.attrs["svtype"] = ["G"]
    return np.stack([np.asarray(c) for c in keplerian2ecef(ds)], axis=-1)


@pytest.mark.refdata
def test_gps_positions_match_georinex_keplerian2ecef(georinex_gps):
    table = georinex_gps
    rng = np.random.default_rng(2020177)
    # whole milliseconds: georinex truncates times to microseconds internally
    offsets_ms = np.round(rng.uniform(-7.2e6, 7.2e6, len(table))).astype(np.int64)
    targets = table["toe"].to_numpy() + offsets_ms.astype("timedelta64[ms]")
    ours = kepler_states({c: table[c].to_numpy() for c in table.columns}, targets, "G")
    theirs = _georinex_positions(table, targets, ours["eccentric_anomaly_rad"])
    error = np.linalg.norm(ours["position_ecef_m"] - theirs, axis=1)
    assert len(table) > 200
    assert np.max(error) < ONE_MILLIMETRE


@pytest.mark.refdata
def test_kepler_equation_is_solved_to_1e_15_rad(georinex_gps):
    m = np.linspace(-np.pi, 3 * np.pi, 1001)
    for e in (0.0, 0.01, 0.075, 0.2):  # 0.075: QZSS J01, 0.2: E14/E18 class
        big_e = solve_kepler(m, np.full_like(m, e))
        assert np.max(np.abs(big_e - e * np.sin(big_e) - m)) < 4e-15


@pytest.mark.refdata
def test_analytic_velocity_matches_central_difference(georinex_gps):
    table = georinex_gps
    cols = {c: table[c].to_numpy() for c in table.columns}
    t = table["toe"].to_numpy() + np.timedelta64(3600, "s")
    half = np.timedelta64(500, "ms")
    plus = kepler_states(cols, t + half, "G")["position_ecef_m"]
    minus = kepler_states(cols, t - half, "G")["position_ecef_m"]
    vel = kepler_states(cols, t, "G")["velocity_ecef_m_per_s"]
    # central difference over 1 s: truncation ~ |a| dt^2 / 24 ~ 0.03 mm/s (derived)
    assert np.max(np.abs((plus - minus) / 1.0 - vel)) < 1e-3


def _beidou_table():
    from gnssrel.io.rinex_nav import read_navigation

    return read_navigation(refdata_file(MOJN), systems="C").ephemerides["C"]


@pytest.mark.refdata
def test_beidou_geo_velocity_matches_difference_and_orbit_is_geostationary():
    table = _beidou_table()
    geo = table[table["is_geo"]]
    assert {int(s[1:]) for s in geo["sv"]} <= BEIDOU_GEO_PRNS and len(geo) > 10
    cols = {c: geo[c].to_numpy() for c in geo.columns}
    t = geo["toe"].to_numpy() + np.timedelta64(1800, "s")
    half = np.timedelta64(500, "ms")
    plus = kepler_states(cols, t + half, "C")["position_ecef_m"]
    minus = kepler_states(cols, t - half, "C")["position_ecef_m"]
    state = kepler_states(cols, t, "C")
    assert np.max(np.abs(plus - minus - state["velocity_ecef_m_per_s"])) < 1e-3
    # A GEO is nearly fixed over the Earth.  Its elements are given in a frame tilted by
    # 5 deg (i ~ 6.5 deg there); the true inclination is ~1.5 deg, so the ECEF speed is
    # below v i ~ 3075 m/s x 0.044 rad = 135 m/s and the latitude below ~2.5 deg (derived).
    # With the tilt left out or of the wrong sign these would be ~350 / ~600 m/s and 6.5 / 11.5 deg.
    speed = np.linalg.norm(state["velocity_ecef_m_per_s"], axis=1)
    assert np.max(speed) < 150.0
    r = state["position_ecef_m"]
    latitude_deg = np.degrees(np.arcsin(r[:, 2] / np.linalg.norm(r, axis=1)))
    assert np.max(np.abs(latitude_deg)) < 2.5
    assert np.allclose(np.linalg.norm(state["position_ecef_m"], axis=1), 42.164e6, rtol=2e-3)


@pytest.mark.refdata
def test_eci_frame_is_the_ecef_frame_of_the_week_start(georinex_gps):
    table = georinex_gps
    cols = {c: table[c].to_numpy() for c in table.columns}
    t = table["toe"].to_numpy() + np.timedelta64(900, "s")
    ecef = kepler_states(cols, t, "G")
    eci = kepler_states(cols, t, "G", frame="eci")
    week_start = table["toe"].to_numpy() - (table["toe_sow_s"].to_numpy() * 1e9).astype("timedelta64[ns]")
    r_ecef, v_ecef = eci_to_ecef(eci["position_ecef_m"], eci["velocity_ecef_m_per_s"], t, week_start,
                                 7.2921151467e-5)
    assert np.max(np.abs(r_ecef - ecef["position_ecef_m"])) < 1e-6
    assert np.max(np.abs(v_ecef - ecef["velocity_ecef_m_per_s"])) < 1e-9
    # inertial speed of a GPS satellite ~3.87 km/s (REFERENCE-CHECKS 5, v ~ 3874 m/s, derived)
    speed = np.linalg.norm(eci["velocity_ecef_m_per_s"], axis=1)
    assert np.all((speed > 3.6e3) & (speed < 4.1e3))
    # vis-viva with the broadcast a holds to the harmonic-correction level (~1e-4 relative)
    a = table["sqrt_a_sqrt_m"].to_numpy() ** 2
    r = np.linalg.norm(eci["position_ecef_m"], axis=1)
    assert np.allclose(speed**2, 3.986005e14 * (2 / r - 1 / a), rtol=3e-4)


def test_output_shapes_follow_input_shapes():
    elements = {"toe": np.datetime64("2020-06-25T02:00", "ns"), "sqrt_a_sqrt_m": 5153.7,
                "delta_n_rad_per_s": 4.5e-9, "mean_anomaly_rad": np.linspace(0, 1, 4)[None, :],
                "eccentricity": 0.01, "perigee_argument_rad": 0.8, "cuc_rad": 1e-6, "cus_rad": 2e-6,
                "crc_m": 300.0, "crs_m": -40.0, "cic_rad": 1e-8, "cis_rad": -1e-8,
                "inclination_rad": 0.96, "idot_rad_per_s": 1e-10, "omega0_rad": 2.5,
                "omega_dot_rad_per_s": -8e-9}
    t = np.datetime64("2020-06-25T02:00", "ns") + np.arange(5)[:, None].astype("timedelta64[m]")
    out = kepler_states(elements, t, "G")
    assert out["position_ecef_m"].shape == (5, 4, 3)
    assert out["tk_s"].shape == (5, 4)
    assert np.allclose(out["tk_s"][:, 0], 60.0 * np.arange(5))


def test_ecef_eci_round_trip_and_speed_relation():
    rng = np.random.default_rng(1)
    r = rng.normal(size=(50, 3)) * 2e7
    v = rng.normal(size=(50, 3)) * 3e3
    t = np.datetime64("2020-06-25T00:00", "ns") + (rng.uniform(0, 86400, 50) * 1e9).astype("timedelta64[ns]")
    t_ref = np.datetime64("2020-06-25T00:00", "ns")
    r_i, v_i = ecef_to_eci(r, v, t, t_ref)
    r_back, v_back = eci_to_ecef(r_i, v_i, t, t_ref)
    assert np.max(np.abs(r_back - r)) < 1e-6 and np.max(np.abs(v_back - v)) < 1e-9
    # |r| is kept by the turn about z; at t_ref the inertial velocity is v + omega x r exactly
    assert np.allclose(np.linalg.norm(r_i, axis=1), np.linalg.norm(r, axis=1), rtol=0, atol=1e-6)
    _, v0 = ecef_to_eci(r, v, t_ref, t_ref)
    w = 7.2921151467e-5
    assert np.allclose(v0, v + np.stack((-w * r[:, 1], w * r[:, 0], 0 * r[:, 0]), -1), atol=1e-9)
