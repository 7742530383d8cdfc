"""CNAV-type orbits (GPS/QZSS CNAV, CNV2; BeiDou-3 CNV1, CNV2) through kepler_states (issue 14).

Against IS-GPS-200 30.3.3.1.3, Table 30-II (the CNAV user algorithm), written again here in plain
scalar Python from the message quantities (Delta A on A_ref = 26 559 710 m, Delta Omega dot on
Omega_dot_ref = -2.6e-9 semicircles/s, pi = 3.1415926535898: IS-GPS-200 values, from memory), and
against the same satellites' legacy records on BRD400DLR 2023-071.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import ONE_NANOSECOND, refdata_file

from gnssrel.constants import GPS
from gnssrel.orbits.keplerian import kepler_states

A_REF_M = 26_559_710.0
OMEGA_DOT_REF_SC = -2.6e-9
GPS_PI = 3.1415926535898
# A CNAV message (values of the order of G01 2023-071, semicircles where IS-GPS-200 broadcasts them).
MESSAGE = {"delta_a_m": -1.0e3, "a_dot_m_per_s": 1.0e-2, "delta_n0_sc_per_s": 1.16e-9,
           "delta_n0_dot_sc_per_s2": -3.4e-14, "m0_sc": 0.99, "e": 0.0125, "omega_sc": 0.30,
           "omega0_sc": -0.84, "delta_omega_dot_sc_per_s": -0.17e-9, "i0_sc": 0.315, "idot_sc_per_s": -6.0e-12,
           "cis": -1.9e-7, "cic": 3.5e-8, "crs": -70.7, "crc": 157.8, "cus": 1.2e-5, "cuc": -3.7e-6}
TOE_SOW_S = 5400.0


def _record(msg):
    """The RINEX 4 record columns of MESSAGE (sqrt(A_ref + Delta A); the full Omega dot; radians)."""
    return {"toe": np.datetime64("2023-03-12T01:30:00", "ns"), "toe_sow_s": TOE_SOW_S,
            "sqrt_a_sqrt_m": math.sqrt(A_REF_M + msg["delta_a_m"]), "a_dot_m_per_s": msg["a_dot_m_per_s"],
            "delta_n_rad_per_s": msg["delta_n0_sc_per_s"] * GPS_PI,
            "delta_n_dot_rad_per_s2": msg["delta_n0_dot_sc_per_s2"] * GPS_PI,
            "mean_anomaly_rad": msg["m0_sc"] * GPS_PI, "eccentricity": msg["e"],
            "perigee_argument_rad": msg["omega_sc"] * GPS_PI, "omega0_rad": msg["omega0_sc"] * GPS_PI,
            "omega_dot_rad_per_s": (OMEGA_DOT_REF_SC + msg["delta_omega_dot_sc_per_s"]) * GPS_PI,
            "inclination_rad": msg["i0_sc"] * GPS_PI, "idot_rad_per_s": msg["idot_sc_per_s"] * GPS_PI,
            "cis_rad": msg["cis"], "cic_rad": msg["cic"], "crs_m": msg["crs"], "crc_m": msg["crc"],
            "cus_rad": msg["cus"], "cuc_rad": msg["cuc"]}


def _table_30_ii(msg, tk):
    """IS-GPS-200 Table 30-II, one epoch, scalar (independent of gnssrel's vectorized code)."""
    mu, we = 3.986005e14, 7.2921151467e-5
    a0 = A_REF_M + msg["delta_a_m"]
    ak = a0 + msg["a_dot_m_per_s"] * tk
    n_a = math.sqrt(mu / a0**3) + (msg["delta_n0_sc_per_s"] + 0.5 * msg["delta_n0_dot_sc_per_s2"] * tk) * GPS_PI
    mk = msg["m0_sc"] * GPS_PI + n_a * tk
    e = msg["e"]
    ek = mk
    for _ in range(50):
        ek = mk + e * math.sin(ek)
    nu = math.atan2(math.sqrt(1 - e * e) * math.sin(ek), math.cos(ek) - e)
    phi = nu + msg["omega_sc"] * GPS_PI
    s2, c2 = math.sin(2 * phi), math.cos(2 * phi)
    u = phi + msg["cus"] * s2 + msg["cuc"] * c2
    r = ak * (1 - e * math.cos(ek)) + msg["crs"] * s2 + msg["crc"] * c2
    i = msg["i0_sc"] * GPS_PI + msg["idot_sc_per_s"] * GPS_PI * tk + msg["cis"] * s2 + msg["cic"] * c2
    omega_dot = (OMEGA_DOT_REF_SC + msg["delta_omega_dot_sc_per_s"]) * GPS_PI
    node = msg["omega0_sc"] * GPS_PI + (omega_dot - we) * tk - we * TOE_SOW_S
    xp, yp = r * math.cos(u), r * math.sin(u)
    return np.array([xp * math.cos(node) - yp * math.cos(i) * math.sin(node),
                     xp * math.sin(node) + yp * math.cos(i) * math.cos(node), yp * math.sin(i)]), ak, ek


@pytest.mark.parametrize("tk", [-5400.0, -600.0, 0.0, 1800.0, 7200.0])
def test_cnav_states_follow_table_30_ii(tk):
    rec = _record(MESSAGE)
    t = rec["toe"] + np.timedelta64(int(tk * 1e9), "ns")
    got = kepler_states(rec, np.array([t]), "G")
    want, ak, ek = _table_30_ii(MESSAGE, tk)
    assert np.max(np.abs(got["position_ecef_m"][0] - want)) < 1e-6          # metres
    assert got["semi_major_axis_m"][0] == pytest.approx(ak, rel=1e-15)
    # The periodic term with the CNAV A at t (IS-GPS-200 30.3.3.3.1.1 as read here, from memory).
    f = GPS.f_s_sqrt_m
    periodic = f * MESSAGE["e"] * got["sqrt_a_sqrt_m"][0] * math.sin(got["eccentric_anomaly_rad"][0])
    assert periodic == pytest.approx(f * MESSAGE["e"] * math.sqrt(ak) * math.sin(ek), abs=1e-6 * ONE_NANOSECOND)


def test_cnav_velocity_is_the_derivative_of_the_position():
    rec = _record(MESSAGE)
    t0 = rec["toe"] + np.timedelta64(3000, "s")
    h = 0.5
    times = t0 + np.array([-h, 0.0, h]) * np.timedelta64(1_000_000_000, "ns")
    got = kepler_states(rec, times.astype("datetime64[ns]"), "G")
    numeric = (got["position_ecef_m"][2] - got["position_ecef_m"][0]) / (2 * h)
    assert np.max(np.abs(got["velocity_ecef_m_per_s"][1] - numeric)) < 1e-4    # m/s


def test_without_rates_the_legacy_algorithm_is_unchanged_bit_for_bit():
    rec = _record(MESSAGE)
    t = rec["toe"] + np.arange(-3, 4) * np.timedelta64(1800, "s")
    legacy = {k: v for k, v in rec.items() if k not in ("a_dot_m_per_s", "delta_n_dot_rad_per_s2")}
    zero = {**rec, "a_dot_m_per_s": np.zeros(7), "delta_n_dot_rad_per_s2": np.full(7, np.nan)}
    a, b = kepler_states(legacy, t, "G"), kepler_states(zero, t, "G")
    assert np.array_equal(a["position_ecef_m"], b["position_ecef_m"])
    assert np.array_equal(a["velocity_ecef_m_per_s"], b["velocity_ecef_m_per_s"])
    assert "sqrt_a_sqrt_m" not in a
    # ...and the rates matter: A_dot 1 cm/s over 2 h is 72 m of semi-major axis.
    c = kepler_states(rec, t, "G")
    assert np.max(np.linalg.norm(c["position_ecef_m"] - a["position_ecef_m"], axis=-1)) > 50.0


def _pair_figures(nav, letter, legacy, modern):
    from gnssrel.orbits.broadcast import broadcast_states, time_grid
    from gnssrel.relativity.clock_terms import periodic_icd_s

    t = time_grid("2023-03-12T00:00", "2023-03-12T23:55", 900)
    table = nav.ephemerides[letter]
    out = []
    for kinds in (legacy, modern):
        sub = table[table.nav_type.isin(kinds)].reset_index(drop=True)
        # CNAV health 1 = L5 flagged (pre-operational in 2023): the orbit is still the broadcast one
        out.append(broadcast_states({letter: sub}, t, letter, include_unhealthy=True))
    svs = sorted(set(out[0].sv.values) & set(out[1].sv.values))
    a, b = (ds.sel(sv=svs) for ds in out)
    ok = (a.status.values == 0) & (b.status.values == 0)
    d = np.linalg.norm(a.position_ecef_m.values - b.position_ecef_m.values, axis=-1)[ok]
    periodic = [periodic_icd_s(ds.eccentricity.values, ds.sqrt_a_sqrt_m.values, ds.eccentric_anomaly_rad.values,
                               letter)[ok] for ds in (a, b)]
    return len(svs), math.sqrt(np.mean(d**2)), d.max(), np.abs(periodic[0] - periodic[1]).max()


@pytest.mark.refdata
def test_legacy_and_modern_messages_describe_one_orbit():
    # Measured (5-min grid, 2023-071; RMS / max 3-D, max periodic difference): G LNAV-CNAV 0.43 / 3.6 m,
    # 0.016 ns; J LNAV-CNAV and LNAV-CNV2 0.05 / 0.14 m, 0.26 ns; C D1-CNV1 and D1-CNV2 0.07 / 0.32 m,
    # 0.09 ns.  Without A_dot and Delta n0 dot GPS was 12.9 / 76 m.  Bounds: the broadcast accuracy
    # (metre level, URA), periodic terms far below a nanosecond.
    from gnssrel.io.rinex_nav import read_navigation

    nav = read_navigation(refdata_file("2023-071/BRD400DLR_S_20230710000_01D_MN.rnx.gz"))
    n, rms, worst, periodic = _pair_figures(nav, "G", ["LNAV"], ["CNAV"])
    assert n >= 20 and rms < 1.0 and worst < 5.0 and periodic < 0.1 * ONE_NANOSECOND
    for modern in (["CNAV"], ["CNV2"]):
        n, rms, worst, periodic = _pair_figures(nav, "J", ["LNAV"], modern)
        assert n == 4 and rms < 0.2 and worst < 0.5 and periodic < 0.5 * ONE_NANOSECOND
    for modern in (["CNV1"], ["CNV2"]):
        n, rms, worst, periodic = _pair_figures(nav, "C", ["D1"], modern)
        assert n >= 25 and rms < 0.2 and worst < 1.0 and periodic < 0.2 * ONE_NANOSECOND


def test_legacy_records_stay_preferred_and_cnav_fills_the_gaps():
    # Selection (gnssrel/orbits/selection.py, issue 14): LNAV before CNAV when both are in time, so
    # results on files with both stay those of the legacy message; CNAV serves where no LNAV does.
    import pandas as pd

    from gnssrel.orbits.selection import select_ephemerides

    toe = np.array(["2023-03-12T02:00", "2023-03-12T01:45", "2023-03-12T08:00"], dtype="datetime64[ns]")
    table = pd.DataFrame({"sv": ["G01"] * 3, "toe": toe, "toc": toe, "nav_type": ["LNAV", "CNAV", "CNAV"],
                          "health": [0.0, 0.0, 0.0], "fit_interval_h": [4.0, np.nan, np.nan]})
    times = np.array(["2023-03-12T01:45", "2023-03-12T08:30"], dtype="datetime64[ns]")
    rows, status = select_ephemerides(table, ["G01"], times, "G")
    assert rows[:, 0].tolist() == [0, 2] and status[:, 0].tolist() == [0, 0]
