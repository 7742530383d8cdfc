"""The k fit of the periodic relativistic term, on synthetic pseudorange residuals built here."""

import numpy as np
import pytest

from gnssrel.audit.relativity_fit import fit_periodic_factor

C = 299_792_458.0


def _synthetic(k_true, seed=3, n_epoch=720, n_sat=24, visible=9, correlated_m=0.8, white_m=0.3):
    """y = receiver clock - k c dt_r + satellite offset + noise, with passes and time-correlated noise.

    dt_r = F e sqrt(A) sin E with e up to 0.02 (|dt_r| up to ~46 ns, REFERENCE-CHECKS 5, derived);
    E advances by 2 pi per 12 h; epochs are 60 s apart.  The correlated part is an AR(1) process
    with a 20-min time constant (multipath-like), the reason formal sigmas are too small.
    """
    rng = np.random.default_rng(seed)
    t = np.arange(n_epoch) * 60.0
    ecc = rng.uniform(0.002, 0.02, n_sat)
    phase = rng.uniform(0, 2 * np.pi, n_sat)
    offset = rng.normal(0, 1.0, n_sat)
    clock = np.cumsum(rng.normal(0, 5.0, n_epoch))
    phi = np.exp(-60.0 / 1200.0)
    epochs, svs, ys, xs = [], [], [], []
    start = rng.integers(0, n_epoch, n_sat)
    for s in range(n_sat):
        on = np.flatnonzero(((np.arange(n_epoch) - start[s]) % n_epoch) < n_epoch * visible / n_sat)
        dtr = -4.442807633e-10 * ecc[s] * 5153.7 * np.sin(2 * np.pi * t[on] / 43_082.0 + phase[s])
        ar = np.zeros(on.size)
        for i in range(1, on.size):
            ar[i] = phi * ar[i - 1] + np.sqrt(1 - phi**2) * rng.normal(0, correlated_m)
        ys.append(clock[on] - k_true * C * dtr + offset[s] + ar + rng.normal(0, white_m, on.size))
        xs.append(C * dtr)
        epochs.append(on)
        svs.append(np.full(on.size, f"G{s + 1:02d}"))
    return (np.concatenate(ys), np.concatenate(xs), np.concatenate(epochs), np.concatenate(svs))


@pytest.mark.parametrize("k_true", [1.0, 0.0, -1.0, 2.0])
def test_k_is_recovered(k_true):
    fit = fit_periodic_factor(*_synthetic(k_true))
    assert fit["k"] == pytest.approx(k_true, abs=0.05)
    assert abs(fit["k"] - k_true) < 4 * fit["sigma"]
    best = min(fit["rms_m"], key=fit["rms_m"].get)
    assert fit["rms_m"][best] == pytest.approx(fit["rms_fit_m"], abs=0.02)
    assert {"applied": 1.0, "omitted": 0.0, "reversed": -1.0, "doubled": 2.0}[best] == k_true


def test_jackknife_sigma_is_honest_about_correlated_noise():
    # Over independent realisations the scatter of k must match the jackknife sigma (within a factor
    # ~1.6), while the formal sigma, which assumes white residuals, is several times too small.
    fits = [fit_periodic_factor(*_synthetic(1.0, seed=s)) for s in range(12)]
    ks = np.array([f["k"] for f in fits])
    jk = np.median([f["sigma"] for f in fits])
    formal = np.median([f["sigma_formal"] for f in fits])
    scatter = ks.std(ddof=1)
    assert jk / 1.6 < scatter < jk * 1.6
    assert formal < scatter / 2


def test_outliers_are_rejected_and_counted():
    y, x, e, s = _synthetic(1.0)
    y = y.copy()
    y[::500] += 300.0
    fit = fit_periodic_factor(y, x, e, s)
    assert fit["n_rejected"] >= y[::500].size
    assert fit["k"] == pytest.approx(1.0, abs=0.05)


def _dense_reference(y, x, epoch, sv):
    """k, formal sigma, RMS and jackknife sigma of y = -k x + b[epoch] + o[sv] by one dense
    least-squares solve with every epoch and satellite column (no elimination, no rejection)."""
    def solve(mask):
        _, e = np.unique(epoch[mask], return_inverse=True)
        _, s = np.unique(sv[mask], return_inverse=True)
        n = mask.sum()
        design = np.zeros((n, 1 + e.max() + 1 + s.max() + 1))
        design[:, 0] = -x[mask]
        design[np.arange(n), 1 + e] = 1.0
        design[np.arange(n), 2 + e.max() + s] = 1.0
        beta, *_ = np.linalg.lstsq(design, y[mask], rcond=None)
        resid = y[mask] - design @ beta
        dof = n - (e.max() + 1) - (s.max() + 1)
        formal = np.sqrt(resid @ resid / dof * np.linalg.pinv(design.T @ design)[0, 0])
        return beta[0], formal, np.sqrt(np.mean(resid**2))

    k, formal, rms = solve(np.ones(y.size, bool))
    names = np.unique(sv)
    ks = np.array([solve(sv != name)[0] for name in names])
    sigma = np.sqrt((names.size - 1) / names.size * np.sum((ks - ks.mean()) ** 2))
    return k, formal, rms, sigma


def _assert_matches_the_dense_solve(fit, y, x, e, s):
    k, formal, rms, sigma = _dense_reference(y, x, e, s)
    assert fit["k"] == pytest.approx(k, rel=1e-10)
    assert fit["sigma_formal"] == pytest.approx(formal, rel=1e-10)
    assert fit["rms_fit_m"] == pytest.approx(rms, rel=1e-10)
    assert fit["sigma"] == pytest.approx(sigma, rel=1e-10)


def test_normal_equations_match_a_dense_solve():
    # The fit eliminates the epoch and satellite effects from sums per (epoch, satellite) cell
    # (module text); a small problem solved densely with all columns must give the same figures.
    y, x, e, s = _synthetic(1.0, seed=5, n_epoch=90, n_sat=8, visible=5)
    fit = fit_periodic_factor(y, x, e, s, reject_sigma=1e9)
    _assert_matches_the_dense_solve(fit, y, x, e, s)
    assert fit["n_rejected"] == 0
    assert fit["n_sat"] == 8 and fit["n_epochs"] == np.unique(e).size
    # A receiver clock offset of 1 ms (300 km in y) is an epoch effect: nothing changes, to the
    # precision of the data (the cell sums are taken after centring on the epoch means).
    shifted = fit_periodic_factor(y + 3.0e5, x, e, s, reject_sigma=1e9)
    assert shifted["k"] == pytest.approx(fit["k"], rel=1e-10)
    assert shifted["sigma"] == pytest.approx(fit["sigma"], rel=1e-8)


def test_a_satellite_never_seen_with_another_takes_the_pseudo_inverse():
    # G99 alone at epochs of its own: its offset is not separable from those epochs' clock, the
    # offsets' normal matrix has a second null direction, and k must still be the dense one.
    y, x, e, s = _synthetic(1.0, seed=6, n_epoch=60, n_sat=6, visible=4)
    rng = np.random.default_rng(1)
    y = np.concatenate([y, rng.normal(0, 1, 5)])
    x = np.concatenate([x, rng.normal(0, 5, 5)])
    e = np.concatenate([e, np.arange(1000, 1005)])
    s = np.concatenate([s, np.full(5, "G99")])
    fit = fit_periodic_factor(y, x, e, s, reject_sigma=1e9)
    assert fit["n_sat"] == 7
    _assert_matches_the_dense_solve(fit, y, x, e, s)


def test_a_full_day_fit_is_one_pass_over_the_data():
    # 2880 epochs x 32 satellites (a full 30-s GPS day): the k fit with its 32-fold jackknife
    # builds no dense design matrix; this checks the result, the benchmark the time.
    y, x, e, s = _synthetic(1.0, seed=7, n_epoch=2880, n_sat=32, visible=10)
    fit = fit_periodic_factor(y, x, e, s)
    assert fit["n_sat"] == 32 and fit["n_epochs"] == 2880
    assert fit["k"] == pytest.approx(1.0, abs=4 * fit["sigma"])


def test_per_satellite_offsets_are_part_of_the_model():
    # Large satellite offsets change nothing: they are estimated, not left in the residuals.
    y, x, e, s = _synthetic(1.0)
    shifted = y + np.array([float(n[1:]) for n in s]) * 5.0
    a, b = fit_periodic_factor(y, x, e, s, jackknife=False), fit_periodic_factor(shifted, x, e, s, jackknife=False)
    assert a["k"] == pytest.approx(b["k"], abs=1e-9)


def test_an_ionosphere_model_error_enters_the_sigma_as_the_k_it_would_fit():
    # k is linear in y: a model error e shifts k by the k fitted to e alone.  An error shaped like
    # the periodic term itself (the worst case) of amplitude 0.2 c dt_r moves k by exactly 0.2.
    y, x, e, s = _synthetic(1.0)
    fit = fit_periodic_factor(y, x, e, s, model_error_m=0.2 * x)
    assert fit["sigma_model"] == pytest.approx(0.2, rel=1e-6)
    assert fit["sigma"] == pytest.approx(np.hypot(fit["sigma_jackknife"], 0.2), rel=1e-12)
    # an error common to an epoch or constant per satellite is absorbed by b(epoch) and o(sv)
    common = np.random.default_rng(5).normal(0, 3.0, int(e.max()) + 1)[e] + 2.0 * (s == "G03")
    assert fit_periodic_factor(y, x, e, s, model_error_m=common)["sigma_model"] < 1e-9
    assert fit_periodic_factor(y, x, e, s)["sigma_model"] == 0.0


def _table(system, n_sat=6, n_epoch=30, code="C1C", iono=1.0, clock=1e-4, elevation=40.0):
    import pandas as pd
    rng = np.random.default_rng(2)
    t = np.datetime64("2024-04-01T08:00", "ns") + (np.arange(n_epoch) * 30 * 10**9).astype("timedelta64[ns]")
    rows = [(t[i], f"{system}{j + 1:02d}") for i in range(n_epoch) for j in range(n_sat)]
    n = len(rows)
    periodic = 1e-8 * np.sin(np.arange(n) / 50.0)
    return pd.DataFrame({"time": [r[0] for r in rows], "sv": [r[1] for r in rows], "system": system, "code": code,
                         "pseudorange_m": 2.2e7 + rng.normal(0, 0.5, n) - C * periodic,
                         "geometric_range_m": np.full(n, 2.2e7), "shapiro_m": 0.0, "troposphere_m": 0.0,
                         "ionosphere_m": np.full(n, iono), "group_delay_m": 0.0,
                         "satellite_clock_s": np.full(n, clock), "periodic_s": periodic,
                         "periodic_in_clock": False, "elevation_deg": np.full(n, elevation)})


def test_single_frequency_codes_with_a_model_are_fitted_and_the_others_say_why():
    import pandas as pd

    from gnssrel.audit.relativity_fit import relativity_k, why_no_k
    table = pd.concat([_table("G", iono=2.0), _table("C", code="C2I", iono=np.nan),
                       _table("R", clock=np.nan), _table("E", code="C1C+C5Q", iono=0.0, elevation=5.0),
                       _table("J", n_sat=1, n_epoch=10)], ignore_index=True)
    fits = relativity_k(table)
    assert set(fits) == {"G"}                                  # single frequency, Klobuchar-corrected
    assert fits["G"]["frequencies"] == "single" and fits["G"]["sigma_model"] >= 0.0
    why = why_no_k(table, fits)
    assert set(why) == {"C", "R", "E", "J"}
    assert "no broadcast ionosphere coefficients" in why["C"] and "C2I" in why["C"]
    assert why["R"].startswith("no satellite orbit and clock")
    assert why["E"] == "no observation above the 10 deg elevation mask"
    assert why["J"].startswith("10 usable observations") and "20 needed" in why["J"]
