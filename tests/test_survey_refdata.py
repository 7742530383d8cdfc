"""`gnssrel survey` on a real station: ESBC 2020-177 (full day, 30 s) with GRG final orbits and clocks.

Facts checked (sources beside each):
* ESBC's header position is an ETRS89 coordinate (the station is run by the Danish agency SDFE,
  which publishes ETRS89 coordinates; found here: the solution in the orbits' frame (IGS14) lies
  0.74 m north-east of it, the Eurasian plate's motion since 1989 (~2.4 cm/yr, common knowledge),
  and 5 cm from it after an approximate ITRF -> ETRF2000 transformation, gnssrel.survey.etrs).
* Without receiver antenna model (ASH701945E_M, ionosphere-free offset of a few cm up, from memory)
  and without satellite antenna offsets (no full ANTEX file in refdata), the vertical may be off by
  several cm: the bound is the issue's 10 cm.
* k of the periodic term from phase: 1 within a few thousandths (issue 15, expectation).
"""

from __future__ import annotations

import json

import pytest
from conftest import refdata_file

from gnssrel.cli import main

DAY = "2020-177/"


def _run(tmp_path_factory, systems):
    obs = refdata_file(DAY + "ESBC00DNK_R_20201770000_01D_30S_MO.crx.gz")
    nav = refdata_file(DAY + "ESBC00DNK_R_20201770000_01D_MN.rnx.gz")
    precise = [refdata_file(DAY + f) for f in ("GRG0MGXFIN_20201760000_01D_15M_ORB.SP3.gz",
                                               "GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz",
                                               "GRG0MGXFIN_20201770000_01D_30S_CLK.CLK.gz")]
    out = tmp_path_factory.mktemp("survey") / "summary.json"
    argv = ["survey", str(obs), str(nav), "--precise", *map(str, precise), "--systems", systems,
            "--summary", str(out), "-q"]
    assert main(argv) == 0
    return json.loads(out.read_text())


@pytest.fixture(scope="module")
def gps(tmp_path_factory):
    return _run(tmp_path_factory, "G")


@pytest.fixture(scope="module")
def gps_galileo(tmp_path_factory):
    return _run(tmp_path_factory, "GE")


@pytest.mark.refdata
@pytest.mark.parametrize("which", ["gps", "gps_galileo"])
def test_position_against_the_header(which, request):
    s = request.getfixturevalue(which)
    p = s["position"]
    assert p["reference"] == "header"
    # In the orbits' frame: the plate motion of 31 years, toward north-east (module text)
    assert 0.35 < p["east_m"] < 0.6 and 0.45 < p["north_m"] < 0.7
    assert abs(p["up_m"]) < 0.10                                      # issue 15: vertical within 10 cm
    check = p["etrf2000_check_m"]                                     # like with like (approximate frame)
    assert (check["east"] ** 2 + check["north"] ** 2) ** 0.5 < 0.06
    assert abs(check["up"]) < 0.10
    # Issue 15's bounds (horizontal 3 cm, vertical 10 cm) hold for the point a user of these IGS-convention
    # clocks should take: -2 r.v/c^2 on the precise state and no J2 term (the clocks absorb it), turned
    # into ETRF2000 like the header (measured: GPS 1.4 cm, GPS+Galileo 0.6 cm horizontal).
    pc = s["position_product_convention"]["etrf2000_check_m"]
    assert (pc["east"] ** 2 + pc["north"] ** 2) ** 0.5 < 0.03 and abs(pc["up"]) < 0.10
    for axis in ("east", "north", "up"):                              # 4 x 6 h parts agree to cm
        assert p["realistic_sigma_m"][axis] < 0.03
        assert p["formal_sigma_m"][axis] < p["realistic_sigma_m"][axis]
    assert p["n_epochs"] > 2800


@pytest.mark.refdata
def test_term_effects_and_k_from_phase(gps_galileo):
    effects = gps_galileo["term_effects_mm"]
    assert set(effects) >= {"periodic", "j2", "shapiro", "periodic_state_form"}
    size = {k: sum(v ** 2 for v in e.values()) ** 0.5 for k, e in effects.items()}
    assert size["periodic"] > 1000.0            # metres: the periodic term is ~7 m at e = 0.01 (derived)
    assert size["j2"] < 50.0                    # the J2 term is +-2 cm in range (Kouba 2004)
    assert 1.0 < size["shapiro"] < 20.0         # 12-19 mm in range, mostly common to all: a few mm up
    assert size["periodic_state_form"] < 30.0   # the forms differ by up to 0.06 ns = 2 cm in range
    k = gps_galileo["relativity_k_phase"]["G"]
    assert abs(k["k"] - 1.0) < 0.005 and k["sigma"] < 0.005
    assert k["sigma"] > k["sigma_formal"]       # the jackknife is the honest one
    assert abs(k["code_only"]["k"] - 1.0) < 0.1 and k["code_only"]["sigma_formal"] > 10 * k["sigma_formal"]
    assert gps_galileo["accounting"]["observations"]["G"]["arc shorter than the minimum"] > 0
    # GRG clocks are estimated with -2 r.v/c^2 and no J2 term (IGS convention): that model fits the
    # phase best (measured: 18.7 mm RMS against 25.6 mm with the specification form and the J2 term)
    rms = gps_galileo["phase_residual_rms_mm"]
    assert rms["product_convention"] < rms["periodic_state_form"] < rms["full"]
    assert rms["product_convention"] < rms["j2"] < rms["full"]
    assert rms["periodic"] > 50 * rms["full"]


@pytest.mark.refdata
def test_antex_moves_the_orbits_and_says_what_it_lacks(tmp_path):
    # the refdata ANTEX excerpt holds a few antennas only (refdata README): the others are warned about
    obs = refdata_file(DAY + "ESBC00DNK_R_20201770000_01D_30S_MO.crx.gz")
    nav = refdata_file(DAY + "ESBC00DNK_R_20201770000_01D_MN.rnx.gz")
    antex = refdata_file("antex/igs14_small.atx.gz")
    precise = [refdata_file(DAY + f) for f in ("GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz",
                                               "GRG0MGXFIN_20201770000_01D_30S_CLK.CLK.gz")]
    out = tmp_path / "s.json"
    assert main(["survey", str(obs), str(nav), "--precise", *map(str, precise), "--antex", str(antex),
                 "--systems", "G", "--start", "2020-06-25T03:00", "--end", "2020-06-25T06:00", "--no-jackknife",
                 "--summary", str(out), "-q"]) == 0
    s = json.loads(out.read_text())
    missing = s["satellite_antenna_offsets"]["missing"]
    assert missing and all(sv.startswith("G") for sv in missing)
    assert any("antenna offset of" in w for w in s["accounting"]["warnings"])
    assert abs(s["position"]["up_m"]) < 0.3
