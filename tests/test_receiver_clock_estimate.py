"""The receiver clock as low-cost receivers have it: millisecond offsets and resets.

The invented demo log (sample_logs/, KVRP, simulated with a clock near zero) is turned into the
log of a receiver whose clock is 4 ms ahead, and one that resets its clock by 1 ms: every time
tag moves by the offset and every pseudorange by c times it (what a receiver clock error does,
common practice).  The fixes must not move (derived: the transmit time comes from each
pseudorange, t_tx = t_rx - P/c - dt_sv, so it is the true one whatever the receiver clock;
had the satellites been taken at t_rx - rho/c, 4 ms x 3.9 km/s would move them by 15 m), and
the clock estimate must move by the offset exactly.
"""

import numpy as np
import pandas as pd
import pytest
from conftest import SAMPLE_LOGS

from gnssrel import read_navigation, read_observations
from gnssrel.audit.observables import prepare_observations
from gnssrel.audit.positioning import single_point_positions
from gnssrel.audit.receiver_clock import JUMP_TOLERANCE_S, clock_jumps, clock_summary, receiver_clock_series
from gnssrel.constants import C_M_S

OBS = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"
NAV = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"
ONE_MILLIMETRE = 1e-3
ONE_NANOSECOND = 1e-9


@pytest.fixture(scope="module")
def log():
    obs = read_observations(OBS, systems="GE", start=np.datetime64("2025-06-11T10:00"),
                            end=np.datetime64("2025-06-11T10:05"))
    return obs, read_navigation(NAV, systems="GE")


def _with_clock(obs, offset_s):
    """The log of a receiver whose clock is ``offset_s`` (per epoch) ahead of this one's."""
    offset_s = np.broadcast_to(np.asarray(offset_s, float), (obs.sizes["time"],))
    out = obs.copy()
    for name in [v for v in obs.data_vars if str(v)[0] == "C"]:
        out[name] = obs[name] + C_M_S * offset_s[:, None]
    tags = obs["time"].values + np.round(offset_s * 1e9).astype("int64").astype("timedelta64[ns]")
    return out.assign_coords(time=tags)


def _fixes(obs, nav):
    prepared = prepare_observations(obs, nav, "GE")
    times = obs["time"].values
    return single_point_positions(prepared, times.size, times, ionosphere_header=nav.header.get("ionosphere"))


def test_a_4_ms_receiver_clock_moves_neither_the_satellites_nor_the_fixes(log):
    obs, nav = log
    plain = _fixes(obs, nav)
    late = _fixes(_with_clock(obs, 4e-3), nav)
    xyz = ["x_m", "y_m", "z_m"]
    assert plain[xyz].notna().all().all()
    assert np.abs(late[xyz].to_numpy() - plain[xyz].to_numpy()).max() < ONE_MILLIMETRE
    shift = (late["clock_m"] - plain["clock_m"]).to_numpy() / C_M_S
    assert shift == pytest.approx(np.full(shift.size, 4e-3), abs=ONE_NANOSECOND)


def test_a_millisecond_reset_is_found_and_costs_nothing(log):
    obs, nav = log
    n = obs.sizes["time"]
    # a receiver 0.7 ms ahead drifting by 1e-7 s/s (30 s epochs), which steps back 1 ms at epoch 6
    t = np.arange(n) * 30.0
    offset = 0.7e-3 + 1e-7 * t - np.where(np.arange(n) >= 6, 1e-3, 0.0)
    fixes = _fixes(_with_clock(obs, offset), nav)
    plain = _fixes(obs, nav)
    assert np.abs(fixes[["x_m", "y_m", "z_m"]].to_numpy() - plain[["x_m", "y_m", "z_m"]].to_numpy()).max() \
        < ONE_MILLIMETRE
    series = receiver_clock_series(fixes)
    base = plain["clock_m"].to_numpy() / C_M_S
    assert series["clock_bias_s"].to_numpy() - base == pytest.approx(offset, abs=ONE_NANOSECOND)
    jumps = clock_jumps(series)
    assert len(jumps) == 1 and jumps[0]["step_ms"] == -1 and jumps[0]["whole_ms"]
    assert jumps[0]["time"] == series["time"].iloc[6]
    # the drift with the jump taken out: 1e-7 plus the simulated clock's own (below 1e-9 here)
    drift = series["clock_drift_s_per_s"].to_numpy()
    assert np.abs(drift - 1e-7).max() < 5e-9
    summary = clock_summary(series)
    assert summary["n_millisecond_jumps"] == 1 and summary["jumps"][0]["step_ms"] == -1


def test_clock_series_from_a_table_alone():
    # 1-s epochs, drift -1.4e-7 s/s (the -3.9 to -4.4 ms over 36 min of the issue), a gap, a
    # +1 ms reset and a 0.8 ms step that is no whole millisecond; one epoch without a fix
    t0 = np.datetime64("2024-04-01T08:00:00", "ns")
    seconds = np.array([0, 1, 2, 3, 4, 10, 11, 12, 13, 14, 15], float)
    bias = -3.9e-3 - 1.4e-7 * seconds
    bias[7:] += 1e-3
    bias[9:] += 0.8e-3
    bias[4] = np.nan
    positions = pd.DataFrame({"time": t0 + (seconds * 1e9).astype("int64").astype("timedelta64[ns]"),
                              "clock_m": bias * C_M_S})
    series = receiver_clock_series(positions)
    assert np.isnan(series["clock_jump_s"].iloc[4]) and np.isnan(series["clock_drift_s_per_s"].iloc[4])
    jumps = clock_jumps(series)
    assert [j["step_ms"] for j in jumps] == [1, 1]
    assert [j["whole_ms"] for j in jumps] == [True, False]           # 0.8 ms is 0.2 ms off a whole one
    assert jumps[0]["step_s"] == pytest.approx(1e-3, abs=JUMP_TOLERANCE_S / 100)
    assert series["clock_drift_s_per_s"].dropna().to_numpy() == pytest.approx(-1.4e-7, abs=1e-12)


def test_the_check_has_teeth(log):
    # The same 4 ms in the pseudoranges without the time tags (a transmit time 4 ms off, as if the
    # receiver clock were ignored): satellites ~15 m off along track, and the fixes move by metres.
    obs, nav = log
    plain = _fixes(obs, nav)
    shifted = _with_clock(obs, 4e-3).assign_coords(time=obs["time"].values)
    moved = _fixes(shifted, nav)
    xyz = ["x_m", "y_m", "z_m"]
    assert np.median(np.linalg.norm(moved[xyz].to_numpy() - plain[xyz].to_numpy(), axis=1)) > 1.0


def test_pseudoranges_of_a_receiver_8_ms_behind_are_kept(log):
    # -8 ms is -2400 km on every pseudorange: inside the plausibility margin (+-10 ms, observables),
    # which used to be +-1 ms and dropped a -4 ms receiver's nearest satellites as implausible.
    obs, nav = log
    behind = prepare_observations(_with_clock(obs, -8e-3), nav, "GE")
    plain = prepare_observations(obs, nav, "GE")
    assert behind["epoch"].size == plain["epoch"].size
    assert "implausible pseudorange" not in behind["accounting"].dropped("observations")
