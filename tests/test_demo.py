"""``gnssrel demo`` and ``gnssrel report`` from the command line: verdicts, files, bad input.

The verdicts in summary.json come from the analysis; here they are compared with
the ``expected`` block each receiver has in sample_logs/scenario.json (the
scenario's own truth: how the simulator built each receiver's firmware outputs).
"""

from __future__ import annotations

import contextlib
import io
import json

import pytest
from conftest import SAMPLE_LOGS

from gnssrel.cli import main


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    if not (SAMPLE_LOGS / "scenario.json").exists():
        pytest.skip("sample_logs/ is not in this checkout")
    out = tmp_path_factory.mktemp("demo") / "gnssrel-demo"
    plots = out.parent / "plots"
    printed = io.StringIO()
    with contextlib.redirect_stdout(printed):       # one demo run serves every test below
        assert main(["demo", "--output", str(out), "--logs", str(SAMPLE_LOGS), "--plots", str(plots)]) == 0
    return out, plots, json.loads((out / "summary.json").read_text()), printed.getvalue()


def test_demo_summary_and_report_carry_a_balanced_accounting(demo_run):
    from gnssrel.accounting import Ledger

    out, _, summary, _ = demo_run
    ledger = Ledger.from_dict(summary["accounting"])
    assert ledger.unbalanced() == []
    assert set(ledger.counts) >= {"navigation_records", "sp3_records", "clock_records", "observations",
                                  "epochs", "fixes", "receiver_clock_rows"}
    # the demo logs: 360 epochs at 30 s each (sample_logs/README.md); every pseudorange used but the
    # few the residual test of the fixes excludes on clean data (false alarms: 1e-3 per epoch)
    assert ledger.count("epochs") == 2 * 360
    excluded = ledger.dropped("observations").get("excluded by the residual test", 0)
    assert ledger.count("observations", outcome="used") + excluded == ledger.count("observations") > 0
    assert excluded <= 10
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "<h2 id='accounting'>Accounting</h2>" in html and "superseded (never the nearest record)" in html
    assert (out / "accounting.csv").is_file()


def test_demo_finds_the_faulty_receiver_and_the_fault(demo_run):
    _, _, summary, _ = demo_run
    manifest = json.loads((SAMPLE_LOGS / "scenario.json").read_text())
    receivers = summary["receivers"]
    assert set(receivers) == {r["marker"] for r in manifest["receivers"]}
    for truth in manifest["receivers"]:
        found = receivers[truth["marker"]]
        expected = truth["expected"]
        assert found["faulty"] is truth["faulty"], truth["marker"]
        assert found["position_hypothesis"] == expected["position_hypothesis"]
        assert found["clock_convention"] == expected["clock_convention"]
        assert found["fixes_margin_m"] > 5.0              # metres: a clear decision, not a coin toss
        k, sigma = found["observations_relativity_k"], found["observations_relativity_k_sigma"]
        assert abs(k - expected["observations_relativity_k"]) < max(3 * sigma, 0.05), (k, sigma)
        if truth["faulty"]:
            assert found["fault"]["mode"] == truth["fault"]["mode"]
            assert set(found["fault"]["where"]) == set(truth["fault"]["where"])
            assert "omits the periodic relativistic term" in found["verdict"]
        else:
            assert found["fault"] is None
            assert "consistent with the specifications" in found["verdict"]


def test_demo_writes_the_report_and_the_plots(demo_run):
    out, plots, summary, _ = demo_run
    assert (out / "report.html").stat().st_size > 500_000
    pngs = sorted(p.name for p in plots.glob("*.png"))
    # the figures every demo report has: six of the scenario, three per receiver, the accounting
    expected = {"periodic_term", "rate_decomposition", "proper_time", "clock_convention", "orbit_differences",
                "signal_path", "coverage"} | {f"{kind}_{r}" for kind in ("audit", "positions_enu", "receiver_clock")
                                              for r in ("KVRP", "SLMB")}
    assert pngs == sorted(p.name for p in out.glob("*.png"))
    assert {p.removesuffix(".png") for p in pngs} == expected
    assert summary["time_scale"] == "GPST" and summary["clocks"]["by_system"]["G"]["convention"] == \
        "excludes-periodic"


def test_demo_prints_where_the_report_is_and_what_it_found(demo_run):
    folder, _, _, out = demo_run
    assert f"report: {folder / 'report.html'}" in out
    assert "SLMB: firmware omits the periodic relativistic term" in out
    assert "KVRP: firmware consistent with the specifications" in out


def test_demo_without_logs_folder_is_one_line_exit_2(tmp_path, capsys):
    assert main(["demo", "--logs", str(tmp_path / "nowhere"), "--output", str(tmp_path / "d")]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "--logs" in err
    assert not (tmp_path / "d").exists()


def test_report_with_a_missing_file_is_exit_2_and_writes_nothing(tmp_path, capsys):
    nav = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"
    code = main(["report", str(nav), "--obs", str(tmp_path / "missing.rnx"), "--output", str(tmp_path / "r")])
    assert code == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "missing.rnx" in err and "not found" in err
    assert list(tmp_path.iterdir()) == []


def test_report_pairs_fixes_with_logs(tmp_path, capsys):
    nav = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"
    obs = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"
    code = main(["report", str(nav), "--obs", str(obs), "--receiver-fixes", str(obs), str(obs),
                 "--output", str(tmp_path / "r")])
    assert code == 2 and "one file per --obs" in capsys.readouterr().err
    assert not (tmp_path / "r").exists()


def test_scenario_description_names_each_receiver_with_its_place():
    from gnssrel.jobs.demo import scenario_description

    manifest = json.loads((SAMPLE_LOGS / "scenario.json").read_text())
    _, text = scenario_description(SAMPLE_LOGS)
    for site in manifest["sites"]:
        first, _, region = site["place"].partition(", ")
        assert f"{site['marker']} at {first} ({region})" in text


def test_report_refuses_a_missing_output_folder_before_any_work(tmp_path, capsys):
    code = main(["report", str(tmp_path / "missing.rnx"), "--output", str(tmp_path / "no" / "report")])
    out = capsys.readouterr()
    assert code == 2 and "does not exist" in out.err and out.out == ""
