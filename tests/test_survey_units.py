"""Pieces of gnssrel.survey on minimal inputs built here: arcs and cycle slips, wind-up, solid tide,
the epoch-clock elimination, the term switches of the observation model, the ETRF check."""

from __future__ import annotations

import numpy as np
import pytest

from gnssrel import geodesy
from gnssrel.constants import C_M_S, GM_EARTH_IERS_M3_S2, GM_MOON_M3_S2
from gnssrel.survey import arcs, etrs, model, solve, tides, windup

T0 = np.datetime64("2020-06-25T00:00:00", "ns")


def _times(n, step_s=30):
    return T0 + np.arange(n) * np.timedelta64(step_s, "s")


# -- arcs --------------------------------------------------------------------------------------

def test_slips_gaps_and_loss_of_lock_start_arcs():
    n = 20
    valid = np.ones((n, 4), bool)
    gf = np.zeros((n, 4))
    mw = np.zeros((n, 4))
    lost = np.zeros((n, 4), bool)
    gf[10:, 0] += 0.19029 - 0.24421       # a (1, 1) cycle slip on GPS L1/L2: -5.4 cm in L1 - L2 (derived)
    mw[7:, 1] += 5.0                       # a wide-lane slip of 5 cycles
    lost[12, 2] = True                     # LLI bit 0 (RINEX 3.05 5.3.1)
    valid[5:9, 3] = False                  # 4 missing epochs = 150 s > 3 x 30 s
    gf[:, 3] += np.arange(n) * 0.004       # a slow ionosphere drift: 4 mm per epoch is no slip
    out = arcs.arc_starts(_times(n), valid, lost, gf, mw, 30.0)
    starts = out["starts"]
    assert starts[0].all()                 # each column's first observation
    assert np.flatnonzero(starts[:, 0]).tolist() == [0, 10]
    assert np.flatnonzero(starts[:, 1]).tolist() == [0, 7]
    assert np.flatnonzero(starts[:, 2]).tolist() == [0, 12]
    assert np.flatnonzero(starts[:, 3]).tolist() == [0, 9]
    assert out["reasons"] == {"loss of lock indicator": 1, "gap": 1, "geometry-free jump": 1,
                              "Melbourne-Wubbena jump": 1}
    ids = arcs.arc_ids(starts, valid)
    assert ids[9, 0] == ids[0, 0] and ids[10, 0] != ids[9, 0]
    assert ids[6, 3] == -1
    assert len(np.unique(ids[ids >= 0])) == 8
    first, last = arcs.arc_spans_s(ids, np.arange(n) * 30.0)
    assert last[ids[0, 0]] - first[ids[0, 0]] == 9 * 30.0


def test_combinations_of_a_pair():
    # a clean geometry of 2e7 m, 1 m of L1 ionosphere: IF code and phase give the range, GF the ionosphere
    f1, f2 = 1575.42e6, 1227.60e6
    rho, i1 = 2.0e7, 1.0
    i2 = i1 * f1**2 / f2**2
    import xarray as xr
    data = {"C1W": rho + i1, "C2W": rho + i2, "L1C": (rho - i1) * f1 / C_M_S, "L2W": (rho - i2) * f2 / C_M_S}
    ds = xr.Dataset({k: (("time", "sv"), np.full((2, 1), v)) for k, v in data.items()},
                    coords={"time": _times(2), "sv": ["G01"]})
    pair = arcs.choose_pair(ds, "G", np.array([0]))
    assert pair == ("C1W", "L1C", "C2W", "L2W")
    a = arcs.system_arrays(ds, "G", np.array([0]), pair)
    assert a["code_if_m"][0, 0] == pytest.approx(rho, abs=1e-6)
    assert a["phase_if_m"][0, 0] == pytest.approx(rho, abs=1e-6)
    assert a["gf_m"][0, 0] == pytest.approx(i2 - i1, abs=1e-6)
    assert a["mw_cycles"][0, 0] == pytest.approx(0.0, abs=1e-6)   # no ambiguity, no noise


# -- wind-up -----------------------------------------------------------------------------------

def _rot_z(a):
    return np.array([[np.cos(a), -np.sin(a), 0], [np.sin(a), np.cos(a), 0], [0, 0, 1]])


def test_windup_follows_a_yaw_of_the_satellite_and_ignores_a_common_rotation():
    k = np.array([0.0, 0.0, -1.0])         # satellite at the zenith, signal going down
    xr, yr = np.array([1.0, 0, 0]), np.array([0, 1.0, 0])      # receiver x, y (z up)
    xs, ys = np.array([1.0, 0, 0]), np.array([0, -1.0, 0])     # satellite z down: y = z x x
    w0 = windup.windup_from_axes(k, xs, ys, xr, yr)
    for angle in (0.3, 1.0, 2.0):
        r = _rot_z(angle)
        w_sat = windup.windup_from_axes(k, r @ xs, r @ ys, xr, yr)
        assert abs(w_sat - w0) == pytest.approx(angle / (2 * np.pi), abs=1e-12)   # Wu et al. 1993
        both = windup.windup_from_axes(k, r @ xs, r @ ys, r @ xr, r @ yr)
        assert both == pytest.approx(w0, abs=1e-12)                               # relative orientation only


def test_windup_turns_are_made_continuous():
    t = np.linspace(0, 1.6, 50)
    wrapped = np.mod(t + 0.5, 1.0) - 0.5
    grid = np.column_stack([wrapped, np.full(50, np.nan)])
    out = windup.continuous(grid)
    assert np.allclose(out[:, 0], t)
    assert np.isnan(out[:, 1]).all()


# -- solid tide --------------------------------------------------------------------------------

def test_tide_of_a_body_at_the_zenith_and_at_the_horizon():
    station = np.array([6_378_137.0, 0.0, 0.0])
    dist = 3.844e8
    scale = GM_MOON_M3_S2 / GM_EARTH_IERS_M3_S2 * tides.R_EARTH_M**4 / dist**3   # IERS 2010 eq. 7.5
    up = tides.tide_from_bodies(station, [(np.array([[dist, 0, 0]]), GM_MOON_M3_S2)])[0]
    assert up[0] == pytest.approx(tides.H2 * scale, rel=1e-12)          # ~ 0.22 m radial
    assert up[0] == pytest.approx(0.218, abs=0.003)
    assert np.allclose(up[1:], 0.0, atol=1e-12)
    side = tides.tide_from_bodies(station, [(np.array([[0, dist, 0]]), GM_MOON_M3_S2)])[0]
    assert side[0] == pytest.approx(-0.5 * tides.H2 * scale, rel=1e-12)
    c = np.sqrt(0.5)
    diag = tides.tide_from_bodies(station, [(np.array([[c * dist, c * dist, 0]]), GM_MOON_M3_S2)])[0]
    assert diag[1] == pytest.approx(3 * tides.L2 * c * c * dist / dist * scale, rel=1e-9)   # 3 l2 cos sin


def test_tide_over_a_day_at_a_danish_station():
    station = np.array([3582105.291, 532589.7313, 5232754.8054])
    t = T0 + np.arange(0, 86_400, 600) * np.timedelta64(1, "s")
    d = tides.solid_tide_m(station, t)
    lat, lon, _ = geodesy.ecef_to_geodetic(station)
    enu = geodesy.ecef_to_enu(d, lat, lon)
    span_up = np.ptp(enu[:, 2])
    assert 0.1 < span_up < 0.45           # "up to ~30 cm vertically over a day" (brief; common knowledge)
    assert np.abs(enu[:, :2]).max() < 0.1
    moon = np.linalg.norm(tides.moon_position_ecef_m(t), axis=1)
    assert (moon > 3.56e8).all() and (moon < 4.07e8).all()   # perigee/apogee distances (common knowledge)


# -- estimator ---------------------------------------------------------------------------------

def test_clock_elimination_equals_explicit_clocks():
    rng = np.random.default_rng(1)
    n_ep, per = 6, 5
    n = n_ep * per
    a = rng.normal(size=(n, 4))
    epoch = np.repeat(np.arange(n_ep), per)
    clocks = rng.normal(size=n_ep) * 10
    x_true = np.array([1.0, -2.0, 0.5, 3.0])
    w = rng.uniform(0.5, 2.0, n)
    y = a @ x_true + clocks[epoch] + rng.normal(size=n) * 0.01
    full = np.hstack([a, (epoch[:, None] == np.arange(n_ep)[None, :]).astype(float)])
    sw = np.sqrt(w)
    explicit = np.linalg.lstsq(full * sw[:, None], y * sw, rcond=None)[0]
    import scipy.sparse as sp
    normals, rhs = solve.normal_blocks(sp.csr_matrix(a), w, epoch, y, np.array([0, 0, 0, 1, 1, 1]), 2)
    x, _ = solve.solve(normals.sum(0), rhs.sum(0))
    assert np.allclose(x[:, 0], explicit[:4], atol=1e-10)
    _, clk = solve.residuals(sp.csr_matrix(a), w, epoch, y, x)
    assert np.allclose(clk[:, 0], explicit[4:], atol=1e-10)
    x_fixed, _ = solve.solve(normals.sum(0), rhs.sum(0), {3: 3.0})
    assert x_fixed[3, 0] == 3.0


def _fake_obs(n=3):
    ones = np.ones(n)
    obs = {"sv": np.array(["G01"] * n), "code_if_m": 2.0e7 * ones, "phase_if_m": 2.0e7 * ones,
           "clock_m": 1.0 * ones, "periodic_spec_m": 5.0 * ones, "periodic_state_m": 5.02 * ones,
           "j2_m": 0.02 * ones}
    geo = {"range_m": 2.0e7 * ones, "sagnac_m": 30.0 * ones, "shapiro_m": 0.015 * ones,
           "troposphere_m": 2.4 * ones, "windup_m": 0.05 * ones}
    return obs, geo


def test_term_switches_change_the_observed_minus_computed_by_the_term():
    obs, geo = _fake_obs()
    code, phase = model.observed_minus_computed(obs, geo)
    # P = rho - c(dt + dt_per + dt_J2) + S + T (gnssrel.audit.corrections sign convention)
    assert code[0] == pytest.approx(1.0 + 5.0 + 0.02 - 0.015 - 2.4)
    assert phase[0] == pytest.approx(code[0] - 0.05)
    cases = {"periodic": ({"periodic": "omitted"}, -5.0), "state": ({"periodic": "state"}, 0.02),
             "j2": ({"j2": False}, -0.02), "shapiro": ({"shapiro": False}, 0.015),
             "sagnac": ({"sagnac": False}, 30.0), "convention": ({"clock_convention": "includes"}, -5.0)}
    for switch, change in cases.values():
        c2, p2 = model.observed_minus_computed(obs, geo, switch)
        assert c2[0] - code[0] == pytest.approx(change)
        assert p2[0] - phase[0] == pytest.approx(change)


def test_arp_offset_is_up_at_the_station():
    ref = np.array([3582105.291, 532589.7313, 5232754.8054])
    off = model.arp_offset_ecef_m(ref, [0.216, 0.0, 0.0])
    lat, lon, _ = geodesy.ecef_to_geodetic(ref)
    assert np.allclose(geodesy.ecef_to_enu(off, lat, lon), [0, 0, 0.216], atol=1e-12)


def test_etrf2000_shift_is_the_plate_motion_in_denmark():
    # ITRF -> ETRF2000 moves a Danish point ~0.7 m south-west by 2020 (Eurasian plate ~2.4 cm/yr
    # toward north-east since 1989; common knowledge)
    ref = np.array([3582105.291, 532589.7313, 5232754.8054])
    shifted = etrs.itrf_to_etrf2000(ref, np.datetime64("2020-06-25T12:00"))
    lat, lon, _ = geodesy.ecef_to_geodetic(ref)
    e, n, u = geodesy.ecef_to_enu(shifted - ref, lat, lon)
    assert -0.65 < e < -0.4 and -0.65 < n < -0.4 and abs(u) < 0.05
    assert etrs.decimal_year(np.datetime64("2020-07-02T00:00")) == pytest.approx(2020.5, abs=0.002)


def test_cli_refuses_bad_options_in_one_line(tmp_path, capsys):
    from gnssrel.cli import main
    obs = tmp_path / "x.rnx"
    obs.write_text("")
    for extra in (["--elevation-mask", "95"], ["--min-arc", "-1"], ["--parts", "1"]):
        assert main(["survey", str(obs), str(obs), "--precise", str(obs), *extra]) == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1 and "survey" in err[0] and extra[0] in err[0]
