"""Fault detection and exclusion, gates and dilution of precision of the single-point fixes.

Every function works on all epochs at once (observations flat, ``epoch`` indexing them).

Residual test (common practice for receiver autonomous integrity; e.g. Parkinson & Axelrad 1988,
from memory).  At each epoch the weighted sum of squared residuals

    T = sum_i w_i r_i^2,   w_i = 1 / sigma_i^2 (the weight model of the fix)

follows a chi-square law with n - m degrees of freedom (n observations used, m unknowns
estimated) when the observations hold no fault and the sigmas are right.  The epoch fails the
test when T > s0^2 chi2_{1-P_fa}(n - m), P_fa the false-alarm probability
(:data:`DEFAULT_FALSE_ALARM` = 1e-3 per epoch unless given).  s0^2 is the variance of unit
weight: the weight models give relative sigmas that are right for no particular receiver (a
geodetic receiver's code is ten times less noisy than a phone's), so by default s0^2 is
estimated from the log itself, robustly: the median over the epochs of T / chi2_0.5(n - m),
which the few faulty epochs the test looks for cannot move.  A number given instead fixes it
(1.0: trust the a-priori sigmas).

Exclusion: while an epoch fails and keeps redundancy after one more exclusion (n - 1 - m >= 1,
and n - 1 >= the minimum-satellite gate), the observation with the largest normalized
residual w_i r_i^2 / (1 - h_i) (h_i its leverage, w_i a_i^T N^-1 a_i) is excluded and the epoch
solved again.

Dilution of precision: Q = (A^T A)^-1 of the unweighted design of the observations used
(unit line of sight and clock columns), its position block turned to east/north/up at the
fix: GDOP = sqrt(Q_ee + Q_nn + Q_uu + Q_tt) (t the receiver clock of the first system),
PDOP = sqrt(Q_ee + Q_nn + Q_uu), HDOP = sqrt(Q_ee + Q_nn), VDOP = sqrt(Q_uu).  The DOP gate
(:data:`DEFAULT_MAX_PDOP` = 10, common practice for code fixes) leaves epochs above it
without a position.
"""

from __future__ import annotations

import numpy as np
from scipy.stats import chi2

from gnssrel import geodesy

DEFAULT_FALSE_ALARM = 1e-3
"""False-alarm probability of the residual test, per epoch (our choice; common values 1e-3 to 1e-5)."""
DEFAULT_MAX_PDOP = 10.0
"""Epochs whose PDOP exceeds this get no position (common practice for code fixes)."""
DEFAULT_MIN_SATELLITES = 4
"""Fewer observations than this in a fix: no position (and never more than the unknowns allow)."""
DEFAULT_MAX_EXCLUSIONS = 10
"""Exclusion rounds of the residual test at most, per epoch."""

EXCLUDED = "excluded by the residual test"


def chi2_threshold(dof, false_alarm: float) -> np.ndarray:
    """chi2_{1 - false_alarm}(dof) per epoch; NaN where dof < 1."""
    dof = np.asarray(dof, dtype=float)
    out = np.full(dof.shape, np.nan)
    ok = dof >= 1
    out[ok] = chi2.isf(false_alarm, dof[ok])
    return out


def per_epoch_sum(values, epoch, n_epoch) -> np.ndarray:
    """Sum of ``values`` per epoch (NaN counted as 0)."""
    return np.bincount(epoch, weights=np.where(np.isfinite(values), values, 0.0), minlength=n_epoch)


def variance_of_unit_weight(statistic, dof) -> float:
    """Robust s0^2: the median over epochs with dof >= 1 of T / chi2_0.5(dof); 1.0 without any."""
    ok = (np.asarray(dof) >= 1) & np.isfinite(statistic)
    if not ok.any():
        return 1.0
    value = float(np.median(statistic[ok] / chi2.median(np.asarray(dof)[ok])))
    return value if value > 0 else 1.0


def leverage(design, weight, used, epoch, n_inverse) -> np.ndarray:
    """h = w a^T N^-1 a per observation (0 where unused): 1 - h is its redundancy number."""
    a = np.where(used[:, None], design, 0.0)
    return np.where(used, weight * np.einsum("ni,nij,nj->n", a, n_inverse[epoch], a), 0.0)


def normalized_residuals(resid, design, weight, used, epoch, n_inverse) -> np.ndarray:
    """w r^2 / (1 - h) per observation (NaN where unused); ``n_inverse`` ``(n_epoch, m, m)``."""
    h = leverage(design, weight, used, epoch, n_inverse)
    out = weight * resid**2 / np.clip(1.0 - h, 1e-6, None)
    return np.where(used, out, np.nan)


def worst_of_epoch(values, epoch) -> np.ndarray:
    """Index of the largest finite value of each epoch that has one."""
    ok = np.flatnonzero(np.isfinite(values))
    order = ok[np.lexsort((values[ok], epoch[ok]))]
    last = np.flatnonzero(np.diff(np.append(epoch[order], -1)) != 0)   # last of each epoch run
    return order[last]


def dilution_of_precision(design, used, epoch, n_epoch, position_ecef_m) -> dict[str, np.ndarray]:
    """GDOP, PDOP, HDOP, VDOP per epoch from the unweighted design rows used (see the module text).

    ``design`` ``(n, m)``: columns x, y, z (minus the unit line of sight), then the clocks;
    ``position_ecef_m`` ``(n_epoch, 3)``; NaN where an epoch has fewer rows than unknowns."""
    m = design.shape[1]
    a = np.where(used[:, None], design, 0.0)
    n_mat = np.empty((n_epoch, m, m))
    for i in range(m):
        for j in range(i, m):
            n_mat[:, i, j] = n_mat[:, j, i] = np.bincount(epoch, weights=a[:, i] * a[:, j], minlength=n_epoch)
    k = np.arange(m)
    empty = n_mat[:, k, k] == 0.0
    empty[:, :4] = False                    # unused extra clock columns are held, not estimated
    e_idx, c_idx = np.nonzero(empty)
    n_mat[e_idx, c_idx, c_idx] = 1.0
    n_rows = np.bincount(epoch, weights=used.astype(float), minlength=n_epoch)
    ok = (n_rows >= m - empty.sum(axis=1)) & np.all(np.isfinite(position_ecef_m), axis=1)
    ok[ok] &= np.linalg.cond(n_mat[ok]) < 1e12
    out = {name: np.full(n_epoch, np.nan) for name in ("gdop", "pdop", "hdop", "vdop")}
    if not ok.any():
        return out
    q = np.linalg.inv(n_mat[ok])
    lat, lon, _ = geodesy.ecef_to_geodetic(position_ecef_m[ok])
    rot = geodesy.enu_rotation(lat, lon)
    q_enu = np.einsum("nij,njk,nlk->nil", rot, q[:, :3, :3], rot)
    e, n, u = q_enu[:, 0, 0], q_enu[:, 1, 1], q_enu[:, 2, 2]
    out["gdop"][ok] = np.sqrt(e + n + u + q[:, 3, 3])
    out["pdop"][ok] = np.sqrt(e + n + u)
    out["hdop"][ok] = np.sqrt(e + n)
    out["vdop"][ok] = np.sqrt(u)
    return out
