"""Shared test fixtures: where the real reference data is, and physical tolerances."""

from __future__ import annotations

import os
from pathlib import Path

# One BLAS thread, set before anything imports numpy: the suite's matrices are small (tens to a few
# hundred columns), and a threaded BLAS on a busy 2-core runner spends more time waking and
# spinning its threads than computing (a 456 x 99 least-squares solve measured 0.5-1 s with the
# default threads on a loaded machine, 11 ms with one).  An explicit setting in the environment wins.
for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")

import pytest

ROOT = Path(__file__).resolve().parents[1]
SAMPLE_LOGS = ROOT / "sample_logs"
REFDATA = Path(os.environ.get("GNSSREL_REFDATA", ROOT.parent / "shared" / "refdata"))

# Tolerances as physical quantities.
ONE_NANOSECOND = 1e-9
ONE_PICOSECOND = 1e-12
ONE_MILLIMETRE = 1e-3
ONE_METRE = 1.0


def refdata_file(relative: str) -> Path:
    """Path of a reference file, skipping the test cleanly when it is absent."""
    path = REFDATA / relative
    if not path.exists():
        pytest.skip(f"reference data {relative} not found under {REFDATA} "
                    f"(set GNSSREL_REFDATA to its folder)")
    return path


@pytest.fixture
def refdata():
    return refdata_file


@pytest.fixture(scope="session")
def demo_content():
    """The report content of the invented demo scenario (``gnssrel demo`` runs the same analysis),
    computed once for the session: the report tests only read it."""
    from gnssrel.jobs.demo import scenario_files
    from gnssrel.pipeline.analysis import analyse

    if not (SAMPLE_LOGS / "scenario.json").exists():
        pytest.skip("sample_logs/ is not in this checkout")
    files = scenario_files(SAMPLE_LOGS)
    return analyse(files["nav"], files["precise"], files["obs"], files["fixes"], files["clocks"],
                   title="test report", progress=lambda text: None, clock_fallback=True)
