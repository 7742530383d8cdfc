"""`gnssrel audit` on the command line: bad input gives one line and exit 2; a real run writes its outputs;
the invented demo scenario (sample_logs/README.md, scenario.json) gives the verdicts it was built with."""

import json

import numpy as np
import pytest
from conftest import SAMPLE_LOGS, refdata_file

from gnssrel.cli import main

OBS = "2024-124/NYA100NOR_S_20241240000_01D_30S_MO.crx.gz"
NAV = "2024-124/NYA100NOR_S_20241240000_01D_GN.rnx.gz"


@pytest.mark.parametrize("extra, message", [
    (["--position", "1,2"], "--position"),
    (["--position", "0,0,0"], "--position"),
    (["--precise", str(SAMPLE_LOGS / "KVA0DEMFIN_20251621000_03H_30S_CLK.CLK")], "not SP3: give at least one SP3"),
    (["--output", "table.xlsx"], "unknown output format"),
])
def test_bad_options_exit_2_with_one_line(tmp_path, capsys, extra, message):
    if "--output" in extra:
        extra = ["--output", str(tmp_path / "table.xlsx")]
    code = main(["audit", str(tmp_path / "missing.rnx"), str(tmp_path / "missing.nav"), *extra])
    err = capsys.readouterr().err
    assert code == 2
    assert message in err and err.count("\n") == 1 and "Traceback" not in err


def test_summary_keys_and_outputs_on_real_log(tmp_path, capsys):
    summary_path, table, positions = tmp_path / "s.json", tmp_path / "c.csv", tmp_path / "p.csv"
    code = main(["audit", str(refdata_file(OBS)), str(refdata_file(NAV)), "--systems", "G",
                 "--start", "2024-05-03T06:00:00 GPST", "--end", "2024-05-03T09:00:00 GPST", "--step", "300",
                 "--output", str(table), "--positions", str(positions), "--summary", str(summary_path), "--json"])
    assert code == 0
    printed = json.loads(capsys.readouterr().out)
    summary = json.loads(summary_path.read_text())
    assert printed == summary
    assert set(summary) >= {"observations", "relativity_k", "position", "receiver_verdict"}
    assert set(summary["observations"]) == {"n_epochs", "n_sat", "systems", "start", "end", "time_scale",
                                            "epochs_in_file_read", "skipped_epochs", "skipped_epoch_lines",
                                            "reader_warnings"}
    assert summary["observations"]["skipped_epochs"] == 0
    assert summary["observations"]["n_epochs"] == 37 and summary["observations"]["systems"] == ["G"]
    assert set(summary["relativity_k"]["G"]) >= {"k", "sigma", "rms_m"}
    assert set(summary["relativity_k"]["G"]["rms_m"]) == {"applied", "omitted", "reversed", "doubled"}
    assert set(summary["position"]) >= {"reference", "median_error_3d_m", "median_error_3d_m_without_periodic"}
    assert summary["position"]["median_error_3d_m"] < 6.0
    import pandas as pd
    assert len(pd.read_csv(positions)) == 37
    assert np.isfinite(pd.read_csv(table)["troposphere_m"]).all()


DEMO_NAV = "KVRP00ZZZ_R_20251621000_03H_MN.rnx"
DEMO_SP3 = "KVA0DEMFIN_20251620830_06H_15M_ORB.SP3"
DEMO_CLK = "KVA0DEMFIN_20251621000_03H_30S_CLK.CLK"


def _demo_audit(receiver, capsys, *extra):
    code = main(["audit", str(SAMPLE_LOGS / f"{receiver}00ZZZ_R_20251621000_03H_30S_MO.rnx"),
                 str(SAMPLE_LOGS / DEMO_NAV), "--receiver-fixes", str(SAMPLE_LOGS / f"{receiver}_fixes.nmea"),
                 "--receiver-clocks", str(SAMPLE_LOGS / f"{receiver}_satellite_clocks.csv"), "--json", *extra])
    assert code == 0
    return json.loads(capsys.readouterr().out)


@pytest.mark.parametrize("receiver, hypothesis, clock_status", [
    ("KVRP", "applied", "as specified"),                  # scenario.json: correct firmware
    ("SLMB", "omitted", "fault: periodic term missing"),  # scenario.json: firmware omits the term
])
@pytest.mark.parametrize("products", ["broadcast", "precise"])
def test_demo_scenario_verdicts(capsys, receiver, hypothesis, clock_status, products):
    extra = ["--precise", str(SAMPLE_LOGS / DEMO_SP3), str(SAMPLE_LOGS / DEMO_CLK)] if products == "precise" else []
    s = _demo_audit(receiver, capsys, "--step", "60", *extra)
    assert s["clock_source"] == products
    # The raw logs carry the true clocks (README: "k near 1 in both logs"); GPS e 0.002-0.02 (G15: 0.02,
    # a 13.7 m periodic range term, c F e sqrt(A), IS-GPS-200 20.3.3.3.3.1).
    g = s["relativity_k"]["G"]
    assert g["k"] == pytest.approx(1.0, abs=max(3 * g["sigma"], 0.03)) and g["status"] == "consistent"
    assert g["rms_m"]["applied"] < 0.7 * g["rms_m"]["omitted"]
    assert s["receiver_fixes"]["closest"] == hypothesis and s["receiver_fixes"]["margin_m"] > 5.0
    assert {e["status"] for e in s["receiver_clocks"]["by_system"].values()} == {clock_status}
    assert f"closest to '{hypothesis}'" in s["receiver_verdict"] and clock_status in s["receiver_verdict"]
    # scenario.json sites: the header position is the true one; its median fix error about 0.8 m
    assert s["position"]["median_error_3d_m"] < 2.0
    # Omitting the term moves the fix by the weighted least-squares projection of the per-satellite terms
    # (derived from the scenario's geometry at 10:00, 11:30, 13:00: 17.6, 9.4, 12.5 m); README: SLMB's fixes ~15 m off
    assert s["position"]["median_error_3d_m_without_periodic"] > 8.0


@pytest.mark.refdata
def test_glonass_on_a_rinex_4_log(capsys):
    obs = refdata_file("2022-159/KMS300DNK_R_20221591000_01H_30S_MO.crx")
    nav = refdata_file("2022-159/KMS300DNK_R_20221591000_01H_MN.rnx.gz")
    assert main(["audit", str(obs), str(nav), "--systems", "R", "--json"]) == 0
    s = json.loads(capsys.readouterr().out)
    r = s["relativity_k"]["R"]
    # GLONASS ICD convention (REFERENCE-CHECKS 3.3, NAVI, V): tau_n, gamma_n hold the periodic term.
    assert r["expected_k"] == 0.0
    # 10 minutes cannot show a ~2 ns term with an 11-h period: the fit must say so, not guess.
    assert r["status"].startswith("undetermined")
    assert r["rms_m"]["applied"] < 1.5                 # ionosphere-free code residuals, metre level
    # 6 GLONASS satellites alone: broadcast orbits ~3 m (REFERENCE-CHECKS 3.2), header good to metres
    assert s["position"]["median_error_3d_m"] < 10.0
    assert s["position"]["median_error_3d_m"] == s["position"]["median_error_3d_m_without_periodic"]


@pytest.mark.parametrize("extra, message", [
    (["--systems", "GX"], "--systems: unknown letters X"),
    (["--start", "2025-06-11T12:00", "--end", "2025-06-11T11:00"], "is before --start"),
    (["--summary", "summary.txt"], "unknown output format"),
])
def test_shared_options_are_checked_as_in_the_other_commands(tmp_path, capsys, extra, message):
    extra = [str(tmp_path / e) if e == "summary.txt" else e for e in extra]
    code = main(["audit", str(tmp_path / "missing.rnx"), str(tmp_path / "missing.nav"), *extra])
    err = capsys.readouterr().err
    assert code == 2 and message in err and err.count("\n") == 1


@pytest.mark.refdata
def test_a_system_observed_without_navigation_is_left_out_not_fatal(capsys):
    # NYA1 logs GLONASS but the navigation files given hold none: positions must still be solved.
    nav = [refdata_file(f"2024-124/NYA100NOR_S_20241240000_01D_{k}N.rnx.gz") for k in "GEC"]
    code = main(["audit", str(refdata_file(OBS)), *map(str, nav), "--start", "2024-05-03T06:00",
                 "--end", "2024-05-03T06:20"])
    out = capsys.readouterr().out
    assert code == 0
    title, *rest = out.splitlines()
    assert title.startswith("audit of a receiver log:") and "of GEC" in title and title.endswith("GPST")
    assert "06:00:00 to 06:20:00" in title and ".000000000" not in out
    assert "median 3-D position error" in out                       # the fix is not voided by GLONASS
    header = next(line for line in rest if line.startswith("system"))
    assert "RMS applied (m)" in header and "sigma k" in header
    rows = [line[:9].strip() for line in rest if line[:1] in "GECJR" and line[1:2] == " "]
    assert rows == ["G GPS", "E Galileo", "C BeiDou"]               # G E C J R order
