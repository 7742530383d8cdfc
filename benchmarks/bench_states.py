"""Speed of the broadcast state histories: a mixed day at 30 s for every satellite.

Target: about 120 satellites x 2880 epochs in well under a second.
Reference in the same run: the same code called once per epoch (a Python loop
over epochs), timed on a slice and scaled to the day.  Prints the times and the ratio.

    python benchmarks/bench_states.py [NAV_FILE]
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
from _common import REFDATA, best_of

from gnssrel.io.rinex_nav import read_navigation
from gnssrel.orbits.broadcast import broadcast_states, time_grid

NAV = REFDATA / "2020-177" / "MOJN00DNK_R_20201770000_01D_MN.rnx.gz"
LOOP_EPOCHS = 60


def main(path=NAV):
    nav = read_navigation(path)
    times = time_grid(np.datetime64("2020-06-25T00:00"), np.datetime64("2020-06-25T23:59:30"), 30)
    for label, systems in (("Keplerian (G E C J)", "GECJ"), ("all systems (G E C J R)", "GECJR")):
        seconds, ds = best_of(lambda s=systems: broadcast_states(nav, times, s))
        print(f"{label:<26} {ds.sizes['sv']:4d} satellites x {ds.sizes['time']} epochs: {seconds:.3f} s")
    loop_s, _ = best_of(repeat=1, func=lambda: [broadcast_states(nav, times[i:i + 1], "GECJ") for i in range(LOOP_EPOCHS)])
    loop_day_s = loop_s / LOOP_EPOCHS * times.size
    kepler_s, _ = best_of(repeat=3, func=lambda: broadcast_states(nav, times, "GECJ"))
    print(f"per-epoch loop reference (Keplerian, {LOOP_EPOCHS} epochs scaled to {times.size}): "
          f"{loop_day_s:.1f} s -> vectorized is {loop_day_s / kepler_s:.0f}x faster")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else NAV)
