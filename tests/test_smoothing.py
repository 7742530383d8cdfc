"""Carrier-smoothed code (Hatch filter, gnssrel.audit.smoothing) and the code choice options."""

import numpy as np
import pytest
import xarray as xr

from gnssrel.audit import smoothing
from gnssrel.audit.observables import ONLY_ONE_FREQUENCY, select_pseudoranges
from gnssrel.constants import C_M_S
from gnssrel.signals import frequency_hz

T0 = np.datetime64("2024-05-03T00:00:00", "ns")


def _times(n, step_s=1.0):
    return T0 + (np.arange(n) * step_s * 1e9).astype("timedelta64[ns]")


def _arc(n=600, noise_m=1.0, seed=1, iono_rate_m_s=0.0):
    """An invented arc: range 2.2e7 m drifting 500 m/s, code noise ``noise_m``, a phase with an
    arbitrary ambiguity; the ionosphere grows at ``iono_rate_m_s`` (code late, phase early)."""
    t = np.arange(n, dtype=float)
    rho = 2.2e7 + 500.0 * t
    iono = 3.0 + iono_rate_m_s * t
    rng = np.random.default_rng(seed)
    code = rho + iono + noise_m * rng.standard_normal(n)
    phase = rho - iono + 1234.5                  # ambiguity: any constant
    return rho + iono, code[:, None], phase[:, None]


def test_smoothing_divides_the_noise_as_an_exponential_average_does():
    # Derived: an exponential average of weight 1/N on white noise has variance sigma^2 / (2N - 1)
    # (N = 100: sigma / 14.1); the first N epochs are a plain mean.
    truth, code, phase = _arc(n=1200)
    out, info = smoothing.hatch_filter(code, phase, _times(1200), 100.0)
    err = out[:, 0] - truth
    steady = err[300:]
    assert np.std(code[300:, 0] - truth[300:]) == pytest.approx(1.0, rel=0.1)
    assert np.sqrt(np.mean(steady**2)) == pytest.approx(1.0 / np.sqrt(199.0), rel=0.3)
    assert info["smoothed"] == 1199 and sum(info["resets"].values()) == 0


def test_a_loss_of_lock_flag_restarts_the_arc_and_a_missed_small_slip_biases_it():
    truth, code, phase = _arc(n=400, noise_m=0.0)
    phase[200:] += 5.0                             # a slip of 5 m: below the 10 m jump test
    lli = np.full(code.shape, np.nan)
    lli[200] = 1.0                                 # RINEX 3.05 5.3.1: LLI bit 0 = lost lock
    flagged, info = smoothing.hatch_filter(code, phase, _times(400), 100.0, lli=lli)
    blind, info_blind = smoothing.hatch_filter(code, phase, _times(400), 100.0)
    assert info["resets"]["loss of lock indicator"] == 1
    assert np.max(np.abs(flagged[:, 0] - truth)) < 1e-6          # restarted: no bias
    assert info_blind["resets"]["loss of lock indicator"] == 0
    assert blind[201, 0] - truth[201] == pytest.approx(5.0 * 0.99**2, abs=1e-6)   # fades as (1 - 1/N)^k


def test_a_phase_jump_beyond_the_threshold_is_a_cycle_slip():
    truth, code, phase = _arc(n=300, noise_m=0.0)
    phase[150:] -= 40.0
    out, info = smoothing.hatch_filter(code, phase, _times(300), 100.0)
    assert info["resets"]["cycle slip (phase-minus-code jump)"] == 1
    assert np.max(np.abs(out[:, 0] - truth)) < 1e-6


def test_gaps_and_missing_phase_restart_the_arc():
    _, code, phase = _arc(n=300, noise_m=0.0)
    t = _times(300)
    t[200:] += np.timedelta64(60, "s")             # 61 s between two 1-s epochs: a gap
    phase[100] = np.nan                            # one epoch without phase: raw code there
    out, info = smoothing.hatch_filter(code, phase, t, 100.0)
    assert info["resets"]["gap"] == 1 and info["resets"]["no phase"] == 1
    assert out[100, 0] == code[100, 0]


def test_single_frequency_divergence_and_the_window_cap():
    # Derived: with the delay growing at r, code - phase grows at 2 r; an average of time constant
    # tau lags it by ~ 2 r tau.  r = 2.5 mm/s and the 100-s cap: below 0.5 m (the stated limit).
    truth, code, phase = _arc(n=1500, noise_m=0.0, iono_rate_m_s=0.0025)
    ds = _dataset({"C1C": code, "L1C": phase / (C_M_S / frequency_hz("G", "C1C"))}, n=1500)
    out, info = smoothing.smooth_code(ds, "G", ("C1C",), np.array([0]), code, 600.0)
    assert info["window_s"] == smoothing.SINGLE_FREQUENCY_MAX_WINDOW_S and info["form"] == "single-frequency"
    lag = truth[-1] - out[-1, 0]
    assert 0.3 < lag < 0.5


def test_dual_frequency_smoothing_is_ionosphere_free_and_keeps_the_window():
    n = 900
    t = np.arange(n, dtype=float)
    f1, f2 = frequency_hz("G", "C1C"), frequency_hz("G", "C2W")
    rho = 2.2e7 + 500.0 * t
    i1 = 3.0 + 0.01 * t                              # a fast ionosphere: 1 cm/s on L1
    i2 = i1 * (f1 / f2) ** 2
    ds = _dataset({"C1C": (rho + i1)[:, None], "C2W": (rho + i2)[:, None],
                   "L1C": ((rho - i1 + 7.0) * f1 / C_M_S)[:, None], "L2W": ((rho - i2 - 3.0) * f2 / C_M_S)[:, None]},
                  n=n)
    picked = select_pseudoranges(ds, "G", smooth_code_s=300.0)
    assert picked["code"][0] == "C1C+C2W"
    assert picked["smoothing"]["G"]["form"] == "ionosphere-free"
    assert picked["smoothing"]["G"]["window_s"] == 300.0
    assert np.max(np.abs(picked["pseudorange_m"] - rho)) < 1e-6     # no divergence at all


def _dataset(variables: dict, n: int, sv=("G05",)) -> xr.Dataset:
    data = {k: (("time", "sv"), np.asarray(v, float)) for k, v in variables.items()}
    return xr.Dataset(data, coords={"time": _times(n), "sv": list(sv)})


def test_frequency_modes_choose_one_code_or_pairs_only():
    n = 5
    rho = np.full((n, 2), 2.2e7)
    gps, bds = np.array([True, False]), np.array([False, True])
    ds = _dataset({"C1C": np.where(gps, rho, np.nan), "C2W": np.where(gps, rho + 2.0, np.nan),
                   "C2I": np.where(bds, rho + 1.0, np.nan)},
                  n=n, sv=("G05", "C11"))
    auto = select_pseudoranges(ds)
    assert set(zip(auto["system"], auto["code"])) == {("G", "C1C+C2W"), ("C", "C2I")}
    single = select_pseudoranges(ds, frequencies="single")
    assert set(single["code"]) == {"C1C", "C2I"} and np.allclose(single["pseudorange_m"][single["system"] == "G"], 2.2e7)
    dual = select_pseudoranges(ds, frequencies="dual")
    assert set(dual["code"]) == {"C1C+C2W"}
    assert dual["accounting"].dropped("observations", "C") == {ONLY_ONE_FREQUENCY: n}


def test_without_phase_the_codes_stay_raw_and_say_why():
    ds = _dataset({"C1C": np.full((4, 1), 2.2e7)}, n=4)
    picked = select_pseudoranges(ds, smooth_code_s=100.0)
    assert picked["smoothing"]["G"]["why_not"] == "no carrier phase in the log"
    assert np.all(picked["pseudorange_m"] == 2.2e7)


def test_auto_takes_one_code_where_the_pair_is_too_noisy():
    # A phone-like pair: 2 m white noise per code -> the E1/E5a combination ~5.2 m (amplification
    # sqrt(g1^2 + g2^2) = 2.59, derived), above NOISY_COMBINATION_M = 3 m; a geodetic 0.2 m pair stays.
    # Derived: the epoch-to-epoch change of P5 - P1 has sigma sqrt(2) sqrt(2) sigma = 2 sigma: half is sigma.
    from gnssrel.audit.ionosphere import NOISY_COMBINATION_M
    rng = np.random.default_rng(4)
    n = 200
    rho = 2.5e7 + 300.0 * np.arange(n)[:, None]
    for sigma, expected in ((2.0, "C1C"), (0.2, "C1C+C5Q")):
        ds = _dataset({"C1C": rho + sigma * rng.standard_normal((n, 1)),
                       "C5Q": rho + 1.8 + sigma * rng.standard_normal((n, 1))}, n=n, sv=("E11",))
        picked = select_pseudoranges(ds)
        noise = picked["code_noise"]["E"]
        assert picked["code"][0] == expected and noise["choice"] == expected
        assert noise["code_m"] == pytest.approx(sigma, rel=0.2)
        assert (noise["ionosphere_free_m"] > NOISY_COMBINATION_M) == (expected == "C1C")
        assert select_pseudoranges(ds, frequencies="dual")["code"][0] == "C1C+C5Q"
