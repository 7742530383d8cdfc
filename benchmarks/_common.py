"""What the benchmark scripts share: where the reference data is, and a best-of timer."""

from __future__ import annotations

import os
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
REFDATA = Path(os.environ.get("GNSSREL_REFDATA", ROOT.parent / "shared" / "refdata"))


def best_of(func, repeat: int = 3):
    """(best wall time in seconds, the last result) of ``repeat`` calls of ``func``."""
    best, result = float("inf"), None
    for _ in range(repeat):
        start = time.perf_counter()
        result = func()
        best = min(best, time.perf_counter() - start)
    return best, result
