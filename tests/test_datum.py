"""The per-epoch datum survives per-satellite offsets and a changing tracked set.

Synthetic series only (invented numbers, no outside reference): the check is that the
method recovers what was put in.  The real-data figures are in
test_clocks_against_final_products.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import ONE_NANOSECOND

from gnssrel.clocks.datum import datum_by_system, plain_epoch_median, robust_epoch_datum


def _series(seed=3, n_time=96, n_sat=40, offset_s=30e-9, noise_s=0.3e-9, tracked=0.6):
    rng = np.random.default_rng(seed)
    datum = np.cumsum(rng.normal(0, 2e-9, n_time))
    offsets = rng.normal(0, offset_s, n_sat)
    r = datum[:, None] + offsets[None, :] + rng.normal(0, noise_s, (n_time, n_sat))
    # Each satellite is tracked during one window of the day: the tracked set keeps changing.
    start = rng.integers(0, n_time, n_sat)
    length = (tracked * n_time).astype(int) if np.ndim(tracked) else int(tracked * n_time)
    idx = np.arange(n_time)[:, None]
    seen = ((idx - start[None, :]) % n_time) < length
    r[~seen] = np.nan
    return r, datum, offsets


def _median_std(r, d):
    return float(np.nanmedian(np.nanstd(r - d[:, None], axis=0)))


def test_robust_datum_survives_offsets_where_plain_median_jumps():
    # BeiDou-like: offsets of tens of ns between satellites (signal references differ).
    r, _datum, _ = _series()
    robust = robust_epoch_datum(r)
    plain = plain_epoch_median(r)
    assert robust.converged
    assert _median_std(r, robust.datum_s) < 0.45 * ONE_NANOSECOND   # noise is 0.3 ns
    assert _median_std(r, plain) > 3 * ONE_NANOSECOND                # the plain median jumps


def test_robust_datum_recovers_datum_and_offsets_up_to_one_constant():
    r, datum, offsets = _series(noise_s=0.1e-9)
    result = robust_epoch_datum(r)
    shift = np.nanmedian(result.datum_s - datum)
    assert np.nanmax(np.abs(result.datum_s - datum - shift)) < 0.3 * ONE_NANOSECOND
    assert np.nanmax(np.abs(result.offsets_s - offsets + shift)) < 0.1 * ONE_NANOSECOND
    assert abs(np.nanmedian(result.offsets_s)) < 1e-15   # the stated gauge: median offset 0


def test_an_outlying_satellite_does_not_move_the_datum():
    r, _datum, _ = _series(noise_s=0.1e-9, tracked=1.0)
    clean = robust_epoch_datum(r).datum_s
    r[40:, 0] += 500e-9   # one clock jumps by 500 ns mid-day
    moved = robust_epoch_datum(r).datum_s
    assert np.nanmax(np.abs((moved - clean) - np.nanmedian(moved - clean))) < 0.2 * ONE_NANOSECOND


def test_epochs_with_too_few_satellites_get_no_datum():
    r = np.full((4, 3), np.nan)
    r[0, :] = [1e-9, 2e-9, 3e-9]
    r[1, 0] = 1e-9
    d = robust_epoch_datum(r, min_satellites=2).datum_s
    assert np.isfinite(d[0]) and np.isnan(d[1]) and np.isnan(d[2])


def test_qzss_takes_the_gps_datum():
    r, _datum, _ = _series(n_sat=12, tracked=1.0)
    systems = ["G"] * 10 + ["J"] * 2
    out, info = datum_by_system(r, systems)
    assert info["J"]["datum_from"] == "G" and info["G"]["datum_from"] == "G"
    np.testing.assert_array_equal(out[:, 10], out[:, 0])
    np.testing.assert_allclose(out[:, 11], robust_epoch_datum(r[:, :10]).datum_s, rtol=0, atol=1e-18)


def test_qzss_alone_takes_its_own_datum():
    r, _, _ = _series(n_sat=4, tracked=1.0)
    _, info = datum_by_system(r, ["J"] * 4)
    assert info["J"]["datum_from"] == "J"


def test_unknown_method_is_refused():
    with pytest.raises(ValueError, match="unknown datum method"):
        datum_by_system(np.zeros((3, 2)), ["G", "G"], method="mean")
