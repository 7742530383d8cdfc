"""Fault detection and exclusion, gates, DOP and weights of the fixes, on synthetic observations."""

import numpy as np
import pytest
from test_positioning import RX, _satellites_seen_from, _synthetic

from gnssrel.audit import integrity
from gnssrel.audit.corrections import atmosphere_m, line_of_sight, modelled_pseudorange_m
from gnssrel.audit.positioning import (
    DOP_GATE,
    EXCLUDED,
    NO_FIX,
    cn0_variance_m2,
    observation_cn0_variance_m2,
    position_errors_3d_m,
    single_point_positions,
)

ONE_CENTIMETRE = 1e-2


def _fault(obs, epoch, k, size_m):
    idx = np.flatnonzero(obs["epoch"] == epoch)[k]
    obs["pseudorange_m"][idx] += size_m
    return idx


def test_chi_square_threshold_against_the_table():
    # Published chi-square quantiles (any statistics table): upper 0.1 % point, 6 and 1 degrees of freedom.
    assert integrity.chi2_threshold([6, 1, 0], 1e-3)[:2] == pytest.approx([22.458, 10.828], abs=1e-3)
    assert np.isnan(integrity.chi2_threshold([0], 1e-3)[0])


def test_a_fault_below_the_gross_limit_is_excluded_by_the_residual_test():
    obs, times, _ = _synthetic(n_epoch=12, n_sat=10, noise_m=0.3, seed=4)
    idx = _fault(obs, 5, 3, 12.0)                  # 12 m: under the 30 m gross-outlier limit
    diag = {}
    pos = single_point_positions(obs, times.size, times, elevation_mask_deg=5.0, diagnostics=diag)
    assert diag["reasons"][idx] == EXCLUDED
    assert (diag["reasons"] == EXCLUDED).sum() == 1          # nothing else at P_fa = 1e-3 here
    assert diag["excluded_by_satellite"] == {obs["sv"][idx]: 1}
    assert pos["n_excluded"].tolist() == [0] * 5 + [1] + [0] * 6
    assert pos["n_used"].iloc[5] == 9
    row = pos.iloc[5]
    assert row["test_statistic"] <= row["test_threshold"]    # after the exclusion the epoch passes
    err = position_errors_3d_m(pos, RX)
    blind = single_point_positions(obs, times.size, times, elevation_mask_deg=5.0, false_alarm=None)
    assert err[5] < 1.0 < position_errors_3d_m(blind, RX)[5]
    assert blind["n_excluded"].sum() == 0 and np.isnan(blind["test_threshold"]).all()


def test_test_statistic_is_the_weighted_sum_of_squared_residuals():
    obs, times, _ = _synthetic(n_epoch=3, n_sat=8, noise_m=0.5, seed=2)
    pos = single_point_positions(obs, times.size, times, elevation_mask_deg=5.0, variance_factor=1.0)
    # weights 1 / (1 + 1/sin^2 el) (sigma0 = 1 m): recompute at the solved positions and clocks
    for e in range(3):
        m = obs["epoch"] == e
        sub = {k: (v[m] if isinstance(v, np.ndarray) and v.shape[:1] == m.shape else v) for k, v in obs.items()}
        rx = pos.loc[e, ["x_m", "y_m", "z_m"]].to_numpy(float)
        los = line_of_sight(sub, rx)
        tropo, iono = atmosphere_m(sub, rx, los["elevation_rad"], los["azimuth_rad"])
        r = sub["pseudorange_m"] - modelled_pseudorange_m(sub, los, tropo, iono, pos.loc[e, "clock_m"])
        w = 1.0 / (1.0 + 1.0 / np.sin(los["elevation_rad"]) ** 2)
        assert pos.loc[e, "test_statistic"] == pytest.approx(np.sum(w * r**2), rel=1e-6)
        assert pos.loc[e, "test_threshold"] == pytest.approx(integrity.chi2_threshold([8 - 4], 1e-3)[0])


def test_dop_against_a_design_built_from_azimuth_and_elevation():
    # Derived: Q = (A^T A)^-1 with rows (-cos el sin az, -cos el cos az, -sin el, 1) in east/north/up.
    az = np.array([0.0, 72.0, 144.0, 216.0, 288.0, 40.0])
    el = np.array([15.0, 20.0, 35.0, 50.0, 25.0, 80.0])
    sats = _satellites_seen_from(RX, az, el)
    u = (sats - RX) / np.linalg.norm(sats - RX, axis=1)[:, None]
    design = np.column_stack([-u, np.ones(6)])
    out = integrity.dilution_of_precision(design, np.ones(6, bool), np.zeros(6, np.int64), 1, RX[None, :])
    a, e = np.radians(az), np.radians(el)
    enu = np.column_stack([-np.cos(e) * np.sin(a), -np.cos(e) * np.cos(a), -np.sin(e), np.ones(6)])
    q = np.linalg.inv(enu.T @ enu)
    assert out["gdop"][0] == pytest.approx(np.sqrt(np.trace(q)), rel=1e-6)
    assert out["pdop"][0] == pytest.approx(np.sqrt(q[0, 0] + q[1, 1] + q[2, 2]), rel=1e-6)
    assert out["hdop"][0] == pytest.approx(np.sqrt(q[0, 0] + q[1, 1]), rel=1e-6)
    assert out["vdop"][0] == pytest.approx(np.sqrt(q[2, 2]), rel=1e-6)


def _clustered(n_epoch=4):
    """Six satellites in a narrow cone: a fix, but a poor one (PDOP in the tens)."""
    obs, times, _ = _synthetic(n_epoch=n_epoch, n_sat=6)
    az = np.array([10.0, 20.0, 15.0, 25.0, 12.0, 18.0])
    el = np.array([60.0, 62.0, 70.0, 66.0, 74.0, 64.0])
    obs["satellite_ecef_m"] = np.tile(_satellites_seen_from(RX, az, el), (n_epoch, 1))
    los = line_of_sight(obs, RX)
    tropo, iono = atmosphere_m(obs, RX, los["elevation_rad"], los["azimuth_rad"])
    obs["pseudorange_m"] = modelled_pseudorange_m(obs, los, tropo, iono, 0.0)
    return obs, times


def test_dop_gate_and_satellite_gate():
    obs, times = _clustered()
    diag = {}
    pos = single_point_positions(obs, times.size, times, elevation_mask_deg=5.0, initial_ecef_m=RX + 10.0,
                                 diagnostics=diag)
    assert (pos["pdop"] > integrity.DEFAULT_MAX_PDOP).all()         # DOPs stay in the table ...
    assert pos["x_m"].isna().all()                                  # ... the positions do not
    assert set(diag["reasons"]) == {DOP_GATE}
    free = single_point_positions(obs, times.size, times, elevation_mask_deg=5.0, initial_ecef_m=RX + 10.0,
                                  max_pdop=None)
    assert np.max(position_errors_3d_m(free, RX)) < ONE_CENTIMETRE  # exact data: the fix itself is right
    few, t_few, _ = _synthetic(n_epoch=2, n_sat=5)
    diag = {}
    gated = single_point_positions(few, t_few.size, t_few, elevation_mask_deg=5.0, min_satellites=6,
                                   diagnostics=diag)
    assert gated["x_m"].isna().all() and set(diag["reasons"]) == {NO_FIX}
    assert single_point_positions(few, t_few.size, t_few, elevation_mask_deg=5.0)["x_m"].notna().all()


def test_cn0_variance_model():
    # sigma^2 = 0.09 m^2 + 1.6e4 m^2 Hz 10^(-C/N0 / 10) (positioning module text); 5 is no dB-Hz value
    assert cn0_variance_m2([30.0, 50.0, 5.0, np.nan])[:2] == pytest.approx([16.09, 0.09 + 0.16])
    assert np.isnan(cn0_variance_m2([5.0, np.nan])).all()
    # ionosphere-free L1/L2: g1 = 2.546, g2 = 1.546 (f1 = 154 f0, f2 = 120 f0; common practice)
    f1, f2 = 154.0, 120.0
    g = np.array([[f1**2 / (f1**2 - f2**2), f2**2 / (f1**2 - f2**2)], [1.0, 0.0]])
    obs = {"epoch": np.zeros(2, np.int64), "cn0_dbhz": np.array([40.0, 40.0]),
           "cn0_second_dbhz": np.array([30.0, np.nan]), "combination_gains": g}
    var = observation_cn0_variance_m2(obs)
    assert g[0] == pytest.approx([2.546, 1.546], abs=1e-3)
    assert var == pytest.approx([2.546**2 * 1.69 + 1.546**2 * 16.09, 1.69], rel=1e-3)


def test_cn0_weights_follow_the_noise():
    # each satellite's noise follows its C/N0 (the model's sigma); C/N0 weights beat equal weights
    obs, times, _ = _synthetic(n_epoch=60, n_sat=9, seed=7)
    rng = np.random.default_rng(3)
    cn0 = rng.uniform(22.0, 48.0, obs["epoch"].size)
    obs["cn0_dbhz"] = cn0
    obs["pseudorange_m"] = obs["pseudorange_m"] + rng.normal(0.0, np.sqrt(cn0_variance_m2(cn0)))
    err = {w: np.nanmedian(position_errors_3d_m(single_point_positions(obs, times.size, times, weighting=w,
                                                                    elevation_mask_deg=5.0), RX))
           for w in ("cn0", "equal", "elevation")}
    assert err["cn0"] < 0.7 * min(err["equal"], err["elevation"])


def test_system_variance_factors_are_estimated_from_the_log():
    obs, times, _ = _synthetic(n_epoch=60, n_sat=12, seed=9)
    rng = np.random.default_rng(5)
    galileo = np.tile(np.arange(12) >= 6, 60)                     # half the satellites: another system
    obs["system"] = np.where(galileo, "E", "G")
    obs["sv"] = np.where(galileo, np.char.replace(obs["sv"].astype(str), "G", "E"), obs["sv"])
    noise = np.where(galileo, 0.5, 2.5)                            # GPS five times noisier here
    obs["pseudorange_m"] = obs["pseudorange_m"] + rng.normal(0.0, noise)
    diag = {}
    pos = single_point_positions(obs, times.size, times, elevation_mask_deg=5.0, diagnostics=diag)
    factors = diag["system_variance_factors"]
    assert factors["G"] == 1.0
    assert 0.02 < factors["E"] < 0.07                              # (0.5 / 2.5)^2 = 0.04, give or take
    plain = single_point_positions(obs, times.size, times, elevation_mask_deg=5.0, system_variances=False)
    assert np.median(position_errors_3d_m(pos, RX)) < 0.8 * np.median(position_errors_3d_m(plain, RX))


def test_epoch_columns_for_the_figures():
    obs, times, _ = _synthetic(n_epoch=3, n_sat=7)
    pos = single_point_positions(obs, times.size, times, elevation_mask_deg=5.0)
    for name in ("n_used", "n_excluded", "gdop", "pdop", "hdop", "vdop", "test_statistic", "test_threshold"):
        assert name in pos and len(pos[name]) == 3
    assert (pos["gdop"] > pos["pdop"]).all() and (pos["pdop"] > pos["hdop"]).all()
    assert (pos["pdop"] ** 2).to_numpy() == pytest.approx((pos["hdop"] ** 2 + pos["vdop"] ** 2).to_numpy())


def test_epochs_above_the_pdop_gate_are_counted_apart(capsys):
    # The invented demo log with a 30 degree mask: a third of the 1-min epochs have PDOP above 10
    # (up to 300, with fixes 100 m off); they are counted as such, and the ledger still balances.
    import json

    from conftest import SAMPLE_LOGS

    from gnssrel.accounting import Ledger
    from gnssrel.cli import main

    assert main(["audit", str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"),
                 str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"), "--elevation-mask", "30",
                 "--step", "60", "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    ledger = Ledger.from_dict(summary["accounting"])
    assert not ledger.unbalanced()
    gated = ledger.dropped("epochs").get("no position (PDOP above the gate)", 0)
    assert gated == summary["position"]["integrity"]["n_epochs_above_pdop_gate"] > 20
    assert summary["position"]["n_epochs_solved"] == 180 - gated


def test_a_system_with_one_satellite_per_epoch_gets_no_variance_factor():
    # Its residual is taken up whole by its own clock offset (redundancy 0): a factor from it
    # would be ~0 and make every fix singular (the demo log cut to 15 min has one BeiDou satellite).
    obs, times, _ = _synthetic(n_epoch=40, n_sat=9, seed=11, noise_m=0.5)
    lone = np.tile(np.arange(9) == 8, 40)
    obs["system"] = np.where(lone, "C", "G")
    obs["sv"] = np.where(lone, "C20", obs["sv"])
    diag = {}
    pos = single_point_positions(obs, times.size, times, elevation_mask_deg=5.0, diagnostics=diag)
    assert diag["system_variance_factors"] == {}
    assert pos["x_m"].notna().all()


@pytest.mark.parametrize("option, value", [("--false-alarm", "2"), ("--false-alarm", "nan"), ("--max-pdop", "-1"),
                                           ("--min-satellites", "3")])
def test_bad_fix_options_are_refused_in_one_line(capsys, option, value):
    from conftest import SAMPLE_LOGS

    from gnssrel.cli import main

    code = main(["audit", str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"),
                 str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"), option, value])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1 and option in err[0]


def test_clock_estimate_table_is_written(tmp_path, capsys):
    import pandas as pd
    from conftest import SAMPLE_LOGS

    from gnssrel.cli import main

    out = tmp_path / "clock.csv"
    assert main(["audit", str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"),
                 str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"), "--end", "2025-06-11T10:10",
                 "--clock-estimate", str(out), "--false-alarm", "0", "--positions", str(tmp_path / "p.csv")]) == 0
    text = capsys.readouterr().out
    assert "no residual test" in text and "receiver clock of the fixes" in text
    table = pd.read_csv(out)
    assert list(table.columns) == ["time", "clock_bias_s", "clock_drift_s_per_s", "clock_jump_s"]
    assert len(table) == 21 and table["clock_bias_s"].abs().max() < 1e-6   # the demo receiver: < 1 us
    positions = pd.read_csv(tmp_path / "p.csv")
    assert {"n_used", "n_excluded", "gdop", "pdop", "hdop", "vdop", "test_statistic"} <= set(positions.columns)
    assert positions["test_threshold"].isna().all() and (positions["pdop"] < 10).all()
