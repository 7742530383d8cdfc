"""Does a receiver log need the periodic relativistic term?  Fit its factor k.

With ionosphere-free pseudoranges P, geometric range rho at transmit time
(Earth rotation and Shapiro included), troposphere T, group delay D and the
broadcast clock polynomial dt_poly,

    y = P - rho - T - D + c dt_poly,

and the raw pseudoranges carry the satellites' true clocks, which include the
periodic term dt_r = F e sqrt(A) sin E (IS-GPS-200 20.3.3.3.3.1).  So

    y + k c dt_r = b(epoch) + o(satellite) + noise

holds with k = 1 when the term is real and applied as the specification says.
b is the receiver clock per epoch; o absorbs per-satellite code biases and
broadcast-orbit/clock offsets (without it k drifts by a few hundredths).

Solution: the epoch effects are removed exactly by subtracting epoch means
(Frisch-Waugh-Lovell), then k and the satellite offsets come from one dense
least-squares problem (n x (1 + n_sat)).  Outliers beyond ``reject_sigma``
robust standard deviations (1.4826 x MAD) are dropped, iterating.

Sigma: the formal least-squares sigma assumes independent residuals, but 30-s
code residuals are correlated over many minutes (multipath), so it is several
times too small.  The reported ``sigma`` is a delete-one-satellite jackknife
(Efron & Stein 1981; sigma^2 = (S-1)/S sum (k_(s) - mean)^2), which respects
the correlation within a satellite's passes.
"""

from __future__ import annotations

import numpy as np

HYPOTHESES = {"applied": 1.0, "omitted": 0.0, "reversed": -1.0, "doubled": 2.0}


def _group_demean(values, groups, n_groups):
    """Subtract group means along axis 0 (values ``(n,)`` or ``(n, m)``)."""
    counts = np.bincount(groups, minlength=n_groups).astype(float)
    if values.ndim == 1:
        means = np.bincount(groups, weights=values, minlength=n_groups) / np.maximum(counts, 1)
        return values - means[groups]
    out = np.empty_like(values)
    for j in range(values.shape[1]):
        means = np.bincount(groups, weights=values[:, j], minlength=n_groups) / np.maximum(counts, 1)
        out[:, j] = values[:, j] - means[groups]
    return out


def _solve(y, x, epoch, sat, fixed_k=None):
    """(k, formal sigma, residuals) of y = -k x + b[epoch] + o[sat]; ``fixed_k`` fixes k."""
    n_ep, n_sat = epoch.max() + 1, sat.max() + 1
    dummies = np.zeros((y.size, n_sat))
    dummies[np.arange(y.size), sat] = 1.0
    yt = _group_demean(y, epoch, n_ep)
    dt = _group_demean(dummies, epoch, n_ep)
    if fixed_k is None:
        xt = _group_demean(-x, epoch, n_ep)
        design = np.column_stack([xt, dt])
        beta, *_ = np.linalg.lstsq(design, yt, rcond=None)
        resid = yt - design @ beta
        k = beta[0]
    else:
        target = yt + fixed_k * _group_demean(x, epoch, n_ep)
        beta, *_ = np.linalg.lstsq(dt, target, rcond=None)
        resid = target - dt @ beta
        k, design = fixed_k, None
    dof = max(y.size - np.unique(epoch).size - n_sat, 1)
    formal = np.nan
    if design is not None:
        s2 = resid @ resid / dof
        cov = np.linalg.pinv(design.T @ design)
        formal = float(np.sqrt(s2 * cov[0, 0]))
    return float(k), formal, resid


def _dense_ids(values):
    _, ids = np.unique(values, return_inverse=True)
    return ids.ravel()


def fit_periodic_factor(residual_m, periodic_m, epoch, sv, reject_sigma: float = 5.0,
                        jackknife: bool = True) -> dict:
    """Fit k in ``residual_m + k periodic_m = b(epoch) + o(sv) + noise`` (1-D arrays ``(n,)``).

    ``residual_m`` is y of the module text, ``periodic_m`` = c dt_r.  Returns ``k``,
    ``sigma`` (jackknife over satellites, NaN with fewer than 3), ``sigma_formal``,
    ``rms_m`` {applied, omitted, reversed, doubled} (residual RMS with k fixed to 1, 0, -1, 2),
    ``rms_fit_m``, ``n_obs``, ``n_rejected``, ``n_sat``, ``n_epochs``.
    """
    y = np.asarray(residual_m, float)
    x = np.asarray(periodic_m, float)
    ok = np.isfinite(y) & np.isfinite(x)
    epoch, sv = np.asarray(epoch)[ok], np.asarray(sv)[ok]
    y, x = y[ok], x[ok]
    keep = np.ones(y.size, bool)
    for _ in range(10):                                   # outlier rejection, iterated
        e, s = _dense_ids(epoch[keep]), _dense_ids(sv[keep])
        k, formal, resid = _solve(y[keep], x[keep], e, s)
        sigma = 1.4826 * np.median(np.abs(resid - np.median(resid)))
        bad = np.abs(resid) > reject_sigma * max(sigma, 1e-3)
        if not bad.any():
            break
        idx = np.flatnonzero(keep)
        keep[idx[bad]] = False
    y, x, epoch, sv = y[keep], x[keep], epoch[keep], sv[keep]
    e, s = _dense_ids(epoch), _dense_ids(sv)
    k, formal, resid = _solve(y, x, e, s)
    rms = {name: float(np.sqrt(np.mean(_solve(y, x, e, s, fixed_k=kk)[2] ** 2)))
           for name, kk in HYPOTHESES.items()}
    names = np.unique(sv)
    sigma_jk = np.nan
    if jackknife and names.size >= 3:
        ks = []
        from gnssrel.progress import bar

        for name in bar(names, "jackknife over satellites"):  # delete-one-satellite jackknife
            m = sv != name
            ks.append(_solve(y[m], x[m], _dense_ids(epoch[m]), _dense_ids(sv[m]))[0])
        ks = np.asarray(ks)
        sigma_jk = float(np.sqrt((names.size - 1) / names.size * np.sum((ks - ks.mean()) ** 2)))
    return {"k": k, "sigma": sigma_jk, "sigma_formal": formal, "rms_m": rms,
            "rms_fit_m": float(np.sqrt(np.mean(resid**2))), "n_obs": int(y.size),
            "n_rejected": int((~keep).sum()), "n_sat": int(names.size),
            "n_epochs": int(np.unique(epoch).size)}


DETERMINED_SIGMA = 0.25
"""A k whose jackknife sigma exceeds this cannot tell "applied" (1) from "omitted" (0) at 4 sigma:
reported, with status "undetermined"."""


def relativity_k(corrections, elevation_mask_deg: float = 10.0, systems=None, jackknife: bool = True) -> dict:
    """Per-system k fit from an :func:`gnssrel.audit.corrections.observation_corrections` table.

    Uses ionosphere-free codes only (``code`` containing ``+``): a single-frequency code
    carries the ionosphere, whose model error would leak into k.  Each system's entry adds
    ``expected_k``: 1 where the user adds the periodic term to the clock used, 0 where that
    clock already holds it (GLONASS broadcast, ``periodic_in_clock``; GLONASS ICD convention,
    REFERENCE-CHECKS 3.3), and ``status``: "consistent" (|k - expected| <= 3 sigma),
    "inconsistent", or "undetermined: ..." (sigma above :data:`DETERMINED_SIGMA` or too few
    satellites for a jackknife).
    """
    from gnssrel.constants import C_M_S

    df = corrections
    out = {}
    for system in sorted(df["system"].unique()):
        if systems and system not in systems:
            continue
        m = ((df["system"] == system) & (df["elevation_deg"] >= elevation_mask_deg)
             & df["code"].str.contains("+", regex=False)).to_numpy()
        m = m & np.isfinite(df["satellite_clock_s"].to_numpy())
        if m.sum() < 20:
            continue
        d = df.loc[m]
        y = (d["pseudorange_m"] - d["geometric_range_m"] - d["shapiro_m"] - d["troposphere_m"]
             - d["group_delay_m"] + C_M_S * d["satellite_clock_s"]).to_numpy()
        fit = fit_periodic_factor(y, C_M_S * d["periodic_s"].to_numpy(),
                                  d["time"].to_numpy(), d["sv"].to_numpy(), jackknife=jackknife)
        fit["expected_k"] = 0.0 if d["periodic_in_clock"].to_numpy().all() else 1.0
        fit["status"] = _status(fit)
        out[system] = fit
    return out


def _status(fit: dict) -> str:
    sigma = fit["sigma"]
    if not np.isfinite(sigma):
        return f"undetermined: {fit['n_sat']} satellites, too few for a jackknife sigma"
    if sigma > DETERMINED_SIGMA:
        return (f"undetermined: sigma {sigma:.2f} > {DETERMINED_SIGMA} (the periodic term is too small "
                f"or too short-lived in these data to be separated from the clock and offsets)")
    return "consistent" if abs(fit["k"] - fit["expected_k"]) <= 3.0 * sigma else "inconsistent"
