"""``--position`` as ECEF or WGS-84 latitude/longitude/height, and positions output in both (issue 12).

Geodetic <-> ECEF is checked against the closed form of NGA TR8350.2 (2000) eq. 4-14/4-15 (published)
through gnssrel.geodesy, and the east/north/up errors against a known offset built in the test.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from conftest import SAMPLE_LOGS

from gnssrel.audit.summary import HEADER_POSITION_NOTE, AuditResult, per_epoch_errors
from gnssrel.cli import main
from gnssrel.errors import GnssrelInputError
from gnssrel.geodesy import ecef_to_geodetic, enu_rotation, geodetic_to_ecef
from gnssrel.jobs.common import parse_position

NY_ALESUND = (78.93, 11.87, 80.0)   # a point near the NYA1 station, degrees and metres


def test_latitude_longitude_height_and_ecef_forms_agree():
    expected = geodetic_to_ecef(np.radians(78.93), np.radians(11.87), 80.0)
    for text in ("78.93,11.87,80", "78.93 11.87 80", "lat=78.93 lon=11.87 h=80",
                 "latitude=78.93, longitude=11.87, height=80"):
        xyz, kind = parse_position(text)
        assert np.allclose(xyz, expected, atol=1e-6) and kind.startswith("latitude"), text
    ecef_text = ",".join(f"{v:.4f}" for v in expected)
    xyz, kind = parse_position(ecef_text)
    assert kind == "ECEF" and np.allclose(xyz, expected, atol=1e-4)
    xyz, _ = parse_position("x={:.4f} y={:.4f} z={:.4f}".format(*expected))
    assert np.allclose(xyz, expected, atol=1e-4)
    lat, lon, h = ecef_to_geodetic(xyz)
    assert np.degrees(lat) == pytest.approx(78.93, abs=1e-9) and np.degrees(lon) == pytest.approx(11.87, abs=1e-9)
    assert h == pytest.approx(80.0, abs=1e-4)


@pytest.mark.parametrize("text, words", [
    ("1,2", "three numbers"),
    ("0,0,0", "no position"),
    ("1_0,2,3", "cannot read '1_0'"),                      # a strict reading refuses underscores
    ("nan,1,2", "cannot read 'nan'"),
    ("95,10,0", "out of range"),
    ("78.9,11.8,8e5", "height 800000 m"),                 # neither a height nor an ECEF position
    ("lat=78 lon=11", "each once"),
    ("lat=78 lon=11 q=3", "cannot read 'q=3'"),
    ("10,20,300000", "height 300000 m"),            # 300 km: neither a height nor ECEF
])
def test_ambiguous_or_damaged_positions_are_refused(text, words):
    with pytest.raises(GnssrelInputError, match="--position") as err:
        parse_position(text)
    assert words in str(err.value)


def _result(reference, offset_enu):
    ref = geodetic_to_ecef(np.radians(NY_ALESUND[0]), np.radians(NY_ALESUND[1]), NY_ALESUND[2])
    rot = enu_rotation(np.radians(NY_ALESUND[0]), np.radians(NY_ALESUND[1]))
    xyz = ref + np.asarray(offset_enu) @ rot                  # rows east, north, up -> ECEF
    times = np.array(["2024-05-03T00:00", "2024-05-03T00:00:30"], "datetime64[ns]")
    pos = pd.DataFrame({"time": times, "x_m": xyz[:, 0], "y_m": xyz[:, 1], "z_m": xyz[:, 2], "clock_m": 0.0})
    return AuditResult(corrections=pd.DataFrame(), k_fits={}, positions={"applied": pos, "sagnac-omitted": pos},
                       reference=reference, reference_ecef_m=ref if reference != "none" else None,
                       n_epochs=2, n_sat=8, systems=["G"])


def test_positions_table_has_latitude_longitude_height_and_east_north_up_errors():
    table = per_epoch_errors(_result("given", [[1.0, 2.0, -3.0], [0.0, 0.0, 0.5]]))
    assert table["east_error_applied_m"].tolist() == pytest.approx([1.0, 0.0], abs=1e-6)
    assert table["north_error_applied_m"].tolist() == pytest.approx([2.0, 0.0], abs=1e-6)
    assert table["up_error_applied_m"].tolist() == pytest.approx([-3.0, 0.5], abs=1e-6)
    assert table["error_3d_m_applied"].tolist() == pytest.approx([np.sqrt(14.0), 0.5], abs=1e-6)
    assert table["height_applied_m"].tolist() == pytest.approx([77.0, 80.5], abs=1e-5)
    # one metre north is 1/111 km of latitude: about 9.0e-6 degrees at 79 degrees (derived)
    assert table["latitude_applied_deg"][0] - NY_ALESUND[0] == pytest.approx(2.0 / 111_700, rel=0.01)
    assert "east_error_sagnac_omitted_m" in table
    # no reference: positions in latitude/longitude/height, no errors
    bare = per_epoch_errors(_result("none", [[1.0, 2.0, -3.0], [0.0, 0.0, 0.5]]))
    assert "latitude_applied_deg" in bare and "east_error_applied_m" not in bare


def _audit(capsys, *extra):
    argv = ["audit", str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"),
            str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"), "--systems", "G",
            "--start", "2025-06-11T10:00", "--end", "2025-06-11T10:30", *extra]
    assert main(argv + ["--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_audit_takes_a_geodetic_position_and_notes_the_approximate_header(tmp_path, capsys):
    truth = json.loads((SAMPLE_LOGS / "scenario.json").read_text())
    site = next(s for s in truth["sites"] if s["marker"] == "KVRP")
    geodetic = _audit(capsys, "--position", f"lat={site['lat_deg']!r} lon={site['lon_deg']!r} h={site['height_m']!r}")
    ecef = _audit(capsys, "--position", ",".join(repr(v) for v in site["position_ecef_m"]))
    assert geodetic["position"]["reference"] == ecef["position"]["reference"] == "given"
    assert geodetic["position"]["median_error_3d_m"] == pytest.approx(ecef["position"]["median_error_3d_m"],
                                                                      abs=1e-6)
    assert "reference_note" not in geodetic["position"]
    header = _audit(capsys, "--positions", str(tmp_path / "p.csv"))
    assert header["position"]["reference"] == "header"
    assert header["position"]["reference_note"] == HEADER_POSITION_NOTE
    table = pd.read_csv(tmp_path / "p.csv")
    assert {"latitude_applied_deg", "longitude_applied_deg", "height_applied_m", "east_error_applied_m",
            "north_error_applied_m", "up_error_applied_m"} <= set(table.columns)
    assert table["latitude_applied_deg"].median() == pytest.approx(site["lat_deg"], abs=1e-4)
    main(["audit", str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"),
          str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"), "--systems", "G",
          "--start", "2025-06-11T10:00", "--end", "2025-06-11T10:30"])
    assert "note: the reference is the observation file header's approximate position" in capsys.readouterr().out
