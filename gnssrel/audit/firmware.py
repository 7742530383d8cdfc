"""Which relativistic model did a receiver's firmware use?  Compare its fixes with ours.

gnssrel computes single-point positions from the same raw log under each
hypothesis of :data:`HYPOTHESES` (periodic term applied as IS-GPS-200
20.3.3.3.3.1 says, omitted, reversed, doubled; Earth-rotation correction
omitted).  The receiver's own fixes are matched by time (exact GPST epoch, or
the nearest within ``max_gap_s``), and for each hypothesis the median 3-D
distance between the receiver's fix and gnssrel's is taken.  The verdict names
the closest hypothesis and its margin over the runner-up; when the margin is
below ``min_margin_m`` the verdict says the fixes cannot tell them apart.

A receiver's fixes differ from gnssrel's also by its own choices (weights,
masks, smoothing, atmosphere models): metres.  The relativistic hypotheses
differ by several metres per epoch (the periodic term reaches 13 m in range),
so the comparison is made per epoch and summarised by the median.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

HYPOTHESES = {
    "applied": {"periodic": "applied"},
    "omitted": {"periodic": "omitted"},
    "reversed": {"periodic": "reversed"},
    "doubled": {"periodic": "doubled"},
    "sagnac-omitted": {"periodic": "applied", "sagnac": False},
}


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


def compare_with_hypotheses(fixes: pd.DataFrame, positions_by_hypothesis: dict[str, pd.DataFrame],
                            max_gap_s: float = 0.5, min_margin_m: float = 0.5) -> dict:
    """Median 3-D distance of the receiver's fixes from gnssrel's positions per hypothesis,
    and the verdict string.  Returns ``{"median_distance_m": {...}, "n_matched": {...},
    "closest": name | None, "margin_m": float, "verdict": str}``."""
    medians, counts = {}, {}
    for name, pos in positions_by_hypothesis.items():
        i_fix, i_pos = match_fixes(fixes, pos, max_gap_s)
        a = fixes[["x_m", "y_m", "z_m"]].to_numpy()[i_fix]
        b = pos[["x_m", "y_m", "z_m"]].to_numpy()[i_pos]
        d = np.linalg.norm(a - b, axis=1)
        d = d[np.isfinite(d)]
        counts[name] = int(d.size)
        medians[name] = float(np.median(d)) if d.size else np.nan
    finite = {k: v for k, v in medians.items() if np.isfinite(v)}
    if not finite:
        return {"median_distance_m": medians, "n_matched": counts, "closest": None, "margin_m": np.nan,
                "verdict": "no receiver fix matches an epoch of the observation log"}
    ranked = sorted(finite, key=finite.get)
    best = ranked[0]
    margin = finite[ranked[1]] - finite[best] if len(ranked) > 1 else np.nan
    if np.isfinite(margin) and margin < min_margin_m:
        verdict = (f"undetermined: '{best}' ({finite[best]:.2f} m) and '{ranked[1]}' ({finite[ranked[1]]:.2f} m) "
                   f"are within {min_margin_m} m of each other")
    else:
        verdict = (f"closest to '{best}': median distance {finite[best]:.2f} m over {counts[best]} fixes, "
                   f"margin {margin:.2f} m over '{ranked[1]}'" if len(ranked) > 1 else
                   f"closest to '{best}': median distance {finite[best]:.2f} m")
    return {"median_distance_m": medians, "n_matched": counts, "closest": best, "margin_m": margin,
            "verdict": verdict}
