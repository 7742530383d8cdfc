"""``gnssrel campaign --survey`` (issue 15: "in campaign as an option, so that a network of station-days
gets daily positions and their repeatability") on the invented campaign of ``gnssrel simulate --stations 2
--days 2`` (1-h logs at 30 s, dual-frequency code and phase, SP3 + RINEX clock).  One station-day is given
its SP3 only: its survey is refused with a reason while its audit stays ok.  Without --survey the table
and summary keep their columns and keys (unit level below; tests/test_campaign.py runs the default)."""

from __future__ import annotations

import csv
import json

import numpy as np
import pandas as pd
import pytest

from gnssrel.accounting import Ledger
from gnssrel.campaign.run import campaign_row, campaign_summary
from gnssrel.campaign.task import SURVEY_NAME, SURVEY_NEEDS, survey_station_day
from gnssrel.cli import main
from gnssrel.geodesy import ecef_to_geodetic

NO_CLOCK = ("SLMB00ZZZ", "2025-06-12")
"""The station-day whose RINEX clock file is left out of the manifest."""


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    base = tmp_path_factory.mktemp("campaign_survey")
    assert main(["simulate", "--output", str(base / "sim"), "--stations", "2", "--days", "2", "--hours", "1",
                 "-q"]) == 0
    with open(base / "sim" / "campaign.csv", newline="") as f:
        rows = list(csv.DictReader(f))
    for row in rows:
        if (row["station"], row["day"]) == NO_CLOCK:
            row["precise"] = ";".join(p for p in row["precise"].split(";") if p.upper().endswith(".SP3"))
    manifest = base / "sim" / "survey.csv"
    with open(manifest, "w", newline="") as f:
        writer = csv.DictWriter(f, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    out = base / "out"
    argv = ["campaign", str(manifest), "--output", str(out), "--workers", "1", "--systems", "GE", "--survey",
            "--no-report", "-q"]
    assert main(argv) == 0
    scenario = json.loads((base / "sim" / "scenario.json").read_text())
    return argv, out, scenario


def _tasks(out):
    return {(t["station"], t["date"]): t for t in json.loads((out / "summary.json").read_text())["tasks"]}


def test_every_station_day_with_sp3_and_clk_is_surveyed(run):
    _, out, scenario = run
    truth = {s["marker"]: np.array(s["position_ecef_m"]) for s in scenario["sites"]}
    table = pd.read_csv(out / "campaign.csv").set_index(["station", "day"])
    tasks = _tasks(out)
    assert len(tasks) == 4 and all(t["status"] == "ok" for t in tasks.values())
    for key, task in tasks.items():
        if key == NO_CLOCK:
            continue
        full = json.loads((out / "tasks" / f"{key[0]}_{key[1]}" / SURVEY_NAME).read_text())
        assert task["survey"]["status"] == "ok" and task["survey"]["reason"] is None
        assert not Ledger.from_dict(full["accounting"]).unbalanced()
        for c in ("east", "north", "up"):                    # the table's daily position is the survey's
            assert table.loc[key, f"survey_{c}_m"] == pytest.approx(full["position"][f"{c}_m"])
            assert task["survey"][f"{c}_m"] == pytest.approx(full["position"][f"{c}_m"])
        xyz = np.array([full["position"][k] for k in ("x_m", "y_m", "z_m")])
        # 1 h of float ambiguities; the invented campaign stations do not move with the solid-Earth tide
        # the survey models (up to ~0.2 m in height, IERS 2010 ch. 7), hence the looser vertical bound
        assert np.hypot(full["position"]["east_m"], full["position"]["north_m"]) < 0.06
        assert abs(full["position"]["up_m"]) < 0.25
        assert np.linalg.norm(xyz - truth[key[0][:4]]) < 0.25
        assert set(full["term_effects_mm"]) >= {"periodic", "j2", "shapiro", "periodic_state_form"}


def test_a_station_day_without_clock_file_records_why_and_stays_ok(run):
    _, out, _ = run
    task = _tasks(out)[NO_CLOCK]
    assert task["status"] == "ok" and task["survey"] == {"status": "refused", "reason": SURVEY_NEEDS}
    assert not (out / "tasks" / f"{NO_CLOCK[0]}_{NO_CLOCK[1]}" / SURVEY_NAME).exists()
    row = pd.read_csv(out / "campaign.csv").set_index(["station", "day"]).loc[NO_CLOCK]
    assert row["survey_status"] == "refused" and row["survey_reason"] == SURVEY_NEEDS
    assert np.isnan(row["survey_east_m"])


def _enu(dx, xyz):
    """East, north, up of ``dx`` at ``xyz`` (the usual rotation, written out here)."""
    lat, lon, _ = ecef_to_geodetic(xyz)
    sl, cl, sp, cp = np.sin(lon), np.cos(lon), np.sin(lat), np.cos(lat)
    return np.array([-sl * dx[0] + cl * dx[1], -sp * cl * dx[0] - sp * sl * dx[1] + cp * dx[2],
                     cp * cl * dx[0] + cp * sl * dx[1] + sp * dx[2]])


def test_repeatability_per_station_is_the_std_of_the_daily_positions(run):
    _, out, _ = run
    summary = json.loads((out / "summary.json").read_text())
    rep = summary["survey_repeatability"]
    days = [json.loads(p.read_text())["position"] for p in sorted((out / "tasks").glob("KVRP00ZZZ_*/survey.json"))]
    a, b = (np.array([d[k] for k in ("x_m", "y_m", "z_m")]) for d in days)
    expected_mm = np.abs(_enu(a - b, (a + b) / 2)) / np.sqrt(2.0) * 1000.0   # std (ddof 1) of two values
    assert rep["KVRP00ZZZ"]["n_days"] == 2
    assert [rep["KVRP00ZZZ"][f"{c}_mm"] for c in ("east", "north", "up")] == pytest.approx(expected_mm, abs=0.011)
    assert rep["SLMB00ZZZ"] == {"n_days": 1, "east_mm": None, "north_mm": None, "up_mm": None}
    assert summary["options"]["survey"] is True


def test_a_rerun_keeps_the_surveys_of_finished_tasks(run, capsys):
    argv, out, _ = run
    before = pd.read_csv(out / "campaign.csv")
    assert main([a for a in argv if a != "-q"]) == 0
    assert "4 ok, 0 failed, 4 taken from an earlier run" in capsys.readouterr().out
    pd.testing.assert_frame_equal(pd.read_csv(out / "campaign.csv"), before)


def test_the_surveys_own_refusal_is_recorded(run, tmp_path):
    """Every 10 min only: 6 epochs, no arc as long as the 20-min minimum -> the survey refuses, in one line."""
    from gnssrel.pipeline.inputs import read_navigation_files, read_precise

    _, out, _ = run
    spec = json.loads((out / "tasks" / "KVRP00ZZZ_2025-06-11" / "summary.json").read_text())
    sim = out.parent / "sim"
    with open(sim / "survey.csv", newline="") as f:
        row = next(r for r in csv.DictReader(f) if r["station"] == "KVRP00ZZZ")
    precise = read_precise([str(sim / p) for p in row["precise"].split(";")], ["G", "E"])
    nav, _ = read_navigation_files([str(sim / row["nav"])], "GE")
    result = survey_station_day({"obs": spec["obs"]}, {"systems": "GE", "step_s": 600.0}, tmp_path, nav, precise)
    assert result["status"] == "refused" and "too few observations" in result["reason"]
    assert not (tmp_path / SURVEY_NAME).exists()


def test_without_survey_the_row_and_summary_keep_their_keys():
    task = {"station": "ABCD", "date": "2025-01-01", "status": "ok", "relativity_k": {}, "position": {}}
    assert not any(k.startswith("survey") for k in campaign_row(task))
    summary = campaign_summary([task], n_skipped=0)
    assert "survey_repeatability" not in summary and "survey" not in summary["tasks"][0]
    with_survey = campaign_summary([dict(task, survey={"status": "refused", "reason": "x"})], n_skipped=0)
    assert with_survey["survey_repeatability"] == {} and with_survey["tasks"][0]["survey"]["reason"] == "x"


def test_campaign_report_shows_the_repeatability(run, tmp_path):
    from gnssrel.report.campaign_report import write_campaign_report

    _, out, _ = run
    summary = json.loads((out / "summary.json").read_text())
    page = (write_campaign_report(out, tmp_path / "report") / "report.html").read_text()
    assert "day-to-day repeatability" in page and "KVRP00ZZZ" in page
    east_mm = summary["survey_repeatability"]["KVRP00ZZZ"]["east_mm"]
    assert f"<td>{east_mm:.3f}</td>" in page                                # the value itself, in its row
