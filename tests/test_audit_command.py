"""`gnssrel audit` on the command line: bad input gives one line and exit 2; a real run writes its outputs."""

import json

import numpy as np
import pytest
from conftest import refdata_file

from gnssrel.cli import main

OBS = "2024-124/NYA100NOR_S_20241240000_01D_30S_MO.crx.gz"
NAV = "2024-124/NYA100NOR_S_20241240000_01D_GN.rnx.gz"


@pytest.mark.parametrize("extra, message", [
    (["--position", "1,2"], "--position"),
    (["--position", "0,0,0"], "--position"),
    (["--precise", "x.sp3"], "--precise"),
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
    pytest.importorskip("gnssrel.io.rinex_obs", reason="the fast observation reader is not available")
    summary_path, table, positions = tmp_path / "s.json", tmp_path / "c.csv", tmp_path / "p.csv"
    code = main(["audit", str(refdata_file(OBS)), str(refdata_file(NAV)), "--systems", "G",
                 "--start", "2024-05-03T06:00:00 GPST", "--end", "2024-05-03T09:00:00 GPST", "--step", "300",
                 "--output", str(table), "--positions", str(positions), "--summary", str(summary_path), "--json"])
    assert code == 0
    printed = json.loads(capsys.readouterr().out)
    summary = json.loads(summary_path.read_text())
    assert printed == summary
    assert set(summary) >= {"observations", "relativity_k", "position", "receiver_verdict"}
    assert set(summary["observations"]) == {"n_epochs", "n_sat", "systems"}
    assert summary["observations"]["n_epochs"] == 37 and summary["observations"]["systems"] == ["G"]
    assert set(summary["relativity_k"]["G"]) >= {"k", "sigma", "rms_m"}
    assert set(summary["relativity_k"]["G"]["rms_m"]) == {"applied", "omitted", "reversed", "doubled"}
    assert set(summary["position"]) >= {"reference", "median_error_3d_m", "median_error_3d_m_without_periodic"}
    assert summary["position"]["median_error_3d_m"] < 6.0
    import pandas as pd
    assert len(pd.read_csv(positions)) == 37
    assert np.isfinite(pd.read_csv(table)["troposphere_m"]).all()
