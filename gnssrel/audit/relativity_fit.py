"""Does a receiver log need the periodic relativistic term?  Fit its factor k.

With ionosphere-free pseudoranges P, geometric range rho at transmit time
(Earth rotation and Shapiro included), troposphere T, group delay D and the
broadcast clock polynomial dt_poly,

    y = P - rho - T - D + c dt_poly,

and the raw pseudoranges carry the satellites' true clocks, which include the
periodic term dt_r = F e sqrt(A) sin E (IS-GPS-200 20.3.3.3.3.1).  So

    y + k c dt_r = b(epoch) + o(satellite) + noise

holds with k = 1 when the term is real and applied as the specification says.
A single-frequency code enters with its broadcast ionosphere model I subtracted from y too
(:func:`gnssrel.audit.ionosphere.broadcast_delay_m`); the model's error, taken as half of I,
is systematic, and its effect on k is added to the sigma (:func:`fit_periodic_factor`).
b is the receiver clock per epoch; o absorbs per-satellite code biases and
broadcast-orbit/clock offsets (without it k drifts by a few hundredths).

Solution, by normal equations on sums per (epoch, satellite) cell:

1. the epoch effects b are removed exactly by subtracting epoch means
   (Frisch-Waugh-Lovell), which the cell sums do for any subset of satellites;
2. the satellite offsets o are eliminated by a Schur complement: with D the
   epoch-demeaned satellite indicators, x~ and y~ the demeaned x and y,
   A = D'D = diag(n_s) - N' diag(1/n_e) N (N: counts per cell),
   k = -(x~'y~ - (D'x~)' A+ (D'y~)) / (x~'x~ - (D'x~)' A+ (D'x~)).
   A is n_sat x n_sat and singular along (1, ..., 1) (a constant shared by all
   offsets is an epoch effect), which k and the residuals do not see; the
   solve removes that direction (:func:`_offsets_solve`).

The result equals a dense least-squares solve over all epoch and satellite
columns to ~1e-14 (tests/test_relativity_fit.py).  The cost is one pass over the
observations (``np.bincount``) plus O(n_epoch n_sat^2) per solve, so the
jackknife below, one solve per satellite without a new pass, stays cheap: a full
30-s GPS day (3e4 observations, 31 satellites) takes ~0.2 s of CPU with its
jackknife, against ~8 s for the former dense solves (benchmarks/bench_audit.py).
Outliers beyond ``reject_sigma`` robust standard deviations (1.4826 x MAD) are
dropped, iterating.

Sigma: the formal least-squares sigma assumes independent residuals, but 30-s
code residuals are correlated over many minutes (multipath), so it is several
times too small.  The reported ``sigma`` is a delete-one-satellite jackknife
(Efron & Stein 1981; sigma^2 = (S-1)/S sum (k_(s) - mean)^2), which respects
the correlation within a satellite's passes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from gnssrel.audit.ionosphere import MODEL_RMS_FRACTION
from gnssrel.constants import C_M_S

HYPOTHESES = {"applied": 1.0, "omitted": 0.0, "reversed": -1.0, "doubled": 2.0}

_PINV_RCOND = 1e-10
"""Relative singular-value cut where the offsets' normal matrix needs a pseudo-inverse (satellites
never seen with another, or groups of satellites that never share an epoch): the null directions
sit at ~1e-16 of the largest singular value, real ones far above 1e-10."""


@dataclass
class _CellSums:
    """Sufficient statistics of y and x, centred once per epoch, summed per (epoch, satellite)."""

    count: np.ndarray      # (n_epoch, n_sat) observations per cell
    x: np.ndarray          # (n_epoch, n_sat) sum of centred x per cell
    y: np.ndarray          # (n_epoch, n_sat) sum of centred y per cell
    xx: np.ndarray         # (n_sat,) sum of centred x^2 per satellite
    xy: np.ndarray         # (n_sat,) sum of centred x y per satellite
    xc: np.ndarray         # (n,) centred x of each observation
    yc: np.ndarray         # (n,) centred y of each observation


def _cell_sums(y, x, epoch, sat, n_ep, n_sat) -> _CellSums:
    """Cell sums of ``y``, ``x`` (``(n,)``) on integer ids ``epoch`` < n_ep, ``sat`` < n_sat.

    Centring on the epoch means first keeps the sums small (y carries the receiver clock,
    up to hundreds of km), so the later re-centring after deleting a satellite loses nothing.
    """
    per_epoch = np.maximum(np.bincount(epoch, minlength=n_ep), 1)
    yc = y - (np.bincount(epoch, weights=y, minlength=n_ep) / per_epoch)[epoch]
    xc = x - (np.bincount(epoch, weights=x, minlength=n_ep) / per_epoch)[epoch]
    cell, size = epoch * n_sat + sat, n_ep * n_sat
    shape = (n_ep, n_sat)
    return _CellSums(np.bincount(cell, minlength=size).reshape(shape).astype(float),
                     np.bincount(cell, weights=xc, minlength=size).reshape(shape),
                     np.bincount(cell, weights=yc, minlength=size).reshape(shape),
                     np.bincount(sat, weights=xc * xc, minlength=n_sat),
                     np.bincount(sat, weights=xc * yc, minlength=n_sat), xc, yc)


def _offsets_solve(a, rhs):
    """A solution z of ``a z = rhs`` for the offsets' normal matrix ``a`` (n_sat, n_sat), ``rhs``
    (n_sat, m) with columns orthogonal to (1, ..., 1), as every D'v is.

    ``a`` is singular along (1, ..., 1) only, when every satellite shares epochs with others,
    directly or through others: adding c 11' removes that direction without changing the solution
    (1'a = 0 and 1'rhs = 0 give 1'z = 0), and one LU solve follows.  Any other singularity
    shows in the residual and takes the pseudo-inverse.  k and the residuals do not depend on
    which solution: the null directions of ``a`` are constant shifts absorbed by the epochs.
    """
    size = a.shape[0]
    shift = max(np.trace(a), 1.0) / size ** 2
    try:
        z = np.linalg.solve(a + shift, rhs)
        if np.all(np.abs(a @ z - rhs) <= 1e-9 * (np.abs(rhs).max() + 1e-300)):
            return z
    except np.linalg.LinAlgError:
        pass
    return np.linalg.pinv(a, rcond=_PINV_RCOND, hermitian=True) @ rhs


def _solve_sums(cs: _CellSums, active):
    """k, its Schur complement x~'M x~, and the pieces for the offsets, over satellites ``active``.

    Returns (k, schur, zx, zy, inv_n_epoch, counts): offsets for a fixed k are ``zy + k zx``.
    """
    n = cs.count[:, active]
    n_e = n.sum(axis=1)
    inv = np.divide(1.0, n_e, out=np.zeros_like(n_e), where=n_e > 0)
    x_e, y_e = cs.x[:, active].sum(axis=1), cs.y[:, active].sum(axis=1)
    sxx = cs.xx[active].sum() - np.sum(x_e * x_e * inv)
    sxy = cs.xy[active].sum() - np.sum(x_e * y_e * inv)
    # einsum rather than BLAS: these products are small, and threaded BLAS on a busy machine
    # spends more time waking its threads than computing (measured 30x on 2880 x 31)
    bx = cs.x[:, active].sum(axis=0) - np.einsum("e,es->s", x_e * inv, n)     # D'x~
    by = cs.y[:, active].sum(axis=0) - np.einsum("e,es->s", y_e * inv, n)     # D'y~
    a = np.diag(n.sum(axis=0)) - np.einsum("es,et->st", n * inv[:, None], n)  # D'D
    zx, zy = _offsets_solve(a, np.column_stack([bx, by])).T
    schur = sxx - bx @ zx
    k = -(sxy - bx @ zy) / schur if schur > 0 else np.nan
    return k, schur, zx, zy, inv, n


def _residuals(cs: _CellSums, epoch, sat, k, zx, zy, inv, n):
    """Residuals of y + k x = b[epoch] + o[sat] (all satellites active), ``(n,)``."""
    offsets = zy + k * zx
    return cs.yc + k * cs.xc - offsets[sat] + (np.einsum("es,s->e", n, offsets) * inv)[epoch]


def _solve(y, x, epoch, sat, fixed_k=()):
    """(k, formal sigma, residuals) of y = -k x + b[epoch] + o[sat], and the residuals with k
    fixed to each of ``fixed_k``.  ``epoch`` and ``sat`` are dense integer ids (every id used)."""
    n_ep, n_sat = int(epoch.max()) + 1, int(sat.max()) + 1
    cs = _cell_sums(y, x, epoch, sat, n_ep, n_sat)
    k, schur, zx, zy, inv, n = _solve_sums(cs, np.ones(n_sat, bool))
    resid = _residuals(cs, epoch, sat, k, zx, zy, inv, n)
    dof = max(y.size - n_ep - n_sat, 1)
    formal = float(np.sqrt(resid @ resid / dof / schur)) if schur > 0 else np.nan
    fixed = [_residuals(cs, epoch, sat, kk, zx, zy, inv, n) for kk in fixed_k]
    return float(k), formal, resid, fixed


def _dense_ids(values):
    _, ids = np.unique(values, return_inverse=True)
    return ids.ravel()


def _jackknife_sigma(y, x, epoch, sat) -> float:
    """Delete-one-satellite jackknife sigma of k (dense ids; NaN with fewer than 3 satellites)."""
    n_ep, n_sat = int(epoch.max()) + 1, int(sat.max()) + 1
    if n_sat < 3:
        return np.nan
    cs = _cell_sums(y, x, epoch, sat, n_ep, n_sat)
    ks = np.empty(n_sat)
    for s in range(n_sat):                       # one small solve per satellite, no pass over the data
        active = np.ones(n_sat, bool)
        active[s] = False
        ks[s] = _solve_sums(cs, active)[0]
    return float(np.sqrt((n_sat - 1) / n_sat * np.sum((ks - ks.mean()) ** 2)))


def fit_periodic_factor(residual_m, periodic_m, epoch, sv, reject_sigma: float = 5.0,
                        jackknife: bool = True, model_error_m=None) -> dict:
    """Fit k in ``residual_m + k periodic_m = b(epoch) + o(sv) + noise`` (1-D arrays ``(n,)``).

    ``residual_m`` is y of the module text, ``periodic_m`` = c dt_r.  Returns ``k``,
    ``sigma`` (jackknife over satellites, NaN with fewer than 3), ``sigma_formal``,
    ``rms_m`` {applied, omitted, reversed, doubled} (residual RMS with k fixed to 1, 0, -1, 2),
    ``rms_fit_m``, ``n_obs``, ``n_rejected``, ``n_sat``, ``n_epochs``.

    ``model_error_m``: ``(n,)`` one-sigma error of a correction inside ``residual_m`` whose error
    is systematic (the broadcast ionosphere model of single-frequency codes, a fixed fraction of
    the delay).  k is linear in y, so such an error moves k by the k fitted to ``model_error_m``
    alone (same observations, same effects); its absolute value is returned as
    ``sigma_model`` and added in quadrature to ``sigma``.
    """
    y = np.asarray(residual_m, float)
    x = np.asarray(periodic_m, float)
    err = np.zeros(y.shape) if model_error_m is None else np.asarray(model_error_m, float)
    ok = np.isfinite(y) & np.isfinite(x) & np.isfinite(err)
    epoch, sv = np.asarray(epoch)[ok], np.asarray(sv)[ok]
    y, x, err = y[ok], x[ok], err[ok]
    epoch_id, sat_id = _dense_ids(epoch), _dense_ids(sv)
    keep = np.ones(y.size, bool)
    for _ in range(10):                                   # outlier rejection, iterated
        e, s = _dense_ids(epoch_id[keep]), _dense_ids(sat_id[keep])
        k, formal, resid, _ = _solve(y[keep], x[keep], e, s)
        sigma = 1.4826 * np.median(np.abs(resid - np.median(resid)))
        bad = np.abs(resid) > reject_sigma * max(sigma, 1e-3)
        if not bad.any() or bad.all():   # all beyond the bound: nothing left to fit (campaign 1:486),
            break                        # the fit stays, its jackknife sigma says "undetermined"
        idx = np.flatnonzero(keep)
        keep[idx[bad]] = False
    y, x, err, epoch_id, sat_id = y[keep], x[keep], err[keep], epoch_id[keep], sat_id[keep]
    e, s = _dense_ids(epoch_id), _dense_ids(sat_id)
    k, formal, resid, fixed = _solve(y, x, e, s, fixed_k=HYPOTHESES.values())
    rms = {name: float(np.sqrt(np.mean(r**2))) for name, r in zip(HYPOTHESES, fixed)}
    n_sat = int(s.max()) + 1
    sigma_jk = _jackknife_sigma(y, x, e, s) if jackknife else np.nan
    sigma_model = abs(_solve(err, x, e, s)[0]) if np.any(err) else 0.0
    sigma_model = sigma_model if np.isfinite(sigma_model) else np.nan
    return {"k": k, "sigma": float(np.hypot(sigma_jk, sigma_model)), "sigma_jackknife": sigma_jk,
            "sigma_model": float(sigma_model), "sigma_formal": formal, "rms_m": rms,
            "rms_fit_m": float(np.sqrt(np.mean(resid**2))), "n_obs": int(y.size),
            "n_rejected": int((~keep).sum()), "n_sat": n_sat,
            "n_epochs": int(e.max()) + 1}


DETERMINED_SIGMA = 0.25
"""A k whose jackknife sigma exceeds this cannot tell "applied" (1) from "omitted" (0) at 4 sigma:
reported, with status "undetermined"."""

GROSS_RMS_M = 50.0
"""A fit whose residual RMS exceeds this (m) says so in its status: the codes themselves are broken
(the periodic term is at most ~14 m: c x 46 ns for e = 0.02, derived)."""

MIN_OBSERVATIONS = 20
"""Fewer observations above the mask than this: no k fit for the system."""


def _fit_mask(df, system, elevation_mask_deg):
    """Observations of ``system`` a k fit can use: above the mask, with a satellite clock, and an
    ionosphere-free code or a single-frequency code with a broadcast ionosphere model."""
    return ((df["system"] == system) & (df["elevation_deg"] >= elevation_mask_deg)).to_numpy() \
        & np.isfinite(df["satellite_clock_s"].to_numpy()) & np.isfinite(df["ionosphere_m"].to_numpy())


def relativity_k(corrections, elevation_mask_deg: float = 10.0, systems=None, jackknife: bool = True) -> dict:
    """Per-system k fit from an :func:`gnssrel.audit.corrections.observation_corrections` table.

    Uses ionosphere-free codes (``code`` containing ``+``) and single-frequency codes corrected
    by a broadcast ionosphere model (``ionosphere_m`` finite; :func:`gnssrel.audit.ionosphere.model_for`):
    their model error, :data:`gnssrel.audit.ionosphere.MODEL_RMS_FRACTION` of the delay, enters
    the sigma as a systematic term (``sigma_model``, see :func:`fit_periodic_factor`).  Each
    system's entry adds ``expected_k``: 1 where the user adds the periodic term to the clock used,
    0 where that clock already holds it (GLONASS broadcast, ``periodic_in_clock``; GLONASS ICD
    convention, REFERENCE-CHECKS 3.3), ``frequencies`` ("dual" or "single"), and ``status``:
    "consistent" (|k - expected| <= 3 sigma), "inconsistent", or "undetermined: ..." (sigma above
    :data:`DETERMINED_SIGMA` or too few satellites for a jackknife).  Systems with no fit at all:
    :func:`why_no_k`.
    """
    df = corrections
    out = {}
    for system in sorted(df["system"].unique()):
        if systems and system not in systems:
            continue
        m = _fit_mask(df, system, elevation_mask_deg)
        if m.sum() < MIN_OBSERVATIONS:
            continue
        d = df.loc[m]
        y = (d["pseudorange_m"] - d["geometric_range_m"] - d["shapiro_m"] - d["troposphere_m"]
             - d["ionosphere_m"] - d["group_delay_m"] + C_M_S * d["satellite_clock_s"]).to_numpy()
        model_error = MODEL_RMS_FRACTION * d["ionosphere_m"].to_numpy()
        fit = fit_periodic_factor(y, C_M_S * d["periodic_s"].to_numpy(),
                                  d["time"].to_numpy(), d["sv"].to_numpy(), jackknife=jackknife,
                                  model_error_m=model_error)
        fit["expected_k"] = 0.0 if d["periodic_in_clock"].to_numpy().all() else 1.0
        fit["frequencies"] = "dual" if d["code"].str.contains("+", regex=False).all() else "single"
        fit["status"] = _status(fit)
        out[system] = fit
    return out


def why_no_k(corrections, fits: dict, elevation_mask_deg: float = 10.0, systems=None) -> dict[str, str]:
    """{system: why it has no k fit} for every system of the table that :func:`relativity_k`
    did not fit (the first reason that applies, with the numbers)."""
    df = corrections
    out = {}
    for system in sorted(df["system"].unique()):
        if (systems and system not in systems) or system in fits:
            continue
        mine = (df["system"] == system).to_numpy()
        clock = mine & np.isfinite(df["satellite_clock_s"].to_numpy())
        above = clock & (df["elevation_deg"] >= elevation_mask_deg).to_numpy()
        modelled = above & np.isfinite(df["ionosphere_m"].to_numpy())
        codes = ", ".join(sorted(df.loc[mine, "code"].unique()))
        if not clock.any():
            out[system] = (f"no satellite orbit and clock for any of its {int(mine.sum())} pseudoranges "
                           "(see the accounting)")
        elif not above.any():
            out[system] = f"no observation above the {elevation_mask_deg:g} deg elevation mask"
        elif not modelled.any():
            out[system] = (f"single-frequency code ({codes}) and no broadcast ionosphere coefficients in the "
                           "navigation headers: the uncorrected delay would leak into k")
        else:
            out[system] = (f"{int(modelled.sum())} usable observations ({codes}, above the "
                           f"{elevation_mask_deg:g} deg mask, with clock and ionosphere), {MIN_OBSERVATIONS} needed")
    return out


def _status(fit: dict) -> str:
    sigma = fit["sigma"]
    if not np.isfinite(sigma):
        return f"undetermined: {fit['n_sat']} satellites, too few for a jackknife sigma"
    if sigma > DETERMINED_SIGMA:
        span = "" if fit.get("sigma_model", 0.0) <= fit.get("sigma_jackknife", np.inf) else \
            ", mostly the ionosphere model's error"
        if fit.get("rms_fit_m", 0.0) > GROSS_RMS_M:
            span += (f"; the codes' residual RMS is {fit['rms_fit_m']:.0f} m, far above any relativistic term: "
                     "gross code errors")
        return (f"undetermined: sigma {sigma:.2f} > {DETERMINED_SIGMA} (the periodic term is too small "
                f"or too short-lived in these data to be separated from the clock and offsets{span})")
    return "consistent" if abs(fit["k"] - fit["expected_k"]) <= 3.0 * sigma else "inconsistent"
