"""What each term does to the point, and the factor k of the periodic term from phase.

Term effects: the solution with one term switched (``VARIANTS``) minus the full solution
(:data:`gnssrel.survey.model.FULL_TERMS`), east/north/up in millimetres at the reference.  Only
the observed-minus-computed vector changes, so each is one more right-hand side of the same
normal equations (:mod:`gnssrel.survey.solve`); the geometry is not re-linearized (the largest
effect, Sagnac, is tens of metres: a linearization error of (30 m)^2 / 2e7 m ~ 0.05 mm).

k from phase: the periodic term's partial (minus the term, metres) as one more column per
system, estimated (1) together with the position and every other unknown and (2) with the
position held at the reference.  Its sigma is a jackknife over satellites (the normal equations
formed again without each satellite in turn): sigma^2 = (n - 1)/n sum (k_i - mean k_i)^2
(common practice), next to the formal sigma.
"""

from __future__ import annotations

import numpy as np

from gnssrel import geodesy
from gnssrel.survey import solve

VARIANTS = {"periodic": {"periodic": "omitted"}, "j2": {"j2": False}, "shapiro": {"shapiro": False},
            "periodic_state_form": {"periodic": "state"}, "sagnac": {"sagnac": False},
            "clock_convention_mixed": {"clock_convention": "includes"},
            "product_convention": {"periodic": "state", "j2": False}}
"""Summary key -> the switch from the full model.  ``clock_convention_mixed``: clocks of the other
convention (holding the periodic term) taken as IGS-convention ones: the user adds nothing.
``product_convention``: the model IGS-style analyses estimate their clocks with (-2 r.v/c^2 on the
precise state, no J2 term), so the one their clocks are consistent with."""


def enu_mm(dx_ecef_m, reference_ecef_m) -> dict:
    lat, lon, _ = geodesy.ecef_to_geodetic(np.asarray(reference_ecef_m, float))
    e, n, u = geodesy.ecef_to_enu(np.asarray(dx_ecef_m, float), lat, lon) * 1000.0
    return {"east": round(float(e), 2), "north": round(float(n), 2), "up": round(float(u), 2)}


def term_effects(x, names, reference_ecef_m) -> dict:
    """{name: {east, north, up}} mm from solutions ``x`` (p, m), column 0 the full model."""
    return {name: enu_mm(x[:3, j] - x[:3, 0], reference_ecef_m) for j, name in enumerate(names) if j > 0}


def k_estimates(normal, rhs, layout, fixed_position) -> dict:
    """{"with_position": {system: (k, formal sigma)}, "position_fixed": {...}} from summed normal
    equations holding the k columns; ``rhs`` (p,) of the full model; ``fixed_position`` the three
    position corrections of the reference."""
    out = {}
    for label, fixed in (("with_position", None), ("position_fixed", dict(enumerate(fixed_position)))):
        x, cov = solve.solve(normal, rhs, fixed)
        out[label] = {s: (1.0 + float(x[c, 0]), float(np.sqrt(max(cov[c, c], 0.0)))) for s, c in layout["k"].items()}
    return out


def jackknife_k(a_mat, w, epoch, y_full, row_sv, row_mask, layout, fixed_position) -> dict:
    """Jackknife sigma of k over satellites, per system and for both estimates (module text)."""
    one_block = np.zeros(int(epoch.max()) + 1, np.int64)
    samples = {"with_position": {s: [] for s in layout["k"]}, "position_fixed": {s: [] for s in layout["k"]}}
    for sv in np.unique(row_sv[row_mask]):
        if sv[0] not in layout["k"]:
            continue
        normals, rhs = solve.normal_blocks(a_mat, w, epoch, y_full, one_block, 1, row_mask & (row_sv != sv))
        est = k_estimates(normals[0], rhs[0], layout, fixed_position)
        for label in samples:
            samples[label][sv[0]].append(est[label][sv[0]][0])
    out = {}
    for label, per_system in samples.items():
        out[label] = {}
        for s, ks in per_system.items():
            ks = np.asarray(ks)
            n = ks.size
            out[label][s] = (float(np.sqrt((n - 1) / n * np.sum((ks - ks.mean()) ** 2))) if n > 2 else None, n)
    return out
