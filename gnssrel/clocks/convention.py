"""Which relativistic convention a clock series follows: the fit of k.

For a clock series X (a precise product, a receiver's own satellite clocks) and
the broadcast polynomial P of the same satellites, fit

    X[t, s] - P[t, s] = d[t] + a[s] + b[s] (t - t0) + k dtr[t, s] + noise

where dtr is the periodic relativistic term (F e sqrt(A) sin E, or -2 r.v/c^2),
d[t] a per-epoch datum (the product's time scale; optional), a[s], b[s] a
per-satellite offset and drift.  k near 0: X excludes the periodic term (as the
broadcast polynomial does); 1: includes it; -1: includes it with the wrong sign;
2: applies it twice.

The least-squares solution is computed by projecting the nuisance parameters out
of both sides (Frisch-Waugh-Lovell), the projection done by alternating per-epoch
and per-satellite removals until it no longer changes.

Honest sigma.  Residuals of 30 s or 15 min clock series are strongly correlated in
time (ephemeris changes, orbit errors), so the formal least-squares sigma is several
times too small.  The sigma reported is a delete-one-satellite jackknife
(>= :data:`MIN_SATELLITES_JACKKNIFE` satellites), else a delete-one-block jackknife
over :data:`N_TIME_BLOCKS` blocks of time.  The formal sigma is reported beside it.

Verdict rule (:func:`convention_verdict`): a candidate c in {0, 1, -1, 2} is named
when sigma < :data:`MAX_SIGMA` (0.25), |k - c| <= max(3 sigma, :data:`K_FLOOR`), and
every other candidate is more than 3 sigma away; otherwise "undetermined".
K_FLOOR = 0.1 admits model differences that are not noise (the J2 term, orbit
errors, the F e sqrt(A) sin E vs -2 r.v/c^2 forms: a few per cent of the term).
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

CANDIDATES = {"excludes-periodic": 0.0, "includes-periodic": 1.0, "reversed-periodic": -1.0,
              "doubled-periodic": 2.0}
"""Verdict names and the k each stands for."""
UNDETERMINED = "undetermined"
N_SIGMA = 3.0
K_FLOOR = 0.1
MAX_SIGMA = 0.25
MIN_SATELLITES_JACKKNIFE = 5
N_TIME_BLOCKS = 8
VERDICT_RULE = (f"nearest of k = 0/1/-1/2 when sigma < {MAX_SIGMA}, |k - c| <= max({N_SIGMA:g} sigma, "
                f"{K_FLOOR}) and every other candidate is more than {N_SIGMA:g} sigma away; "
                f"else '{UNDETERMINED}'")


def convention_verdict(k: float, sigma: float) -> str:
    """Name the convention k stands for, or "undetermined" (rule in the module docstring)."""
    if not (np.isfinite(k) and np.isfinite(sigma)) or sigma >= MAX_SIGMA:
        return UNDETERMINED
    tolerance = max(N_SIGMA * sigma, K_FLOOR)
    near = [name for name, c in CANDIDATES.items() if abs(k - c) <= tolerance]
    if len(near) != 1:
        return UNDETERMINED
    others_excluded = all(abs(k - c) > N_SIGMA * sigma for name, c in CANDIDATES.items() if name != near[0])
    return near[0] if others_excluded else UNDETERMINED


@dataclass
class ConventionFit:
    """k and its sigmas; ``coefficients`` holds every regressor's value (k first)."""

    k: float
    k_sigma: float
    k_sigma_formal: float
    sigma_method: str
    n_sat: int
    n_obs: int
    rms_residual_s: float
    convention: str
    coefficients: np.ndarray = field(default_factory=lambda: np.zeros(0))
    coefficient_sigmas: np.ndarray = field(default_factory=lambda: np.zeros(0))


def _project(y: np.ndarray, mask: np.ndarray, t_s: np.ndarray, epoch_datum: bool, drift: bool,
             tolerance: float = 1e-6, max_iterations: int = 500) -> np.ndarray:
    """Remove per-epoch means and per-satellite offset (+ drift) from ``y`` (n_time, n_sat).

    Alternating projections onto the two nuisance subspaces converge to the projection
    onto their sum (von Neumann); stops when a pass changes y by < ``tolerance`` of its RMS.
    """
    y = np.where(mask, y, 0.0)
    w = mask.astype(np.float64)
    n_col = w.sum(axis=0)
    n_row = w.sum(axis=1)
    t = np.broadcast_to(t_s[:, None], y.shape)
    t_mean = np.divide((w * t).sum(axis=0), n_col, out=np.zeros_like(n_col), where=n_col > 0)
    tc = np.where(mask, t - t_mean[None, :], 0.0)
    stt = (tc * tc).sum(axis=0)
    scale = np.sqrt((y * y).sum() / max(w.sum(), 1.0)) or 1.0
    for _ in range(max_iterations):
        before = y.copy()
        a = np.divide(y.sum(axis=0), n_col, out=np.zeros_like(n_col), where=n_col > 0)
        y = np.where(mask, y - a[None, :], 0.0)
        if drift:
            b = np.divide((tc * y).sum(axis=0), stt, out=np.zeros_like(stt), where=stt > 0)
            y = np.where(mask, y - b[None, :] * tc, 0.0)
        if not epoch_datum:
            break
        m = np.divide(y.sum(axis=1), n_row, out=np.zeros_like(n_row), where=n_row > 0)
        y = np.where(mask, y - m[:, None], 0.0)
        if np.sqrt(((y - before) ** 2).sum() / max(w.sum(), 1.0)) < tolerance * scale:
            break
    return y


def _solve(y, regressors, mask, t_s, epoch_datum, drift):
    yp = _project(y, mask, t_s, epoch_datum, drift)
    xp = np.stack([_project(x, mask, t_s, epoch_datum, drift)[mask] for x in regressors], axis=1)
    normal = xp.T @ xp
    coef = np.linalg.solve(normal, xp.T @ yp[mask])
    resid = yp[mask] - xp @ coef
    return coef, resid, normal


def fit_convention(residual_s, dtr_s, t_s, epoch_datum: bool = True, drift: bool = True,
                   extra_regressors=(), clip_sigma: float | None = 8.0) -> ConventionFit:
    """Fit k (module docstring) to ``residual_s`` = X - P, shape (n_time, n_sat).

    ``dtr_s``: the periodic term on the same grid; ``t_s``: epoch times in seconds
    (n_time,); ``extra_regressors``: more (n_time, n_sat) arrays fitted beside dtr
    (their coefficients follow k in ``coefficients``).  Entries NaN in any input are
    left out; ``clip_sigma``: drop residuals beyond that many robust sigmas (MAD) once.
    """
    r = np.asarray(residual_s, dtype=np.float64)
    regressors = [np.asarray(dtr_s, dtype=np.float64)] + [np.asarray(x, dtype=np.float64)
                                                          for x in extra_regressors]
    t_s = np.asarray(t_s, dtype=np.float64)
    t_s = t_s - np.nanmean(t_s)
    mask = np.isfinite(r) & np.all([np.isfinite(x) for x in regressors], axis=0)
    mask &= (mask.sum(axis=0) >= 3)[None, :]  # a satellite needs more points than its own parameters
    n_sat = int(np.count_nonzero(mask.any(axis=0)))
    n_obs = int(mask.sum())
    nan_fit = ConventionFit(np.nan, np.nan, np.nan, "none", n_sat, n_obs, np.nan, UNDETERMINED)
    if n_sat == 0 or n_obs < 10:
        return nan_fit
    try:
        coef, resid, normal = _solve(r, regressors, mask, t_s, epoch_datum, drift)
        if clip_sigma is not None:
            mad = 1.4826 * np.median(np.abs(resid - np.median(resid)))
            bad = np.abs(resid) > clip_sigma * max(mad, 1e-15)
            if np.any(bad):
                flat = np.flatnonzero(mask.ravel())
                mask = mask.copy()
                mask.ravel()[flat[bad]] = False
                coef, resid, normal = _solve(r, regressors, mask, t_s, epoch_datum, drift)
    except np.linalg.LinAlgError:
        return nan_fit
    n_obs = int(mask.sum())
    n_par = len(regressors) + mask.any(axis=0).sum() * (2 if drift else 1) \
        + (np.count_nonzero(mask.any(axis=1)) - 1 if epoch_datum else 0)
    dof = max(n_obs - n_par, 1)
    cov = np.linalg.inv(normal) * (resid @ resid) / dof
    formal = np.sqrt(np.diag(cov))
    columns = np.flatnonzero(mask.any(axis=0))
    replicas = []
    if columns.size >= MIN_SATELLITES_JACKKNIFE:
        method = f"jackknife over {columns.size} satellites"
        for j in columns:
            m = mask.copy()
            m[:, j] = False
            replicas.append(_solve(r, regressors, m, t_s, epoch_datum, drift)[0])
    else:
        rows = np.flatnonzero(mask.any(axis=1))
        blocks = np.array_split(rows, N_TIME_BLOCKS)
        method = f"jackknife over {len(blocks)} blocks of time"
        for block in blocks:
            m = mask.copy()
            m[block, :] = False
            if m.sum() >= 10:
                try:
                    replicas.append(_solve(r, regressors, m, t_s, epoch_datum, drift)[0])
                except np.linalg.LinAlgError:
                    pass
    if len(replicas) >= 2:
        rep = np.array(replicas)
        n = len(replicas)
        jack = np.sqrt((n - 1) / n * ((rep - rep.mean(axis=0)) ** 2).sum(axis=0))
    else:
        jack = np.full(len(regressors), np.nan)
        method = "none (too little data)"
    k, k_sigma = float(coef[0]), float(jack[0])
    return ConventionFit(k=k, k_sigma=k_sigma, k_sigma_formal=float(formal[0]), sigma_method=method,
                         n_sat=int(columns.size), n_obs=n_obs,
                         rms_residual_s=float(np.sqrt(np.mean(resid * resid))),
                         convention=convention_verdict(k, k_sigma),
                         coefficients=coef, coefficient_sigmas=jack)


def _per_column_fit(y, x, t, mask):
    """Columnwise LS of y on [1, t, x]; returns k per column (NaN when singular)."""
    w = mask.astype(np.float64)
    cols = [w, np.where(mask, t, 0.0), np.where(mask, x, 0.0)]
    yy = np.where(mask, y, 0.0)
    a = np.empty((y.shape[1], 3, 3))
    rhs = np.empty((y.shape[1], 3))
    for i in range(3):
        rhs[:, i] = (cols[i] * yy).sum(axis=0)
        for j in range(3):
            a[:, i, j] = (cols[i] * cols[j]).sum(axis=0)
    k = np.full(y.shape[1], np.nan)
    good = (w.sum(axis=0) >= 6) & (np.abs(np.linalg.det(a)) > 0)
    if np.any(good):
        k[good] = np.linalg.solve(a[good], rhs[good][..., None])[:, 2, 0]
    return k


def fit_convention_per_satellite(residual_s, dtr_s, t_s, n_blocks: int = N_TIME_BLOCKS):
    """Per-satellite k (offset + drift + k dtr), with a delete-one-block jackknife sigma.

    ``residual_s`` should already have the per-epoch datum removed.  Returns
    (k, k_sigma), each (n_sat,).
    """
    y = np.asarray(residual_s, dtype=np.float64)
    x = np.asarray(dtr_s, dtype=np.float64)
    t = np.broadcast_to((np.asarray(t_s, dtype=np.float64) - np.nanmean(t_s))[:, None], y.shape)
    mask = np.isfinite(y) & np.isfinite(x)
    # Scale the time column to keep the normal equations well conditioned.
    t = t / max(np.nanmax(np.abs(t)), 1.0)
    k = _per_column_fit(y, x, t, mask)
    blocks = np.array_split(np.arange(y.shape[0]), n_blocks)
    reps = []
    for block in blocks:
        m = mask.copy()
        m[block, :] = False
        reps.append(_per_column_fit(y, x, t, m))
    reps = np.array(reps)
    n = np.sum(np.isfinite(reps), axis=0)
    with np.errstate(invalid="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        mean = np.nanmean(np.where(np.isfinite(reps), reps, np.nan), axis=0) if reps.size else k
        sigma = np.sqrt((n - 1) / np.maximum(n, 1) * np.nansum((reps - mean) ** 2, axis=0))
    sigma = np.where(n >= 2, sigma, np.nan)
    return k, sigma
