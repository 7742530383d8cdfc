"""``gnssrel campaign`` interrupted and resumed (issue 11, acceptance: "a test kills the command after
some tasks have finished, reruns it, and checks that the finished tasks were not recomputed and the
final campaign table equals an uninterrupted run's").

The campaign is the invented one of ``gnssrel simulate --stations 3 --days 2`` (1-h logs, 6
station-days and 2 network days).  The command runs as a child process on a 1-worker local cluster and
is killed (SIGKILL, then separately SIGINT as Ctrl-C sends it) as soon as a first task's summary.json
exists.  Also the plan of the real 2024-092 smartphone log, matched by time span with three other
stations' navigation files.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time

import pandas as pd
import pytest
from conftest import refdata_file

from gnssrel.cli import main

OPTIONS = ["--systems", "GE", "--step", "120", "--no-report", "-q"]
"""GPS and Galileo at 2-minute epochs, no HTML report (tests/test_campaign_report.py): a task takes a fraction
of a second once its worker has its imports."""
STATION_DAYS = 6
TIMEOUT_S = 90.0


@pytest.fixture(scope="module")
def invented(tmp_path_factory):
    """(campaign.csv of the invented 3 x 2 campaign, the uninterrupted run's output folder)."""
    base = tmp_path_factory.mktemp("resume")
    assert main(["simulate", "--output", str(base / "sim"), "--stations", "3", "--days", "2", "--hours", "1",
                 "-q"]) == 0
    manifest = base / "sim" / "campaign.csv"
    out = base / "uninterrupted"
    assert main(["campaign", str(manifest), "--output", str(out), "--workers", "1", *OPTIONS]) == 0
    return manifest, out


def _finished(out):
    """The task folders (station-days and network days) whose summary.json exists."""
    return sorted(p.parent for p in out.glob("*/*/summary.json"))


def _files(folders):
    """{path: (mtime_ns, bytes)} of every file in the folders."""
    return {p: (p.stat().st_mtime_ns, p.read_bytes()) for f in folders for p in sorted(f.iterdir()) if p.is_file()}


def _interrupt(manifest, out, signum):
    """Start the command, send ``signum`` to it once a task has finished; its exit status."""
    child = subprocess.Popen([sys.executable, "-m", "gnssrel", "campaign", str(manifest), "--output", str(out),
                              "--workers", "1", *OPTIONS], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                             start_new_session=True)
    try:
        deadline = time.monotonic() + TIMEOUT_S
        while not _finished(out):
            assert child.poll() is None, "the command ended before any task finished"
            assert time.monotonic() < deadline, "no task finished in time"
            time.sleep(0.02)
        os.kill(child.pid, signum)
        return child.wait(timeout=TIMEOUT_S)
    finally:
        try:                                   # our own child's group: its workers, if any outlived it
            os.killpg(child.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        child.wait()


@pytest.mark.parametrize("signum", [signal.SIGKILL, signal.SIGINT], ids=["SIGKILL", "SIGINT"])
def test_interrupted_campaign_resumes_without_recomputing_finished_tasks(invented, tmp_path, signum):
    manifest, reference = invented
    out = tmp_path / "out"
    code = _interrupt(manifest, out, signum)
    assert code == (130 if signum == signal.SIGINT else -signal.SIGKILL)     # 130: "interrupted" (gnssrel.cli)
    assert not (out / "campaign.parquet").exists() and not (out / "summary.json").exists()
    finished = _finished(out)
    assert 1 <= len(finished) < STATION_DAYS + 2                             # some finished, not all
    # each finished task is whole: an ok summary with its hash, and tables that read to the end
    for folder in finished:
        summary = json.loads((folder / "summary.json").read_text())
        assert summary["status"] == "ok" and len(summary["content_hash"]) == 64
        for table in folder.glob("*.parquet"):
            assert len(pd.read_parquet(table)) > 0
    # what a write cut by the kill leaves in an unfinished folder: a temporary file and a torn table,
    # with no summary; a rerun must neither trust nor keep them
    unfinished = out / "tasks" / "TWHL00ZZZ_2025-06-12"
    if unfinished not in finished:
        unfinished.mkdir(parents=True, exist_ok=True)
        (unfinished / ".summary.json.x1y2z3.part").write_text('{"status": "ok", "content_hash": "')
        (unfinished / "corrections.parquet").write_bytes(b"PAR1\x00\x00")
    before = _files(finished)
    kept_days = sum(f.parent.name == "tasks" for f in finished)

    assert main(["campaign", str(manifest), "--output", str(out), "--workers", "1",
                 "--summary", str(tmp_path / "s.json"), *OPTIONS]) == 0
    summary = json.loads((tmp_path / "s.json").read_text())
    assert (summary["n_tasks"], summary["n_ok"], summary["n_failed"]) == (STATION_DAYS, STATION_DAYS, 0)
    assert summary["n_skipped"] == kept_days
    assert sum(t["skipped"] for t in summary["tasks"]) == kept_days
    assert _files(finished) == before                                         # not recomputed, not rewritten
    assert not list(out.rglob("*.part"))
    assert len(pd.read_parquet(unfinished / "corrections.parquet")) > 0     # recomputed whole
    pd.testing.assert_frame_equal(pd.read_parquet(out / "campaign.parquet"),
                                  pd.read_parquet(reference / "campaign.parquet"))
    assert (out / "campaign.csv").read_text() == (reference / "campaign.csv").read_text()


@pytest.mark.refdata
def test_smartphone_log_gets_three_other_stations_navigation_by_time_span(capsys):
    day = refdata_file("2024-092/GEOP092I.24o.gz").parent
    other_day = refdata_file("2024-124/NYA100NOR_S_20241240000_01D_GN.rnx.gz")      # 2024-05-03: must not match
    assert main(["campaign", str(day), str(other_day), "--dry-run"]) == 0
    out = capsys.readouterr().out
    assert "campaign plan: 1 station-day(s), 1 station(s) (GEOP)" in out
    # the log starts 2024-04-01 (day 092); the navigation files of HERT (GPS), BRUX (Galileo) and CORD
    # (mixed) cover that day by their names' spans (RINEX 3 long names, start + 01D)
    line = next(li for li in out.splitlines() if li.startswith("  GEOP 2024-04-01: obs GEOP092I.24o.gz; nav "))
    navs = line.split("; nav ")[1].split(", ")
    assert sorted(navs) == ["BRUX00BEL_R_20240920000_01D_EN.rnx.gz", "CORD00ARG_R_20240920000_01D_MN.rnx.gz",
                            "HERT00GBR_R_20240920000_01D_GN.rnx.gz"]
    assert "missing" not in out
