"""Batch least squares over the whole log, the receiver clock eliminated epoch by epoch.

Unknowns: the 3 coordinates of the antenna reference point, the wet zenith delay as a
piecewise-linear function of time (nodes every ``zwd_node_s``, default 2 h), one float ambiguity
per arc (phase rows), one code bias per further system (inter-system code bias; the phase one is
absorbed by the ambiguities), optionally the factor of the periodic term per system, and one
receiver clock per epoch common to code and phase (its constant code-phase difference goes into
the ambiguities).  For a static point the batch solution is exact; no process noise is needed.

Clock elimination (a block operation over all epochs at once): with W diagonal and an all-ones
clock column per epoch e, the reduced normal equations are

    N = A^T W A - B^T diag(1/s) B,   b = A^T W y - B^T (S W y / s),
    B = S W A,  s = S W 1

with S the (epoch x row) incidence matrix (scipy.sparse).  The normal equations add up over
disjoint sets of epochs, so they are formed per block of epochs (default one hour) once, and
the day, its parts (realistic sigma) and its growing spans (convergence) are sums of blocks.
The observed-minus-computed vectors of the term switches are further right-hand sides of the
same matrices: each switched term costs one extra solve with the same factor.

Weights: sigma = sigma0 / sin(elevation), sigma0 = 3 mm phase and 0.3 m code before the
ionosphere-free combination, times its noise gain sqrt(g1^2 + g2^2) (about 3; common practice).
"""

from __future__ import annotations

import numpy as np
import scipy.linalg
import scipy.sparse as sp

SIGMA_PHASE_M = 0.003
SIGMA_CODE_M = 0.3


def design(obs: dict, geo: dict, t_s: np.ndarray, zwd_node_s: float, k_systems=()) -> tuple[sp.csr_matrix, dict]:
    """Sparse design matrix (2n x p): rows 0..n-1 code, n..2n-1 phase; and the column layout
    {"position": slice, "zwd": slice, "isb": {system: col}, "k": {system: col}, "ambiguity": slice}.
    ``k_systems``: systems whose periodic factor gets a column (partial: -periodic term, metres)."""
    n = obs["sv"].size
    systems = list(dict.fromkeys(np.sort(obs["system"])))
    t0 = float(t_s.min()) if n else 0.0
    n_nodes = int(np.floor((float(t_s.max()) - t0) / zwd_node_s)) + 2 if n else 1
    u = (t_s - t0) / zwd_node_s
    j = np.minimum(np.floor(u).astype(np.int64), n_nodes - 2) if n_nodes > 1 else np.zeros(n, np.int64)
    frac = u - j
    col = 3
    layout = {"position": slice(0, 3), "zwd": slice(col, col + n_nodes)}
    col += n_nodes
    layout["isb"] = {s: col + i for i, s in enumerate(systems[1:])}
    col += len(systems) - 1
    layout["k"] = {s: col + i for i, s in enumerate(k_systems)}
    col += len(k_systems)
    n_arcs = int(obs["arc"].max()) + 1 if n else 0
    layout["ambiguity"] = slice(col, col + n_arcs)
    p = col + n_arcs
    rows, cols, vals = [], [], []
    r = np.arange(n)
    for block in (0, n):                                   # code rows, then phase rows
        rr = r + block
        for a in range(3):
            rows.append(rr), cols.append(np.full(n, a)), vals.append(-geo["unit_los"][:, a])
        rows += [rr, rr]
        cols += [3 + j, 3 + np.minimum(j + 1, n_nodes - 1)]
        vals += [geo["wet_mapping"] * (1.0 - frac) if n_nodes > 1 else geo["wet_mapping"],
                 geo["wet_mapping"] * frac if n_nodes > 1 else np.zeros(n)]
        for s, c in layout["k"].items():
            m = obs["system"] == s
            rows.append(rr[m]), cols.append(np.full(m.sum(), c)), vals.append(-obs["periodic_spec_m"][m])
    for s, c in layout["isb"].items():                      # code rows only
        m = obs["system"] == s
        rows.append(r[m]), cols.append(np.full(m.sum(), c)), vals.append(np.ones(m.sum()))
    rows.append(r + n), cols.append(layout["ambiguity"].start + obs["arc"]), vals.append(np.ones(n))
    a_mat = sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(2 * n, p))
    layout["n_params"] = p
    return a_mat, layout


def weights(obs: dict, geo: dict) -> np.ndarray:
    """Row weights (2n,): 1/sigma^2 of code rows then phase rows (module text)."""
    f1, f2 = obs["f1"], obs["f2"]
    gain = np.sqrt(f1**4 + f2**4) / (f1**2 - f2**2)
    sin_el = np.maximum(np.sin(geo["elevation_rad"]), 0.05)
    return np.concatenate([(sin_el / (SIGMA_CODE_M * gain)) ** 2, (sin_el / (SIGMA_PHASE_M * gain)) ** 2])


def normal_blocks(a_mat, w, epoch, y, block_of_epoch, n_blocks, row_mask=None):
    """Reduced normal matrices (n_blocks, p, p) and right-hand sides (n_blocks, p, m) per block of
    epochs; ``y`` (2n, m); ``epoch`` (2n,) epoch index of each row; ``row_mask`` (2n,) rows kept."""
    p = a_mat.shape[1]
    y = np.asarray(y, float).reshape(a_mat.shape[0], -1)
    normals = np.zeros((n_blocks, p, p))
    rhs = np.zeros((n_blocks, p, y.shape[1]))
    keep = np.ones(a_mat.shape[0], bool) if row_mask is None else np.asarray(row_mask, bool)
    blocks = block_of_epoch[epoch]
    for b in range(n_blocks):
        rows = np.flatnonzero(keep & (blocks == b))
        if not rows.size:
            continue
        ab, wb, yb = a_mat[rows], w[rows], y[rows]
        eps, local = np.unique(epoch[rows], return_inverse=True)
        aw = sp.diags(wb) @ ab
        s_mat = sp.csr_matrix((np.ones(rows.size), (local, np.arange(rows.size))), shape=(eps.size, rows.size))
        s = np.bincount(local, weights=wb, minlength=eps.size)
        b_mat = s_mat @ aw
        inv = sp.diags(1.0 / s)
        normals[b] = (ab.T @ aw).toarray() - (b_mat.T @ inv @ b_mat).toarray()
        wy = wb[:, None] * yb
        rhs[b] = ab.T @ wy - b_mat.T @ ((s_mat @ wy) / s[:, None])
    return normals, rhs


def solve(normal, rhs, fixed: dict | None = None):
    """(x (p, m), covariance (p, p)) of N x = b; unobserved parameters (zero diagonal) stay 0.
    ``fixed``: {column: value} held at the value (removed from the system)."""
    p = normal.shape[0]
    rhs = np.asarray(rhs, float).reshape(p, -1)
    free = np.diag(normal) > 1e-12 * max(float(np.max(np.diag(normal))), 1e-300)
    x = np.zeros((p, rhs.shape[1]))
    if fixed:
        cols = np.array(list(fixed), dtype=np.int64)
        values = np.array([fixed[c] for c in cols], float)
        free[cols] = False
        x[cols] = values[:, None]
        rhs = rhs - normal[:, cols] @ values[:, None] * np.ones((1, rhs.shape[1]))
    idx = np.flatnonzero(free)
    sub = normal[np.ix_(idx, idx)]
    cov = np.zeros((p, p))
    try:
        factor = scipy.linalg.cho_factor(sub)
        x[idx] = scipy.linalg.cho_solve(factor, rhs[idx])
        cov[np.ix_(idx, idx)] = scipy.linalg.cho_solve(factor, np.eye(idx.size))
    except np.linalg.LinAlgError:
        inv = np.linalg.pinv(sub)
        x[idx] = inv @ rhs[idx]
        cov[np.ix_(idx, idx)] = inv
    return x, cov


def residuals(a_mat, w, epoch, y, x, row_mask=None) -> tuple[np.ndarray, np.ndarray]:
    """(residuals (2n, m), receiver clock per epoch (n_epochs, m)) after removing A x and the
    weighted mean per epoch (the eliminated clock); rows outside ``row_mask`` get NaN."""
    y = np.asarray(y, float).reshape(a_mat.shape[0], -1)
    keep = np.ones(a_mat.shape[0], bool) if row_mask is None else np.asarray(row_mask, bool)
    r = y - a_mat @ x
    n_ep = int(epoch.max()) + 1 if epoch.size else 0
    ww = np.where(keep, w, 0.0)
    s = np.bincount(epoch, weights=ww, minlength=n_ep)
    clock = np.stack([np.bincount(epoch, weights=ww * r[:, j], minlength=n_ep) for j in range(r.shape[1])], axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        clock = clock / s[:, None]
    v = r - clock[epoch]
    v[~keep] = np.nan
    return v, clock
