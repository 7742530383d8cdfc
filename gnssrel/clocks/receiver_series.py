"""The receiver's own clock bias series against gnssrel's estimate under each hypothesis.

A receiver reports, besides its fixes, its clock bias (and drift) per epoch: the offset of
its clock from the system time it names (:mod:`gnssrel.io.receiver_clock_series`).  gnssrel
estimates the same quantity per epoch in every positioning hypothesis (the ``clock_m``
column of the positions, metres, divided by c); a firmware that treats the periodic term
otherwise moves its clock estimate by about the weighted mean of the satellites' periodic
terms (a few ns), so the hypothesis whose clock the receiver's series follows is the one the
firmware used.  Both series carry the same millisecond resets, so the differences do not.

Per hypothesis: the mean difference (receiver minus gnssrel, ns) over the matched epochs, its
uncertainty from the scatter and the time correlation (:func:`correlated_mean`), the RMS; the
closest hypothesis (smallest RMS difference) and its margin over the runner-up, stated against
the margin's own uncertainty (:func:`margin_and_sigma`).

:func:`correlated_mean` and :func:`margin_and_sigma` also make the fixes verdict (:mod:`gnssrel.audit.firmware`).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from gnssrel.accounting import NO_SYSTEM, Ledger
from gnssrel.constants import C_M_S

N_SIGMA = 3.0
"""A hypothesis is named only when the loss difference behind its margin exceeds this many of its own
standard deviations (z of :func:`margin_and_sigma`; the margin then exceeds twice as many of its own)."""
MIN_MARGIN_NS = 1.0
"""... and at least this much: a constant of the receiver's own making (e.g. a group delay taken
another way) is of this order; common practice, not a measured figure."""
MAX_GAP_S = 0.5
"""A receiver clock row and a gnssrel epoch are the same epoch when their GPST times agree within this."""
SAME_CLOCK_SCALES = ("GPST", "UTC")
"""Scales whose series is compared with gnssrel's GPS-referenced clock as it is (UTC: the offset of
UTC(USNO) from GPST beyond the leap seconds, a few ns at most, is neglected; from memory).  A series
on GST or BDT differs from it by the system time offset and the inter-system bias: a constant the
verdict notes."""
OUTLIER_MADS = 5.0
"""Epochs farther than this many scaled median absolute deviations from the median are left out."""


def effective_sample_size(x: np.ndarray) -> float:
    """N / tau for a regularly sampled series, with tau = 1 + 2 sum rho(k) the integrated
    autocorrelation time, the sum stopped at the first negative rho (initial positive sequence;
    Geyer 1992; common practice).  Between 1 and N; N for white noise."""
    x = np.asarray(x, float)
    n = x.size
    if n < 4:
        return float(n)
    d = x - x.mean()
    var = float(d @ d)
    if var == 0.0:
        return float(n)
    f = np.fft.rfft(d, 2 * n)
    acf = np.fft.irfft(f * np.conj(f))[:n] / var
    negative = np.flatnonzero(acf[1:] < 0.0)
    stop = negative[0] + 1 if negative.size else n
    tau = 1.0 + 2.0 * acf[1:stop].sum()
    return float(np.clip(n / max(tau, 1.0), 1.0, n))


def correlated_mean(values: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Mean of a regularly sampled, time-correlated series of vectors ``values`` (n, k) and the
    covariance of that mean (k, k): the sample covariance over sqrt(N_eff,i N_eff,j) per pair
    of components, N_eff from :func:`effective_sample_size`.  Returns (mean, covariance, N_eff)."""
    v = np.asarray(values, float)
    v = v[:, None] if v.ndim == 1 else v
    n_eff = np.array([effective_sample_size(v[:, j]) for j in range(v.shape[1])])
    cov = np.cov(v, rowvar=False, ddof=1).reshape(v.shape[1], v.shape[1]) if v.shape[0] > 1 \
        else np.full((v.shape[1], v.shape[1]), np.inf)
    return v.mean(axis=0), cov / np.sqrt(np.outer(n_eff, n_eff)), n_eff


def robust_keep(values: np.ndarray) -> np.ndarray:
    """Rows of ``values`` (n, k) within :data:`OUTLIER_MADS` scaled MADs of the median in every component."""
    v = np.asarray(values, float)
    v = v[:, None] if v.ndim == 1 else v
    med = np.median(v, axis=0)
    mad = 1.4826 * np.median(np.abs(v - med), axis=0)
    mad = np.where(mad > 0, mad, np.inf)
    return np.all(np.abs(v - med) <= OUTLIER_MADS * mad, axis=1)


def compare_losses(d_best: np.ndarray, d_second: np.ndarray) -> tuple[float, float, float]:
    """How much farther, on average over the epochs, one hypothesis is than another, and how sure.

    ``d_best``, ``d_second``: (n,) or (n, k) differences (receiver minus gnssrel) under two
    hypotheses at the same epochs.  The mean loss difference D = mean(|d_second|^2 - |d_best|^2)
    (a comparison of two predictions by their losses; Diebold and Mariano 1995, common practice).
    With g = d_second - d_best (gnssrel's own difference between the hypotheses, computed from
    the same observations: no receiver noise in it), the loss difference is |g|^2 + 2 d_best.g;
    the receiver's noise enters only through 2 (d_best - mean d_best).g, whose mean's standard
    deviation (scatter and time correlation, :func:`correlated_mean`) is the uncertainty of D.
    The slow variation of |g|^2 along the orbits is signal, not noise, and is not counted; a
    constant offset of the receiver's own making is not counted either (the callers' floor).
    Returns (D, its standard deviation, effective sample size), in units squared.
    """
    b = np.asarray(d_best, float)
    s = np.asarray(d_second, float)
    b, s = (b[:, None] if b.ndim == 1 else b), (s[:, None] if s.ndim == 1 else s)
    q = (s**2).sum(axis=1) - (b**2).sum(axis=1)
    noise = 2.0 * ((b - b.mean(axis=0)) * (s - b)).sum(axis=1)
    _, cov, n_eff = correlated_mean(noise)
    return float(q.mean()), float(np.sqrt(cov[0, 0])), float(n_eff[0])


def margin_and_sigma(d: dict, best: str, second: str) -> dict:
    """The margin of ``best`` over ``second`` in the units of ``d``, with its standard deviation.

    The margin is sqrt(D), D = mean |d_second|^2 - mean |d_best|^2 (:func:`compare_losses`): how far
    the runner-up lies beyond the closest once the noise both share is taken out (for
    white noise of any size and hypotheses a distance g apart, sqrt(D) = g, where the difference
    of the RMS shrinks as the noise grows).  Its standard deviation sigma_D / (2 sqrt(D)) (first
    order); ``z`` = D / sigma_D, the test statistic the callers compare with :data:`N_SIGMA`
    (z > 3 means margin > 6 sigma); ``p_reversed`` the normal probability of D < 0.
    """
    rms = {h: float(np.sqrt(np.mean(np.sum(np.atleast_2d(np.asarray(d[h], float).T).T ** 2, axis=1))))
           for h in (best, second)}
    q_mean, q_sigma, n_eff = compare_losses(d[best], d[second])
    margin = math.sqrt(max(q_mean, 0.0))
    sigma = q_sigma / (2 * margin) if margin > 0 else math.sqrt(q_sigma)
    z = q_mean / q_sigma if q_sigma > 0 else (math.inf if q_mean > 0 else 0.0)
    p_flip = 0.5 * math.erfc(z / math.sqrt(2)) if math.isfinite(z) else 0.0
    return {"margin": margin, "sigma": float(sigma), "z": float(z), "p_reversed": float(p_flip),
            "n_effective": n_eff, "rms": rms}


def _match(t_series: np.ndarray, t_positions: np.ndarray, max_gap_s: float) -> tuple[np.ndarray, np.ndarray]:
    tp = t_positions.astype("datetime64[ns]").astype("int64")
    ts = t_series.astype("datetime64[ns]").astype("int64")
    order = np.argsort(tp)
    i = np.clip(np.searchsorted(tp[order], ts), 1, max(tp.size - 1, 1))
    lo, hi = np.clip(i - 1, 0, tp.size - 1), np.clip(i, 0, tp.size - 1)
    best = np.where(np.abs(tp[order][hi] - ts) < np.abs(tp[order][lo] - ts), hi, lo)
    ok = np.abs(tp[order][best] - ts) <= max_gap_s * 1e9
    return np.flatnonzero(ok), order[best[ok]]


def compare_receiver_clock(series: pd.DataFrame, positions_by_hypothesis: dict[str, pd.DataFrame],
                           max_gap_s: float = MAX_GAP_S) -> dict:
    """The receiver's clock bias series against gnssrel's receiver clock per hypothesis.

    ``series``: :func:`gnssrel.io.receiver_clock_series.read_receiver_clock_series` (``time``
    GPST, ``clock_bias_ns``, ``time_scale``); ``positions_by_hypothesis``: per hypothesis the
    positions DataFrame (``time``, ``clock_m``: c times the receiver clock of the first system
    present, G E C J R order).  Returns the ``receiver_clock_series`` summary block: per
    hypothesis ``mean_difference_ns`` (receiver minus gnssrel), ``rms_difference_ns``,
    ``n_matched``; ``sigma_mean_ns``, ``n_effective``, ``n_outliers``, ``closest``,
    ``margin_ns``, ``margin_sigma_ns``, ``decided`` and the ``verdict`` sentence.
    """
    scales = sorted(set(series["time_scale"].astype(str)))
    out = {"time_scale": scales[0] if len(scales) == 1 else scales, "mean_difference_ns": {},
           "rms_difference_ns": {}, "n_matched": {}, "closest": None, "margin_ns": None,
           "margin_sigma_ns": None, "decided": False}
    names = list(positions_by_hypothesis)
    if not names:
        return {**out, "verdict": "no gnssrel clock estimate to compare with"}
    t_ref = positions_by_hypothesis[names[0]]["time"].to_numpy()
    i_ser, i_pos = _match(series["time"].to_numpy(), t_ref, max_gap_s)
    bias = series["clock_bias_ns"].to_numpy(float)[i_ser]
    ours = {h: positions_by_hypothesis[h]["clock_m"].to_numpy(float)[i_pos] / C_M_S * 1e9 for h in names}
    finite = np.isfinite(bias) & np.all([np.isfinite(v) for v in ours.values()], axis=0)
    if finite.sum() < 3:
        return {**out, "n_matched": {h: int(finite.sum()) for h in names},
                "verdict": f"undetermined: {int(finite.sum())} epochs of the receiver's clock series match "
                           "an epoch with a gnssrel position (3 needed)"}
    diff = {h: bias[finite] - ours[h][finite] for h in names}
    keep = robust_keep(diff[names[0]])
    out["n_rows"], out["n_unmatched"] = len(series), int(len(series) - finite.sum())
    for h in names:
        d = diff[h][keep]
        out["mean_difference_ns"][h] = float(d.mean())
        out["rms_difference_ns"][h] = float(np.sqrt(np.mean(d**2)))
        out["n_matched"][h] = int(d.size)
    ranked = sorted(names, key=lambda h: out["rms_difference_ns"][h])
    best = ranked[0]
    _, cov, n_eff = correlated_mean(diff[best][keep])
    out.update(closest=best, sigma_mean_ns=float(np.sqrt(cov[0, 0])), n_effective=float(n_eff[0]),
               n_outliers=int((~keep).sum()))
    if len(ranked) == 1:
        return {**out, "verdict": f"closest to '{best}' (the only hypothesis)"}
    second = ranked[1]
    m = margin_and_sigma({h: diff[h][keep] for h in (best, second)}, best, second)
    decided = m["z"] > N_SIGMA and m["margin"] > MIN_MARGIN_NS
    out.update(margin_ns=m["margin"], margin_sigma_ns=m["sigma"], decided=bool(decided), p_reversed=m["p_reversed"])
    rms = out["rms_difference_ns"]
    text = (f"RMS difference from '{best}' {rms[best]:.1f} ns (mean {out['mean_difference_ns'][best]:+.1f} ns), "
            f"from '{second}' {rms[second]:.1f} ns: margin {m['margin']:.1f} ns ± {m['sigma']:.1f} ns "
            f"(z = {min(m['z'], 999):.1f}) over {out['n_matched'][best]} epochs ({m['n_effective']:.0f} independent)")
    out["verdict"] = (f"closest to '{best}': {text}" if decided else
                      f"undetermined: {text}: needs z > {N_SIGMA:g} and a margin over {MIN_MARGIN_NS:g} ns")
    other = [s for s in scales if s not in SAME_CLOCK_SCALES]
    if other:
        out["note"] = (f"series on {', '.join(other)}: compared with gnssrel's clock of the first system of the "
                       "log (GPS when present); the system time offset and inter-system bias shift every mean")
    return out


ITEM = "receiver_clock_series_rows"
NO_EPOCH = "no epoch of the log with a gnssrel clock at this time"
LEFT_OUT = "left out of the comparison (beyond 5 MADs of the median difference)"


def check_receiver_clock_series(series: pd.DataFrame, positions_by_hypothesis: dict[str, pd.DataFrame]
                                ) -> tuple[dict, Ledger]:
    """:func:`compare_receiver_clock`, and the series' ledger (item ``receiver_clock_series_rows``):
    the reader's counts with the rows that matched no solved epoch, and those left out as
    outliers, moved from "used" to their reason."""
    block = compare_receiver_clock(series, positions_by_hypothesis)
    ledger = Ledger.from_dict(series.attrs.get("accounting") or {})
    if not ledger.count(ITEM):
        ledger.read(ITEM, NO_SYSTEM, len(series))
        ledger.used(ITEM, NO_SYSTEM, len(series))
    unmatched = block.get("n_unmatched", len(series) if not block.get("closest") else 0)
    ledger.retire(ITEM, NO_SYSTEM, NO_EPOCH, unmatched)
    ledger.retire(ITEM, NO_SYSTEM, LEFT_OUT, block.get("n_outliers", 0))
    return block, ledger
