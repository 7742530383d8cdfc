"""Which relativistic model did a receiver's firmware use?  Compare its fixes with ours.

gnssrel computes single-point positions from the same raw log under each
hypothesis of :data:`HYPOTHESES` (periodic term applied as IS-GPS-200
20.3.3.3.3.1 says, omitted, reversed, doubled; Earth-rotation correction
omitted).  The receiver's own fixes are matched by time (exact GPST epoch, or
the nearest within ``max_gap_s``).

Receivers filter their fixes (a Kalman or alpha-beta filter on position), and a
low-cost receiver's and gnssrel's per-epoch positions both scatter by metres:
the per-epoch distances then hardly differ between hypotheses.  So the verdict
works over the whole log, on the epochs every hypothesis solved (east, north, up
offsets fix minus gnssrel; epochs beyond 5 scaled MADs of the first hypothesis's
offsets left out): the hypotheses are ranked by the RMS distance over the log.  The
margin of the closest over the runner-up is sqrt(D), D the difference of their mean
squared distances: how far the runner-up lies beyond the closest once the noise they
share is taken out (metres of noise shrink the difference of the RMS, not sqrt(D)).
D's standard deviation comes from the receiver's noise as it enters D (twice the
closest hypothesis's offsets, about their mean, times gnssrel's own difference between
the two hypotheses), its scatter and its time correlation (effective sample size: a
filter's fixes are far from independent); :func:`gnssrel.clocks.receiver_series.margin_and_sigma`.
The closest hypothesis is named only when z = D / sigma_D exceeds :data:`N_SIGMA` (the
margin is then more than twice that many of its own standard deviations) and the margin
exceeds ``min_margin_m``; otherwise the verdict is "undetermined" with both figures.
Beside it: the mean offset per hypothesis (its length and east/north/up components, with
the standard deviation of the mean) and the median per-epoch 3-D distance
(``median_distance_m``), as descriptions.

A receiver's fixes differ from gnssrel's also by its own choices (weights, masks,
atmosphere models): a common offset of decimetres to metres that no scatter reveals;
``min_margin_m`` stands for it.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from gnssrel.clocks.receiver_series import correlated_mean, margin_and_sigma, robust_keep
from gnssrel.geodesy import ecef_to_geodetic, enu_rotation

HYPOTHESES = {
    "applied": {"periodic": "applied"},
    "omitted": {"periodic": "omitted"},
    "reversed": {"periodic": "reversed"},
    "doubled": {"periodic": "doubled"},
    "sagnac-omitted": {"periodic": "applied", "sagnac": False},
}
N_SIGMA = 3.0
"""The closest hypothesis is named only when its margin exceeds this many of the margin's standard deviations."""
MIN_COMMON_EPOCHS = 5
"""Fewer fixes matched in every hypothesis than this: the verdict falls back to the median distances."""


def match_fixes(fixes: pd.DataFrame, positions: pd.DataFrame, max_gap_s: float = 0.5) -> tuple[np.ndarray, np.ndarray]:
    """Index pairs (fix row, position row) whose times agree within ``max_gap_s``."""
    tf = fixes["time"].to_numpy().astype("datetime64[ns]").astype("int64")
    tp = positions["time"].to_numpy().astype("datetime64[ns]").astype("int64")
    order = np.argsort(tp)
    tp_sorted = tp[order]
    pos = np.clip(np.searchsorted(tp_sorted, tf), 1, max(tp.size - 1, 1))
    lo, hi = np.clip(pos - 1, 0, tp.size - 1), np.clip(pos, 0, tp.size - 1)
    best = np.where(np.abs(tp_sorted[hi] - tf) < np.abs(tp_sorted[lo] - tf), hi, lo)
    ok = np.abs(tp_sorted[best] - tf) <= max_gap_s * 1e9
    return np.flatnonzero(ok), order[best[ok]]


def _enu_offsets(fixes: pd.DataFrame, positions_by_hypothesis: dict, max_gap_s: float):
    """Per hypothesis, (n, 3) east/north/up offsets fix - gnssrel position (m) on the fixes matched
    and finite in every hypothesis; and the per-hypothesis median 3-D distance and match count."""
    fix_xyz = fixes[["x_m", "y_m", "z_m"]].to_numpy(float)
    medians, counts, rows = {}, {}, {}
    common = np.ones(len(fixes), bool)
    for name, pos in positions_by_hypothesis.items():
        i_fix, i_pos = match_fixes(fixes, pos, max_gap_s)
        xyz = np.full(fix_xyz.shape, np.nan)
        xyz[i_fix] = pos[["x_m", "y_m", "z_m"]].to_numpy(float)[i_pos]
        d = np.linalg.norm(fix_xyz - xyz, axis=1)
        ok = np.isfinite(d)
        counts[name] = int(ok.sum())
        medians[name] = float(np.median(d[ok])) if ok.any() else np.nan
        common &= ok
        rows[name] = xyz
    if not common.any():
        return medians, counts, {}
    lat, lon, _ = ecef_to_geodetic(np.median(fix_xyz[common], axis=0))
    rot = enu_rotation(lat, lon)
    return medians, counts, {name: (fix_xyz[common] - xyz[common]) @ rot.T for name, xyz in rows.items()}


def compare_with_hypotheses(fixes: pd.DataFrame, positions_by_hypothesis: dict[str, pd.DataFrame],
                            max_gap_s: float = 0.5, min_margin_m: float = 0.5) -> dict:
    """The receiver's fixes against gnssrel's positions per hypothesis (module text), with the verdict.

    Returns ``median_distance_m`` and ``n_matched`` per hypothesis (as before), ``mean_offset_m``
    (length of the mean east/north/up offset, m) and ``mean_offset_enu_m`` per hypothesis,
    ``sigma_mean_offset_enu_m`` (standard deviation of the mean offset per component, m),
    ``n_common`` (fixes compared), ``n_effective`` (independent ones, per component), ``n_outliers``,
    ``closest``, ``margin_m`` (runner-up's mean-offset length minus the closest one's),
    ``margin_sigma_m`` (its standard deviation), ``p_reversed`` (share of draws where the order flips),
    ``decided`` (bool), ``method`` and ``verdict``.
    """
    medians, counts, enu = _enu_offsets(fixes, positions_by_hypothesis, max_gap_s)
    base = {"median_distance_m": medians, "n_matched": counts, "closest": None, "margin_m": np.nan,
            "margin_sigma_m": np.nan, "decided": False}
    finite = {k: v for k, v in medians.items() if np.isfinite(v)}
    if not finite:
        return {**base, "method": None, "verdict": "no receiver fix matches an epoch of the observation log"}
    n_common = len(next(iter(enu.values()))) if enu else 0
    if n_common < MIN_COMMON_EPOCHS or len(finite) < 2:
        return {**base, **_by_medians(finite, counts, min_margin_m)}
    names = list(enu)
    first = min(names, key=lambda h: medians[h])
    keep = robust_keep(enu[first])
    means = {h: enu[h][keep].mean(axis=0) for h in names}
    rms = {h: float(np.sqrt(np.mean(np.sum(enu[h][keep] ** 2, axis=1)))) for h in names}
    ranked = sorted(names, key=rms.get)
    best, second = ranked[0], ranked[1]
    _, cov, _ = correlated_mean(enu[best][keep])
    m = margin_and_sigma({h: enu[h][keep] for h in (best, second)}, best, second)
    margin, sigma = m["margin"], m["sigma"]
    decided = bool(m["z"] > N_SIGMA and margin > min_margin_m)
    text = (f"RMS distance of the fixes from '{best}' {rms[best]:.2f} m (mean offset "
            f"{np.linalg.norm(means[best]):.2f} m), from '{second}' {rms[second]:.2f} m: margin {margin:.2f} m "
            f"± {sigma:.2f} m (z = {min(m['z'], 999):.1f}) over {int(keep.sum())} fixes "
            f"({m['n_effective']:.0f} independent)")
    verdict = (f"closest to '{best}': {text}" if decided else
               f"undetermined: {text}: needs z > {N_SIGMA:g} and a margin over {min_margin_m:g} m")
    pattern = _pattern_only({h: enu[h][keep] for h in names})
    if decided and pattern["decided"] and pattern["closest"] != best:
        verdict += (f"; but with a constant offset of the receiver's own taken out, the fixes' time pattern "
                    f"follows '{pattern['closest']}' (z = {min(pattern['z'], 999):.1f})")
    return {**base, "closest": best, "margin_m": margin, "margin_sigma_m": sigma, "z": m["z"],
            "p_reversed": m["p_reversed"],
            "decided": decided, "method": "RMS over the log", "rms_distance_m": rms,
            "mean_offset_m": {h: float(np.linalg.norm(means[h])) for h in names},
            "mean_offset_enu_m": {h: [float(v) for v in means[h]] for h in names},
            "sigma_mean_offset_enu_m": [float(v) for v in np.sqrt(np.diag(cov))],
            "n_common": int(keep.sum()), "n_effective": m["n_effective"],
            "n_outliers": int((~keep).sum()), "pattern_only": pattern, "verdict": verdict}


def _pattern_only(offsets: dict) -> dict:
    """The same comparison on the offsets with each hypothesis's mean taken out: only how the
    offsets change over the log counts, so a constant offset of the receiver's own making
    (another troposphere or ionosphere model, an antenna height) cannot decide; on a short log,
    where the hypotheses differ by an almost constant offset, it mostly stays undetermined."""
    centred = {h: d - d.mean(axis=0) for h, d in offsets.items()}
    rms = {h: float(np.sqrt(np.mean(np.sum(d**2, axis=1)))) for h, d in centred.items()}
    ranked = sorted(rms, key=rms.get)
    m = margin_and_sigma(centred, ranked[0], ranked[1])
    return {"closest": ranked[0], "runner_up": ranked[1], "rms_about_mean_m": rms, "margin_m": m["margin"],
            "margin_sigma_m": m["sigma"], "z": m["z"], "decided": bool(m["z"] > N_SIGMA)}


def _by_medians(finite: dict, counts: dict, min_margin_m: float) -> dict:
    """The verdict from the median per-epoch distances alone (too few fixes for a mean offset)."""
    ranked = sorted(finite, key=finite.get)
    best = ranked[0]
    if len(ranked) == 1:
        return {"closest": best, "decided": True, "method": "median distance",
                "verdict": f"closest to '{best}': median distance {finite[best]:.2f} m"}
    margin = finite[ranked[1]] - finite[best]
    decided = bool(margin >= min_margin_m)
    verdict = (f"closest to '{best}': median distance {finite[best]:.2f} m over {counts[best]} fixes, "
               f"margin {margin:.2f} m over '{ranked[1]}'" if decided else
               f"undetermined: '{best}' ({finite[best]:.2f} m) and '{ranked[1]}' ({finite[ranked[1]]:.2f} m) "
               f"are within {min_margin_m} m of each other")
    return {"closest": best, "margin_m": margin, "decided": decided, "method": "median distance",
            "verdict": verdict}
