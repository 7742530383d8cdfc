"""Single-frequency logs (broadcast ionosphere models) and carrier-smoothed code, end to end (issue 13).

The demo logs (sample_logs, invented: scenario.json) carry the simulator's Klobuchar ionosphere
with the header's GPSA/GPSB, dual-frequency codes and continuous phase; the real logs are read in
place from refdata: the smartphone log GEOP 2024-092 (one code per system but Galileo) and NYA1
2024-124 (geodetic, forced to one frequency).
"""

import json
from pathlib import Path

import numpy as np
import pytest
from conftest import refdata_file

from gnssrel.cli import main

SAMPLE_LOGS = Path(__file__).resolve().parents[1] / "sample_logs"
DEMO_OBS = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"
DEMO_NAV = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"


def _audit(capsys, *args):
    assert main(["audit", *map(str, args), "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_forced_single_frequency_and_smoothing_on_the_demo(capsys):
    s = _audit(capsys, DEMO_OBS, DEMO_NAV, "--systems", "G", "--frequencies", "single", "--smooth-code", "300")
    g = s["relativity_k"]["G"]
    assert s["codes"]["frequencies"] == "single"
    assert s["codes"]["by_system"]["G"]["code"] == "C1C"
    assert s["codes"]["by_system"]["G"]["ionosphere"]["coefficients"] == "GPSA/GPSB"
    # the simulator's ionosphere is this very model: k as with two frequencies, the model's
    # assumed 50 % error in its sigma (demo, three hours: dual-frequency sigma 0.022)
    assert g["frequencies"] == "single" and g["status"] == "consistent"
    assert g["k"] == pytest.approx(1.0, abs=0.05) and g["sigma_model"] > 0.0
    smooth = s["codes"]["smoothing"]["G"]
    assert smooth["form"] == "single-frequency" and smooth["window_s"] == 100.0     # capped: divergence
    assert smooth["smoothed"] > 2000
    assert s["position"]["median_error_3d_m"] < 1.0                # scenario.json: header = truth


def test_smoothing_lowers_the_code_noise_on_the_demo(capsys):
    raw = _audit(capsys, DEMO_OBS, DEMO_NAV, "--systems", "G")["relativity_k"]["G"]
    smooth = _audit(capsys, DEMO_OBS, DEMO_NAV, "--systems", "G", "--smooth-code", "100")
    assert smooth["codes"]["smoothing"]["G"]["form"] == "ionosphere-free"
    fit = smooth["relativity_k"]["G"]
    # measured on the demo: residual RMS 1.09 m raw, 0.45 m smoothed over 100 s; k unchanged
    assert fit["rms_m"]["applied"] < 0.6 * raw["rms_m"]["applied"]
    assert fit["k"] == pytest.approx(raw["k"], abs=0.02)


def test_a_window_must_be_positive(capsys):
    assert main(["audit", str(DEMO_OBS), str(DEMO_NAV), "--smooth-code", "0"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--smooth-code" in err[0]


GEOP = "2024-092/GEOP092I.24o.gz"
GEOP_NAV = ["2024-092/HERT00GBR_R_20240920000_01D_GN.rnx.gz", "2024-092/BRUX00BEL_R_20240920000_01D_EN.rnx.gz",
            "2024-092/CORD00ARG_R_20240920000_01D_MN.rnx.gz"]


@pytest.mark.refdata
@pytest.mark.parametrize("order", [(0, 1, 2), (2, 1, 0)])
def test_smartphone_log_every_system_has_a_k_or_a_reason(capsys, order):
    nav = [refdata_file(GEOP_NAV[i]) for i in order]
    s = _audit(capsys, refdata_file(GEOP), *nav)
    systems = set(s["observations"]["systems"])
    assert systems == set(s["relativity_k"]) | set(s["relativity_k_not_fitted"])
    by = s["codes"]["by_system"]
    # HERT (GN) and CORD (MN) carry the same GPSA/GPSB; no file carries BDSA/BDSB (headers, 2024-092)
    assert by["G"]["code"] == "C1C" and by["G"]["ionosphere"]["coefficients"] == "GPSA/GPSB"
    assert by["C"]["code"] == "C2I" and "no BDSA/BDSB" in by["C"]["ionosphere"]["note"]
    # the phone's E1+E5a combination measures ~3.4 m (1-s changes of P5 - P1): too noisy, E1 alone
    assert by["E"]["code"] == "C1C" and by["E"]["pair_noise_m"]["ionosphere_free_m"] > 3.0
    # ten minutes cannot show the periodic term: every fitted k says why it is undetermined
    for fit in s["relativity_k"].values():
        assert fit["status"].startswith("undetermined")
    gps = s["relativity_k"]["G"]
    assert gps["frequencies"] == "single" and np.isfinite(gps["sigma_model"])


@pytest.mark.refdata
def test_geodetic_log_forced_to_one_frequency_still_gives_k():
    from gnssrel import read_navigation, read_observations
    from gnssrel.audit.summary import audit_log

    obs = read_observations(refdata_file("2024-124/NYA100NOR_S_20241240000_01D_30S_MO.crx.gz"), systems=["G"])
    t = obs["time"].values.astype("datetime64[ns]").astype("int64")
    obs = obs.isel(time=np.flatnonzero(t % (300 * 10**9) == 0))
    nav = read_navigation(refdata_file("2024-124/NYA100NOR_S_20241240000_01D_GN.rnx.gz"), systems=["G"])
    fit = audit_log(obs, nav, systems=["G"], frequencies="single").k_fits["G"]
    # measured (30-s full day): C1C + Klobuchar k = 1.017 +- 0.018 (model part 0.008), dual 1.015 +- 0.017
    assert fit["frequencies"] == "single" and fit["status"] == "consistent"
    assert fit["k"] == pytest.approx(1.0, abs=0.05)
    assert 0.0 < fit["sigma_model"] < fit["sigma"]
