"""The convention fit recovers k, and its sigma is honest about correlated residuals.

Synthetic series (invented; no outside reference) plus the verdict rule itself.
"""

from __future__ import annotations

import numpy as np
import pytest

from gnssrel.clocks.convention import (
    UNDETERMINED,
    convention_verdict,
    fit_convention,
    fit_convention_per_satellite,
)

GPS_MEAN_MOTION_RAD_S = 2 * np.pi / 43_082.0   # half a sidereal day (common practice)


def _panel(k, seed=1, n_time=96, n_sat=30, step_s=900.0, noise_s=0.5e-9, rho=0.9, gaps=0.1):
    rng = np.random.default_rng(seed)
    t = np.arange(n_time) * step_s
    amplitude = rng.uniform(5e-9, 40e-9, n_sat)       # e = 0.002 .. 0.017 for GPS
    dtr = amplitude * np.sin(GPS_MEAN_MOTION_RAD_S * t[:, None] + rng.uniform(0, 2 * np.pi, n_sat))
    datum = np.cumsum(rng.normal(0, 1e-9, n_time))[:, None]
    offset = rng.normal(0, 20e-9, n_sat)[None, :]
    drift = rng.normal(0, 1e-14, n_sat)[None, :] * t[:, None]
    e = rng.normal(0, noise_s * np.sqrt(1 - rho**2), (n_time, n_sat))
    noise = np.zeros_like(e)
    for i in range(n_time):   # AR(1): residuals correlated in time, as real ones are
        noise[i] = (rho * noise[i - 1] if i else 0.0) + e[i]
    r = datum + offset + drift + k * dtr + noise
    r[rng.random(r.shape) < gaps] = np.nan
    return r, dtr, t


@pytest.mark.parametrize("k, verdict", [(0.0, "excludes-periodic"), (1.0, "includes-periodic"),
                                        (-1.0, "reversed-periodic"), (2.0, "doubled-periodic")])
def test_fit_recovers_k_and_names_it(k, verdict):
    r, dtr, t = _panel(k)
    fit = fit_convention(r, dtr, t)
    assert abs(fit.k - k) < 0.02
    assert fit.convention == verdict
    assert fit.n_sat == 30
    assert "jackknife over 30 satellites" == fit.sigma_method


def test_jackknife_sigma_is_larger_than_the_formal_one_for_correlated_noise():
    # With AR(1) rho = 0.9 the effective number of samples is ~20x smaller; the formal
    # sigma ignores that.  Repeat the experiment to see which sigma matches the scatter.
    ks, jack, formal = [], [], []
    for seed in range(12):
        fit = fit_convention(*_panel(1.0, seed=seed))
        ks.append(fit.k)
        jack.append(fit.k_sigma)
        formal.append(fit.k_sigma_formal)
    scatter = np.std(ks, ddof=1)
    assert np.median(jack) > 2 * np.median(formal)
    assert 0.4 < np.median(jack) / scatter < 2.5
    assert np.median(formal) / scatter < 0.6


def test_time_blocks_are_used_when_satellites_are_few():
    r, dtr, t = _panel(1.0, n_sat=3)
    fit = fit_convention(r, dtr, t)
    assert fit.sigma_method.startswith("jackknife over 8 blocks")
    assert abs(fit.k - 1.0) < 0.1


def test_extra_regressors_get_their_own_coefficient():
    r, dtr, t = _panel(0.0, noise_s=0.05e-9)
    other = np.cos(GPS_MEAN_MOTION_RAD_S * t)[:, None] * np.linspace(1e-9, 5e-9, 30)[None, :]
    fit = fit_convention(r + 0.7 * other, dtr, t, extra_regressors=[other])
    assert abs(fit.coefficients[1] - 0.7) < 0.02 and abs(fit.k) < 0.02


def test_no_data_gives_undetermined_not_a_number():
    r = np.full((10, 4), np.nan)
    fit = fit_convention(r, r, np.arange(10.0))
    assert fit.convention == UNDETERMINED and np.isnan(fit.k)


def test_per_satellite_k_with_block_jackknife():
    r, dtr, t = _panel(1.0, noise_s=0.3e-9, gaps=0.0)
    datum = np.nanmedian(r - dtr, axis=1)  # the true datum up to offsets (test shortcut)
    k, sigma = fit_convention_per_satellite(r - datum[:, None], dtr, t)
    assert np.all(np.abs(k - 1.0) < 5 * sigma + 0.02)
    assert np.all(sigma > 0) and np.median(sigma) < 0.1


@pytest.mark.parametrize("k, sigma, verdict", [
    (0.02, 0.01, "excludes-periodic"),     # inside the 0.1 floor
    (0.95, 0.05, "includes-periodic"),
    (-1.06, 0.07, "reversed-periodic"),
    (0.0, 0.3, UNDETERMINED),              # sigma >= 0.25
    (2.1, 0.1, "doubled-periodic"),
    (0.5, 0.1, UNDETERMINED),              # between candidates
    (1.0, 0.3, UNDETERMINED),              # sigma too large for any verdict
    (0.0, 0.2, "excludes-periodic"),       # |k - 1| = 1 > 3 sigma = 0.6: the others are excluded
    (1.3, 0.05, UNDETERMINED),             # off every candidate by > 3 sigma and > floor
    (float("nan"), 0.01, UNDETERMINED),
])
def test_verdict_rule(k, sigma, verdict):
    assert convention_verdict(k, sigma) == verdict
