"""`gnssrel survey` through its command line on a 3-h invented log (gnssrel.simulate.write_survey):
the a-priori position does not matter, the outputs are written, the ledger balances, refusals are one
line.  The acceptance figures on the invented day are in test_survey_simulated.py."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from gnssrel.accounting import Ledger
from gnssrel.cli import main


@pytest.fixture(scope="module")
def log3h(tmp_path_factory):
    from gnssrel.simulate.write_survey import write_survey

    out = tmp_path_factory.mktemp("survey3h")
    manifest = write_survey(out, seed=20250611, hours=3.0)
    path = {f["kind"]: str(out / f["path"]) for f in manifest["files"]}
    argv = ["survey", path["observations"], path["navigation"], "--precise", path["sp3"], path["clock"], "-q"]
    return out, manifest, argv


def _solve(argv, out, name):
    target = out / f"{name}.json"
    assert main([*argv, "--summary", str(target)]) == 0
    return json.loads(target.read_text())


def test_the_a_priori_position_does_not_move_the_solution(log3h):
    out, manifest, argv = log3h
    truth = np.array(manifest["survey"]["marker_ecef_m"])
    first = _solve(argv, out, "header")["position"]
    off = truth + np.array([3.0, -4.0, 2.0])                     # 5.4 m away: two linearizations
    second = _solve([*argv, "--position", ",".join(f"{v:.4f}" for v in off)], out, "off")["position"]
    a = np.array([first[k] for k in ("x_m", "y_m", "z_m")])
    b = np.array([second[k] for k in ("x_m", "y_m", "z_m")])
    assert np.linalg.norm(a - truth) < 0.005                      # 3 h of invented data, float ambiguities
    assert np.linalg.norm(a - b) < 1e-4
    assert np.hypot(second["east_m"], second["north_m"]) > 4.0    # compared with the given reference


def test_outputs_and_a_balanced_ledger(log3h, capsys):
    out, _, argv = log3h
    table = out / "residuals.csv"
    assert main([*argv[:-1], "--json", "--output", str(table)]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert set(summary["position"]) >= {"x_m", "y_m", "z_m", "reference", "east_m", "north_m", "up_m"}
    assert set(summary["term_effects_mm"]) >= {"periodic", "j2", "shapiro", "periodic_state_form"}
    assert set(summary["relativity_k_phase"]["G"]) >= {"k", "sigma"}
    assert not Ledger.from_dict(summary["accounting"]).unbalanced()
    rows = pd.read_csv(table)
    assert {"time", "sv", "code_residual_m", "phase_residual_m", "elevation_deg"} <= set(rows.columns)
    assert len(rows) == summary["position"]["n_observations"] + summary["arcs"]["outliers_dropped"]
    assert rows["phase_residual_m"].abs().median() < 0.01
    hours = [c["hours"] for c in summary["convergence"]]
    assert hours == [1.0, 2.0, 3.0] and summary["convergence"][-1]["to_final_3d_m"] == 0.0


def test_every_arc_too_short_is_refused_in_one_line(log3h, capsys):
    _, _, argv = log3h
    assert main([*argv, "--min-arc", "400"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "too few observations" in err[0]
