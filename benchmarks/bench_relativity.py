"""Benchmark: the full relativity table for a mixed day, and the proper-time integral's cost.

Run: ``python benchmarks/bench_relativity.py``.  Uses the real 2020-06-25
MOJN navigation file (../shared/refdata, or $GNSSREL_REFDATA) at 30 s when
present, else ~120 synthetic Kepler satellites.  Times are ratios against a
reference pass in the same run (one vectorised numpy sweep over the same
arrays: |r|, |v|^2, r.v), so they compare across machines.

Target: the table for ~120 satellites x 2880 epochs in a few seconds.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
from _common import REFDATA, best_of

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))
NAV = REFDATA / "2020-177" / "MOJN00DNK_R_20201770000_01D_MN.rnx.gz"
DAY_START = np.datetime64("2020-06-25T00:00:00", "ns")


def states_of_the_day():
    from gnssrel.orbits.broadcast import time_grid

    times = time_grid(DAY_START, DAY_START + np.timedelta64(86_370, "s"), 30.0)
    if NAV.exists():
        from gnssrel.io.rinex_nav import read_navigation
        from gnssrel.orbits.broadcast import broadcast_states

        states = broadcast_states(read_navigation(NAV), times, include_unhealthy=True)
        return states, f"broadcast states from {NAV.name}"
    from relativity_orbits import eci_to_ecef, kepler_state, state_dataset

    rng = np.random.default_rng(1)
    n = 120
    t = np.arange(times.size) * 30.0
    pos, vel, _ = kepler_state(rng.uniform(25.5e6, 29.6e6, n), rng.uniform(0, 0.02, n),
                               np.radians(rng.uniform(50, 65, n)), rng.uniform(0, 6.28, n),
                               rng.uniform(0, 6.28, n), rng.uniform(0, 6.28, n), t)
    pe, ve = eci_to_ecef(t, pos, vel)
    svs = [f"G{k:02d}" for k in range(1, 33)] + [f"E{k:02d}" for k in range(1, 37)] \
        + [f"C{k:02d}" for k in range(1, 31)] + [f"R{k:02d}" for k in range(1, 23)]
    return state_dataset(DAY_START, t, svs[:n], pe, ve), "120 synthetic Kepler satellites"


def main() -> None:
    from gnssrel.jobs.relativity import relativity_table
    from gnssrel.relativity.engine import relativity_summary, relativity_terms
    from gnssrel.relativity.proper_time import proper_time_offset, proper_time_offset_along

    states, what = states_of_the_day()
    n_t, n_s = states.sizes["time"], states.sizes["sv"]
    pos = states["position_ecef_m"].values
    vel = states["velocity_ecef_m_per_s"].values

    def reference():
        return (np.linalg.norm(pos, axis=-1), np.einsum("...i,...i->...", vel, vel),
                np.einsum("...i,...i->...", pos, vel))

    t_ref, _ = best_of(reference)
    t_terms, ds = best_of(lambda: relativity_terms(states))
    t_summary, _ = best_of(lambda: relativity_summary(ds))
    t_table, table = best_of(lambda: relativity_table(ds))
    total = t_terms + t_summary + t_table
    print(f"{what}: {n_s} satellites x {n_t} epochs, {len(table)} rows with a state")
    print(f"  reference numpy sweep       {t_ref * 1e3:8.1f} ms")
    print(f"  relativity_terms            {t_terms * 1e3:8.1f} ms  ({t_terms / t_ref:6.1f} x reference)")
    print(f"  relativity_summary          {t_summary * 1e3:8.1f} ms  ({t_summary / t_ref:6.1f} x reference)")
    print(f"  long table                  {t_table * 1e3:8.1f} ms  ({t_table / t_ref:6.1f} x reference)")
    print(f"  full relativity table       {total:8.2f} s   (target: a few seconds)")

    # the integral alone on gap-free synthetic states: cumulative Simpson on 30 s samples,
    # and the adaptive DOP853 on a callable (here a Kepler state function) for comparison
    from relativity_orbits import kepler_state

    n_sat = 120
    t = np.arange(2880) * 30.0
    rng = np.random.default_rng(2)
    el = (rng.uniform(25.5e6, 29.6e6, n_sat), rng.uniform(0, 0.02, n_sat),
          np.radians(rng.uniform(50, 65, n_sat)), rng.uniform(0, 6.28, n_sat),
          rng.uniform(0, 6.28, n_sat), rng.uniform(0, 6.28, n_sat))
    p, v, _ = kepler_state(*el, t)
    t_simpson, _ = best_of(lambda: proper_time_offset(t, p, v, frame="eci"))

    def state_function(tt):
        pp, vv, _ = kepler_state(*el, [tt])
        return pp[0], vv[0]

    t_adaptive, _ = best_of(lambda: proper_time_offset_along(state_function, t), repeat=1)
    days = n_sat * (t[-1] - t[0] + 30.0) / 86_400.0
    print(f"  proper-time integral, sampled (cumulative Simpson, 30 s): "
          f"{t_simpson / days * 1e6:8.1f} us per satellite-day ({t_simpson / t_ref:5.1f} x reference)")
    print(f"  proper-time integral, adaptive (DOP853 on a state function): "
          f"{t_adaptive / days * 1e3:8.2f} ms per satellite-day")


if __name__ == "__main__":
    main()
