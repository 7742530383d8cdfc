"""Observation header parsing, checked against the header text of the real files.

Expected values are copied from the files' own header lines (status: the file text),
time-scale offsets from their definitions (status: published, cited beside each).
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import ONE_MILLIMETRE, refdata_file

from gnssrel import read_observations
from gnssrel.errors import FileFormatError
from gnssrel.io.opening import read_bytes
from gnssrel.io.rinex_obs_header import parse_obs_header


def _header(relative):
    path = refdata_file(relative)
    return parse_obs_header(read_bytes(path), path)[0]


@pytest.mark.refdata
def test_rinex211_delf():
    h = _header("2021-001/delf0010.21o")
    assert h["version"] == 2.11 and h["file_system"] == "M"
    # "  3924687.7020   301132.7660  5001910.7750                  APPROX POSITION XYZ"
    np.testing.assert_allclose(h["position"], [3924687.7020, 301132.7660, 5001910.7750], atol=ONE_MILLIMETRE)
    assert h["antenna_delta_hen_m"] == [0.05, 0.0, 0.0]
    assert h["fields_v2"] == ["L1", "L2", "C1", "P2", "P1", "S1", "S2"]
    assert h["interval_s"] == 30.0 and h["leap_seconds"] == 18
    assert h["time_of_first_obs"] == np.datetime64("2021-01-01T00:00:00")
    assert h["time_of_last_obs"] is None
    assert h["file_time_scale"] == "GPS" and h["source_time_scale"] == "GPST"
    assert h["marker_name"] == "DELFT-16" and h["receiver"]["type"] == "TPS ODYSSEY_E"


@pytest.mark.refdata
def test_rinex302_pdel():
    h = _header("2021-001/pdel0010.21o")
    assert h["version"] == 3.02
    assert h["fields"] == {"G": ["C1C", "L1C", "D1C", "S1C", "C2W", "L2W", "D2W", "S2W"],
                           "R": ["C1C", "L1C", "D1C", "S1C", "C2P", "L2P", "D2P", "S2P"]}
    # "GLONASS SLOT / FRQ #": 23 slots, " 23 R01  1 R02 -4 ..." ... "R24  2"
    assert len(h["glonass_slots"]) == 23
    assert h["glonass_slots"]["R01"] == 1 and h["glonass_slots"]["R02"] == -4
    assert h["glonass_slots"]["R24"] == 2 and "R11" not in h["glonass_slots"]
    assert h["time_of_last_obs"] == np.datetime64("2021-01-01T23:59:30")
    assert h["receiver_clock_offset_applied"] is False


@pytest.mark.refdata
def test_rinex305_nya1_continuation_lines():
    h = _header("2024-124/NYA100NOR_S_20241240000_01D_30S_MO.crx.gz")
    assert h["version"] == 3.05
    assert {k: len(v) for k, v in h["fields"].items()} == {"G": 16, "R": 20, "E": 20, "C": 12}
    # the G list continues on a second line: "       L5X D5X S5X"
    assert h["fields"]["G"][12:] == ["C5X", "L5X", "D5X", "S5X"]
    np.testing.assert_allclose(h["position"], [1202434.1303, 252632.2212, 6237772.4351], atol=ONE_MILLIMETRE)
    assert h["receiver"] == {"number": "5207K82137", "type": "TRIMBLE NETR9", "version": "5.52"}
    assert h["antenna"]["type"] == "ASH701073.1     SNOW"


@pytest.mark.refdata
def test_rinex400_kms3():
    h = _header("2022-159/KMS300DNK_R_20221591000_01H_30S_MO.crx")
    assert h["version"] == 4.0
    assert set(h["fields"]) == {"C", "E", "G", "J", "R", "S"}
    assert h["fields"]["S"] == ["C1C", "C5I", "L1C", "L5I"]
    np.testing.assert_allclose(h["position"], [3516213.4380, 781859.8595, 5246037.9660], atol=ONE_MILLIMETRE)


def _pdel_with_scale(tmp_path, scale, keep_leap=True):
    lines = refdata_file("2021-001/pdel0010.21o").read_text().splitlines(keepends=True)
    out = []
    for ln in lines:
        if "TIME OF FIRST OBS" in ln[60:]:
            ln = ln[:48] + f"{scale:3s}" + ln[51:]
        if "LEAP SECONDS" in ln[60:] and not keep_leap:
            continue
        out.append(ln)
    path = tmp_path / f"pdel_{scale}.21o"
    path.write_text("".join(out))
    return path


@pytest.mark.refdata
@pytest.mark.parametrize("scale, keep_leap, offset_s, name", [
    # "GLO (=UTC time system)": RINEX 2.11 table A1 and RINEX 3.x table A2 (the latter from
    # memory): the time tags are UTC, not GLONASST = UTC(SU) + 3 h; GPST - UTC = 18 s from the
    # header LEAP SECONDS line (and from IERS Bulletin C since 2017-01-01, published).
    ("GLO", True, 18, "UTC"),
    ("GLO", False, 18, "UTC"),
    # BDT = GPST - 14 s (BDS-SIS-ICD-B1I 3.0, 5.2.2, published).
    ("BDT", True, 14, "BDT"),
    ("GAL", True, 0, "GST"),
])
def test_time_scale_of_first_obs_converts_to_gpst(tmp_path, scale, keep_leap, offset_s, name):
    gps = read_observations(refdata_file("2021-001/pdel0010.21o"))
    ds = read_observations(_pdel_with_scale(tmp_path, scale, keep_leap))
    assert ds.attrs["source_time_scale"] == name and ds.attrs["time_scale"] == "GPST"
    shift = (ds.time.values - gps.time.values).astype("timedelta64[s]").astype(int)
    assert (shift == offset_s).all()
    np.testing.assert_array_equal(ds["C1C"].values, gps["C1C"].values)


def _synthetic_rinex2(n_sat=13):
    """A RINEX 2.11 file with 11 types (two TYPES OF OBSERV lines, three data lines per
    satellite) and 13 satellites in one epoch (a continuation line in the epoch record)."""
    types = ["L1", "L2", "C1", "P1", "P2", "S1", "S2", "L5", "C5", "S5", "D1"]
    head = [("     2.11           OBSERVATION DATA    M (MIXED)", "RINEX VERSION / TYPE"),
            ("TEST", "MARKER NAME"),
            ("  1000000.0000  2000000.0000  3000000.0000", "APPROX POSITION XYZ"),
            ("    11" + "".join(f"{t:>6s}" for t in types[:9]), "# / TYPES OF OBSERV"),
            ("      " + "".join(f"{t:>6s}" for t in types[9:]), "# / TYPES OF OBSERV"),
            ("  2021     1     1     0     0    0.0000000     GPS", "TIME OF FIRST OBS"),
            ("", "END OF HEADER")]
    text = "".join(f"{a:60s}{b}\n" for a, b in head)
    sats = [f"G{k + 1:02d}" for k in range(12)] + ["R01"][: n_sat - 12]
    text += " 21  1  1  0  0  0.0000000  0" + f"{n_sat:3d}" + "".join(sats[:12]) + "\n"
    text += " " * 32 + "".join(sats[12:]) + "\n"
    for k, _ in enumerate(sats):
        fields = []
        for j in range(len(types)):
            if (k, j) == (4, 2):
                fields.append(" " * 16)  # G05 has no C1
            else:
                lli = "1" if j == 0 else " "
                fields.append(f"{1000 * (k + 1) + j + 0.125:14.3f}{lli}{(k + j) % 10}")
        for m in range(0, len(types), 5):
            text += "".join(fields[m:m + 5]).rstrip() + "\n"
    return text


def test_rinex2_continuation_lines_synthetic(tmp_path):
    path = tmp_path / "synthetic.21o"  # not a standard name: no span claimed
    path.write_text(_synthetic_rinex2())
    ds = read_observations(path, with_flags=True)
    assert list(ds.sv.values) == [f"G{k:02d}" for k in range(1, 13)] + ["R01"]
    assert ds.attrs["fields"] == {s: ["L1", "L2", "C1", "P1", "P2", "S1", "S2", "L5", "C5", "S5", "D1"]
                                  for s in "GR"}
    t0 = ds.time.values[0]
    assert ds["D1"].sel(time=t0, sv="R01") == 13000 + 10 + 0.125   # 11th type, 3rd data line
    assert ds["S5"].sel(time=t0, sv="G12") == 12000 + 9 + 0.125
    assert np.isnan(ds["C1"].sel(time=t0, sv="G05")) and ds["C1"].sel(time=t0, sv="G04") == 4002.125
    assert ds["L1lli"].sel(time=t0, sv="G03") == 1 and np.isnan(ds["L2lli"].sel(time=t0, sv="G03"))
    assert ds["P2ssi"].sel(time=t0, sv="G07") == (6 + 4) % 10
    assert ds.attrs["warnings"] == [] and ds.attrs["skipped_epochs"] == 0


def test_declared_count_disagrees_with_list(tmp_path):
    text = _synthetic_rinex2().replace("    11    L1", "    12    L1")
    path = tmp_path / "bad.21o"
    path.write_text(text)
    with pytest.raises(FileFormatError) as err:
        read_observations(path)
    assert str(err.value).startswith(f"{path}:4: # / TYPES OF OBSERV declares 12 types but lists 11")


def test_first_line_must_be_version_line(tmp_path):
    path = tmp_path / "x.21o"
    path.write_text("hello\n" + " " * 60 + "END OF HEADER\n")
    with pytest.raises(FileFormatError, match=r":1: first line is not 'RINEX VERSION / TYPE'"):
        read_observations(path)
