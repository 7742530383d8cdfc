"""`gnssrel audit --antex`: precise positions (centre of mass) moved to the antenna phase centre of
the code pair each system's pseudoranges use, and the Galileo F/NAV pair in orbits --precise (issue 14).

Independent values: carrier frequencies (IS-GPS-200 3.3.1.1: L1 1575.42, L2 1227.60 MHz; Galileo
OS SIS ICD 2.3: E1 1575.42, E5a 1176.45, E5b 1207.14 MHz; BDS-SIS-ICD-B1I/B3I: B1I 1561.098,
B3I 1268.52 MHz; published); the ionosphere-free offset (f1^2 o1 - f2^2 o2) / (f1^2 - f2^2) (common
practice); the yaw-steering frame's z axis points to the Earth's centre (IGS convention), so the
shift's radial part is minus the z offset whatever the Sun does.  The offsets typed below are
invented (of the size of real ones: GPS IIR z ~ 0, IIF ~ 1.6 m, Galileo ~ 0.8 m), not from a file.
The demo data: sample_logs (invented scenario, sample_logs/README.md).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import SAMPLE_LOGS
from test_antex import build_antex, satellite_block
from test_sisre import _circular_states

from gnssrel.audit.observables import prepare_observations
from gnssrel.cli import main
from gnssrel.io.antex import read_antex
from gnssrel.io.rinex_nav import read_navigation
from gnssrel.io.rinex_obs import read_observations
from gnssrel.orbits.antenna import to_phase_centre
from gnssrel.pipeline.inputs import read_precise

MHZ = {"G1": 1575.42, "G2": 1227.60, "G5": 1176.45, "E1": 1575.42, "E5": 1176.45, "E7": 1207.14,
       "C2": 1561.098, "C6": 1268.52}
OBS = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"
NAV = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"
SP3 = SAMPLE_LOGS / "KVA0DEMFIN_20251620830_06H_15M_ORB.SP3"
OFFSETS = {   # body frame x, y, z in mm per ANTEX frequency code (invented)
    "G01": {"G01": (394.0, 0.0, 1500.0), "G02": (394.0, 0.0, 1600.0), "G05": (394.0, 0.0, 1700.0)},
    "G05": {"G01": (0.0, 0.0, 0.0), "G02": (0.0, 0.0, 0.0)},
    "E11": {"E01": (200.0, 10.0, 800.0), "E05": (200.0, 10.0, 700.0), "E07": (200.0, 10.0, 750.0)},
    "C22": {"C02": (600.0, 0.0, 1100.0), "C06": (600.0, 0.0, 1000.0)},
}


def _free(system, codes, offsets_mm):
    f = [MHZ[system + c[1]] ** 2 for c in codes]
    o = [np.array(offsets_mm[f"{system}0{c[1]}"]) / 1000.0 for c in codes]
    return (f[0] * o[0] - f[1] * o[1]) / (f[0] - f[1])


@pytest.fixture(scope="module")
def demo():
    if not OBS.is_file():
        pytest.skip("sample_logs/ is not in this checkout")
    obs = read_observations(OBS, start=np.datetime64("2025-06-11T10:00"), end=np.datetime64("2025-06-11T10:05"))
    return obs, read_navigation(NAV)


def test_audit_positions_move_to_the_phase_centre_of_its_codes(demo, tmp_path):
    obs_ds, nav = demo
    atx = read_antex(build_antex(tmp_path / "demo.atx", [satellite_block(sv, f"{sv[0]}9{sv[1:]}", o)
                                                         for sv, o in OFFSETS.items()]))
    plain = prepare_observations(obs_ds, nav, precise=read_precise([SP3]))
    precise = {**read_precise([SP3]), "antex": atx}
    moved = prepare_observations(obs_ds, nav, precise=precise)
    shift = moved["satellite_ecef_m"] - plain["satellite_ecef_m"]
    radial = np.einsum("ni,ni->n", shift, plain["satellite_ecef_m"]) / np.linalg.norm(plain["satellite_ecef_m"], axis=1)
    seen = set()
    for sv, offsets in OFFSETS.items():
        at = moved["sv"] == sv
        if not at.any():
            continue
        codes = str(moved["code"][at][0]).split("+")
        expected = _free(sv[0], codes, offsets)
        np.testing.assert_allclose(radial[at], -expected[2], atol=1e-6)
        np.testing.assert_allclose(np.linalg.norm(shift[at], axis=1), np.linalg.norm(expected), atol=1e-6)
        seen.add(sv)
    assert seen == {"G01", "G05", "E11", "C22"}
    # G01's pair in this log is C1C+C2W, so its L5 offset plays no part: z = 1.5 - 0.1 f2^2 / (f1^2 - f2^2)
    # = 1.3454 m by hand (checked below on the recorded offset)
    others = ~np.isin(moved["sv"], list(OFFSETS))
    assert np.array_equal(shift[others], np.zeros_like(shift[others]))      # no antenna: centre of mass kept
    info = precise["antenna_offsets"]
    assert info["G"]["offsets_body_m"]["G01"][2] == pytest.approx(1.3454, abs=1e-4)
    assert info["G"]["codes"] == "C1C+C2W" and info["G"]["antex_codes"] == "G01/G02"
    assert info["E"]["antex_codes"] == "E01/E05" and "E01" in info["E"]["missing"]
    assert len(precise["antenna_ledger"].warnings) == len([s for e in info.values() for s in e["missing"]])


def test_audit_antex_on_the_command_line(tmp_path, capsys):
    if not OBS.is_file():
        pytest.skip("sample_logs/ is not in this checkout")
    atx = build_antex(tmp_path / "demo.atx", [satellite_block(sv, f"{sv[0]}9{sv[1:]}", o) for sv, o in OFFSETS.items()])
    base = ["audit", str(OBS), str(NAV), "--precise", str(SP3), "--start", "2025-06-11T10:00",
            "--end", "2025-06-11T10:10", "--json"]
    assert main([*base, "--antex", str(atx)]) == 0
    s = json.loads(capsys.readouterr().out)
    entry = s["antenna_offsets"]
    assert entry["applied"] is True and set(entry["by_system"]) == {"G", "E", "C"}
    assert entry["by_system"]["G"]["offsets_body_m"]["G05"] == [0.0, 0.0, 0.0]
    assert s["accounting"]["antenna_blocks"]["G"]["used"] == 2
    assert any("antenna offset of E01 not applied" in w for w in s["accounting"]["warnings"])
    assert main(base) == 0
    assert json.loads(capsys.readouterr().out)["antenna_offsets"]["applied"] is False
    assert main(["audit", str(OBS), str(NAV), "--antex", str(atx)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--antex" in err[0]


def test_fnav_epochs_use_the_e1_e5a_pair(tmp_path):
    times = np.datetime64("2020-06-25T00:00", "ns") + np.arange(0, 4 * 900, 900).astype("timedelta64[s]")
    precise = _circular_states(["E11"], times)
    atx = read_antex(build_antex(tmp_path / "e.atx", [satellite_block("E11", "E911", OFFSETS["E11"])]))
    kinds = np.array([["INAV"], ["FNAV"], ["FNAV"], [""]], dtype=object)
    moved, info = to_phase_centre(precise, atx, nav_types=kinds)
    r = precise["position_ecef_m"].values[:, 0]
    d = moved["position_ecef_m"].values[:, 0] - r
    radial = np.einsum("ti,ti->t", d, r) / np.linalg.norm(r, axis=1)
    inav, fnav = _free("E", ("C1C", "C7Q"), OFFSETS["E11"]), _free("E", ("C1C", "C5Q"), OFFSETS["E11"])
    np.testing.assert_allclose(radial, [-inav[2], -fnav[2], -fnav[2], -inav[2]], atol=1e-6)
    assert abs(inav[2] - fnav[2]) > 0.05                         # the two pairs really differ here
    np.testing.assert_allclose(info["record_pairs"]["E11"]["FNAV"], fnav, atol=1e-12)
    assert "E1/E5a (F/NAV)" in info["combination"]["E"]


def test_the_record_type_serving_each_epoch_comes_from_the_ephemeris_row():
    from types import SimpleNamespace

    import pandas as pd
    import xarray as xr

    from gnssrel.jobs.orbits import serving_record_types

    states = xr.Dataset({"ephemeris_row": (("time", "sv"), np.array([[0, 2], [1, -1]]))},
                        coords={"time": np.array(["2020-06-25T00:00", "2020-06-25T00:15"], dtype="datetime64[ns]"),
                                "sv": ["E11", "G05"]})
    nav = SimpleNamespace(ephemerides={"E": pd.DataFrame({"nav_type": ["INAV", "FNAV"]}),
                                       "G": pd.DataFrame({"nav_type": ["LNAV", "LNAV", "CNAV"]})})
    kinds = serving_record_types(states, nav, ["G05", "E11", "R07"])
    assert kinds.tolist() == [["CNAV", "INAV", ""], ["", "FNAV", ""]]
