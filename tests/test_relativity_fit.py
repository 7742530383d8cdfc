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


def test_per_satellite_offsets_are_part_of_the_model():
    # Large satellite offsets change nothing: they are estimated, not left in the residuals.
    y, x, e, s = _synthetic(1.0)
    shifted = y + np.array([float(n[1:]) for n in s]) * 5.0
    a, b = fit_periodic_factor(y, x, e, s, jackknife=False), fit_periodic_factor(shifted, x, e, s, jackknife=False)
    assert a["k"] == pytest.approx(b["k"], abs=1e-9)
