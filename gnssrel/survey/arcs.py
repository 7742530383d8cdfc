"""Signal pairs, ionosphere-free code and phase, cycle slips and continuous arcs.

Per system one dual-frequency pair of code and phase of the same signals
(:data:`PAIRS`, first with data wins).  With f1, f2 the carriers, phases L in cycles
turned into metres (L c / f), and g1 = f1^2/(f1^2 - f2^2), g2 = f2^2/(f1^2 - f2^2)
(common practice):

* ionosphere-free code and phase: g1 X1 - g2 X2;
* geometry-free phase: L1 - L2 (metres): ionosphere and ambiguities only;
* Melbourne-Wubbena: (f1 L1 - f2 L2)/(f1 - f2) - (f1 P1 + f2 P2)/(f1 + f2): the wide-lane
  ambiguity (wavelength c/(f1 - f2), 0.86 m for GPS L1/L2) plus code noise.

A new arc starts (per satellite) where any of these holds (vectorized over epochs x satellites):
a loss-of-lock indicator with bit 0 set on either phase (RINEX 3.05 5.3.1); a gap longer than
:data:`GAP_INTERVALS` log intervals since the satellite's previous observation; a jump of the
geometry-free phase between consecutive observations above :data:`GF_JUMP_M` (a (1, 1) cycle
slip moves it by 5.4 cm for GPS L1/L2, 6.4 cm for Galileo E1/E5a, the ionosphere by well under
1 cm in 30 s at mid-latitudes: common practice); a jump of the Melbourne-Wubbena combination
above :data:`MW_JUMP_CYCLES` wide-lane cycles (its noise is the code's, ~0.2-0.5 cycles).
Arcs shorter than the minimum (default 20 min) are dropped and counted.
"""

from __future__ import annotations

import numpy as np

from gnssrel import signals
from gnssrel.constants import C_M_S
from gnssrel.io.rinex_obs_fields import lost_lock
from gnssrel.timescales import seconds_between

PAIRS = {
    "G": (("C1W", "L1C", "C2W", "L2W"), ("C1W", "L1W", "C2W", "L2W"), ("C1C", "L1C", "C2W", "L2W"), ("C1C", "L1C", "C2L", "L2L"),
          ("C1C", "L1C", "C2X", "L2X"), ("C1C", "L1C", "C5Q", "L5Q"), ("C1C", "L1C", "C5X", "L5X")),
    "E": (("C1C", "L1C", "C5Q", "L5Q"), ("C1X", "L1X", "C5X", "L5X"), ("C1C", "L1C", "C7Q", "L7Q"),
          ("C1X", "L1X", "C7X", "L7X")),
}
"""Code 1, phase 1, code 2, phase 2 per system, in order of preference: the code pairs IGS-style
clocks refer to (GPS P(Y) on L1/L2, C1W/C2W; Galileo E1/E5a; common practice).  A code and a phase
of the same band but another tracking mode differ by a constant the ambiguity takes."""

GAP_INTERVALS = 3.0
GF_JUMP_M = 0.04
MW_JUMP_CYCLES = 4.0
MIN_ARC_S = 1200.0

NO_PAIR = "no dual-frequency code and phase pair"
NO_PHASE = "no carrier phase of the pair"
SHORT_ARC = "arc shorter than the minimum"


def choose_pair(obs_ds, system: str, columns) -> tuple[str, str, str, str] | None:
    """The first pair of :data:`PAIRS` whose four observables hold data for ``columns``."""
    for pair in PAIRS.get(system, ()):
        if all(v in obs_ds.data_vars and np.isfinite(obs_ds[v].values[:, columns]).any() for v in pair):
            return pair
    return None


def _lost_lock(obs_ds, name, columns) -> np.ndarray:
    if name + "lli" not in obs_ds.data_vars:
        return np.zeros((obs_ds.sizes["time"], len(columns)), bool)
    return lost_lock(np.asarray(obs_ds[name + "lli"].values, float)[:, columns])


def system_arrays(obs_ds, system: str, columns, pair) -> dict:
    """(time, sv) arrays of one system's pair: ``code_if_m``, ``phase_if_m``, ``gf_m``, ``mw_cycles``,
    ``lost_lock``, ``f1``, ``f2``, ``codes_present`` (number of the pair's codes logged, 0-2)."""
    c1, l1, c2, l2 = pair
    f1, f2 = signals.frequency_hz(system, c1), signals.frequency_hz(system, c2)
    p1, p2 = (np.asarray(obs_ds[c].values, float)[:, columns] for c in (c1, c2))
    ph1 = np.asarray(obs_ds[l1].values, float)[:, columns] * (C_M_S / f1)
    ph2 = np.asarray(obs_ds[l2].values, float)[:, columns] * (C_M_S / f2)
    g1, g2 = f1 * f1 / (f1 * f1 - f2 * f2), f2 * f2 / (f1 * f1 - f2 * f2)
    mw = ((f1 * ph1 - f2 * ph2) / (f1 - f2) - (f1 * p1 + f2 * p2) / (f1 + f2)) / (C_M_S / (f1 - f2))
    return {"code_if_m": g1 * p1 - g2 * p2, "phase_if_m": g1 * ph1 - g2 * ph2, "gf_m": ph1 - ph2,
            "mw_cycles": mw, "lost_lock": _lost_lock(obs_ds, l1, columns) | _lost_lock(obs_ds, l2, columns),
            "f1": f1, "f2": f2, "codes_present": np.isfinite(p1).astype(int) + np.isfinite(p2).astype(int)}


def arc_starts(times, valid, lost_lock, gf_m, mw_cycles, interval_s: float | None = None) -> dict:
    """Where new arcs start, ``(time, sv)`` bool, and the count per reason.

    Each column is compared with its own previous valid epoch (no loop: a forward fill of the
    previous valid index).
    """
    t_s = seconds_between(np.asarray(times, "datetime64[ns]"), np.asarray(times)[0]) if len(times) else np.zeros(0)
    n_t, n_sv = valid.shape
    if interval_s is None:
        steps = np.diff(t_s)
        interval_s = float(np.median(steps)) if steps.size else 30.0
    idx = np.where(valid, np.arange(n_t)[:, None], -1)
    last = np.maximum.accumulate(idx, axis=0)
    prev = np.vstack([np.full((1, n_sv), -1), last[:-1]])            # previous valid epoch per column
    has_prev = valid & (prev >= 0)
    prev_safe = np.maximum(prev, 0)
    cols = np.arange(n_sv)[None, :]
    first = valid & (prev < 0)
    gap = has_prev & ((t_s[:, None] - t_s[prev_safe]) > GAP_INTERVALS * interval_s)
    with np.errstate(invalid="ignore"):
        gf = has_prev & ~(np.abs(gf_m - gf_m[prev_safe, cols]) <= GF_JUMP_M)
        mw = has_prev & ~(np.abs(mw_cycles - mw_cycles[prev_safe, cols]) <= MW_JUMP_CYCLES)
    lli = has_prev & lost_lock
    starts = first | gap | gf | mw | lli
    return {"starts": starts, "reasons": {"loss of lock indicator": int(lli.sum()), "gap": int((gap & ~lli).sum()),
                                          "geometry-free jump": int((gf & ~gap & ~lli).sum()),
                                          "Melbourne-Wubbena jump": int((mw & ~gf & ~gap & ~lli).sum())}}


def arc_ids(starts, valid) -> np.ndarray:
    """Arc number per (time, sv), -1 where not valid; numbers run over all columns."""
    per_col = np.cumsum(starts, axis=0)                               # 1.. within a column
    offsets = np.concatenate([[0], np.cumsum(per_col[-1])[:-1]]) if starts.shape[1] else np.zeros(0, int)
    ids = per_col + offsets[None, :] - 1
    return np.where(valid, ids, -1)


def arc_spans_s(ids, t_s) -> tuple[np.ndarray, np.ndarray]:
    """(first, last) time in seconds of each arc id (0..max); ``ids`` flat (n,) with ``t_s`` (n,),
    or (time, sv) with ``t_s`` (time,)."""
    n = int(ids.max()) + 1 if ids.size and ids.max() >= 0 else 0
    first = np.full(n, np.inf)
    last = np.full(n, -np.inf)
    ok = ids >= 0
    tt = (np.broadcast_to(t_s[:, None], ids.shape) if ids.ndim == 2 else np.asarray(t_s))[ok]
    np.minimum.at(first, ids[ok], tt)
    np.maximum.at(last, ids[ok], tt)
    return first, last
