"""RINEX clock reader checked against the file's own text (GRG 30 s clocks,
2020-177), against synthetic 2.00 / 3.04 files, and on bad input."""

from __future__ import annotations

import gzip

import numpy as np
import pytest
from conftest import refdata_file

from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError
from gnssrel.io.rinex_clock import read_rinex_clock

CLK_177 = "2020-177/GRG0MGXFIN_20201770000_01D_30S_CLK.CLK.gz"


def _text_as_records(path):
    """AS records by whitespace splitting of the file text (independent of the reader)."""
    out = []
    in_body = False
    with gzip.open(path, "rt") as handle:
        lines = handle.read().splitlines()
    for line in lines:
        if not in_body:
            in_body = "END OF HEADER" in line
            continue
        if line.startswith("AS "):
            f = line.split()
            t = np.datetime64(f"{int(f[2]):04d}-{int(f[3]):02d}-{int(f[4]):02d}T{int(f[5]):02d}:{int(f[6]):02d}") \
                + np.timedelta64(round(float(f[7]) * 1e9), "ns")
            out.append((t, f[1], float(f[9]), float(f[10]) if int(f[8]) >= 2 else np.nan))
    return out


@pytest.fixture(scope="module")
def grg_clk():
    path = refdata_file(CLK_177)
    return path, read_rinex_clock(path)


@pytest.mark.refdata
def test_records_match_file_text(grg_clk):
    path, ds = grg_clk
    records = _text_as_records(path)
    assert len(records) == 215_999  # AS lines counted in the file
    assert int(np.isfinite(ds["clock_s"]).sum()) == len(records)
    assert int(np.isfinite(ds["clock_sigma_s"]).sum()) == len(records)
    for t, sv, bias, sigma in records[:100] + records[100_000:100_100] + records[-100:]:
        assert ds["clock_s"].sel(time=t, sv=sv).item() == bias
        assert ds["clock_sigma_s"].sel(time=t, sv=sv).item() == sigma
    # sliced by hand from the last line of the file:
    # "AS G32  2020  6 25 23 59 30.000000  2    0.306534437941E-03  0.706462030878E-11"
    last = ds.sel(time=np.datetime64("2020-06-25T23:59:30"), sv="G32")
    assert last["clock_s"].item() == 0.306534437941e-03
    assert last["clock_sigma_s"].item() == 0.706462030878e-11


@pytest.mark.refdata
def test_header_and_grid(grg_clk):
    _, ds = grg_clk
    assert ds.attrs["version"] == "3.00"
    assert ds.attrs["source_time_system"] == "GPS" and ds.attrs["time_scale"] == "GPST"
    assert ds.attrs["agency"] == "GRG"
    assert ds.sizes["time"] == 2880 and ds.sizes["sv"] == 75  # 30 s day; 75 in "# OF SOLN SATS"
    assert np.all(np.diff(ds["time"].values) == np.timedelta64(30, "s"))
    assert "station_clock_s" not in ds


@pytest.mark.refdata
def test_stations_absent_and_system_filter(refdata):
    path = refdata(CLK_177)
    ds = read_rinex_clock(path, systems="E", kinds=("AS", "AR"))
    assert ds.sizes["sv"] == 24 and all(s.startswith("E") for s in ds["sv"].values)
    # the README of the data notes that this file has AS records only, despite its header
    assert ds.sizes["station"] == 0


# --- synthetic files ---------------------------------------------------------------

def _label(text, label, column):
    return text.ljust(column) + label


def _record(kind, name, epoch, values, name_width):
    y, mo, d, h, mi, s = epoch
    head = f"{kind} {name:<{name_width}s} {y:4d} {mo:2d} {d:2d} {h:2d} {mi:2d}{s:10.6f}{len(values):3d}   "
    first = " ".join(f"{v:19.12E}" for v in values[:2])
    lines = [head + first]
    if len(values) > 2:
        lines.append(" ".join(f"{v:19.12E}" for v in values[2:]))
    return lines


def _clock_file(version="3.04", time_system="GPS", leap=None):
    wide = version >= "3.04"
    column = 65 if wide else 60
    width = 9 if wide else 4
    lines = [_label(f"{float(version):9.2f}           C                   M", "RINEX VERSION / TYPE", column),
             _label("TEST                TEST                20200702 084150 UTC", "PGM / RUN BY / DATE", column)]
    if version >= "3.00":
        lines.append(_label(f"   {time_system}", "TIME SYSTEM ID", column))
    if leap is not None:
        lines.append(_label(f"{leap:6d}", "LEAP SECONDS", column))
    lines += [_label("     2    AR    AS", "# / TYPES OF DATA", column),
              _label("TST  test centre", "ANALYSIS CENTER", column),
              _label("", "END OF HEADER", column)]
    station = "MOJN00DNK" if wide else "MOJN"
    lines += _record("AR", station, (2020, 6, 25, 0, 0, 0.0), [1.5e-7, 2.0e-11], width)
    lines += _record("AS", "G01", (2020, 6, 25, 0, 0, 0.0), [-1.25e-4, 3.0e-11], width)
    lines += _record("AS", "E11", (2020, 6, 25, 0, 0, 0.0), [2.5e-4, 1.0e-11, 1.0e-12, 2.0e-13], width)
    lines += _record("AS", "C20", (2020, 6, 25, 0, 0, 30.0), [-3.75e-4], width)
    lines += _record("AR", station, (2020, 6, 25, 0, 0, 30.0), [1.6e-7, 2.0e-11], width)
    lines += _record("AS", "G01", (2020, 6, 25, 0, 0, 30.0), [-1.26e-4, 3.0e-11], width)
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("version", ["2.00", "3.00", "3.02", "3.04"])
def test_layouts_and_record_kinds(tmp_path, version):
    path = tmp_path / f"v{version}.clk"
    path.write_text(_clock_file(version))
    ds = read_rinex_clock(path, kinds=("AS", "AR"))
    t0, t1 = np.datetime64("2020-06-25T00:00", "ns"), np.datetime64("2020-06-25T00:00:30", "ns")
    np.testing.assert_array_equal(ds["time"].values, [t0, t1])
    assert list(ds["sv"].values) == ["C20", "E11", "G01"]
    assert ds["clock_s"].sel(sv="G01").values.tolist() == [-1.25e-4, -1.26e-4]
    assert ds["clock_s"].sel(sv="E11", time=t0).item() == 2.5e-4      # 4 values + continuation line
    assert ds["clock_sigma_s"].sel(sv="E11", time=t0).item() == 1.0e-11
    assert ds["clock_s"].sel(sv="C20", time=t1).item() == -3.75e-4    # bias only: sigma NaN
    assert np.isnan(ds["clock_sigma_s"].sel(sv="C20", time=t1).item())
    assert np.isnan(ds["clock_s"].sel(sv="C20", time=t0).item())      # no record
    station = "MOJN00DNK" if version == "3.04" else "MOJN"
    assert ds["station_clock_s"].sel(station=station).values.tolist() == [1.5e-7, 1.6e-7]
    assert ds["station_clock_sigma_s"].dims == ("time", "station")
    only_sat = read_rinex_clock(path)
    assert "station_clock_s" not in only_sat and only_sat.sizes["sv"] == 3


@pytest.mark.parametrize("system, shift_s", [
    ("GAL", 0),
    ("BDT", 14),  # BDT = GPST - 14 s (BDS-SIS-ICD 5.2.2, published)
    ("UTC", 18),  # GPST - UTC = 18 s in 2020 (IERS Bulletin C, published)
])
def test_time_system_converted_to_gpst(tmp_path, system, shift_s):
    path = tmp_path / "ts.clk"
    path.write_text(_clock_file("3.04", time_system=system))
    ds = read_rinex_clock(path)
    assert ds.attrs["source_time_system"] == system
    assert ds["time"].values[0] == np.datetime64("2020-06-25T00:00", "ns") + np.timedelta64(shift_s, "s")


def test_leap_seconds_from_header(tmp_path):
    path = tmp_path / "leap.clk"
    path.write_text(_clock_file("3.00", time_system="UTC", leap=17))
    ds = read_rinex_clock(path)
    assert ds["time"].values[0] == np.datetime64("2020-06-25T00:00:17", "ns")


# --- bad input ---------------------------------------------------------------------

def _bad(tmp_path, text):
    path = tmp_path / "bad.clk"
    path.write_text(text)
    return path


def _ledger(ds):
    ledger = Ledger.from_dict(ds.attrs["accounting"])
    assert ledger.unbalanced() == []
    return ledger


def test_truncated_last_line(tmp_path):
    # A record cut short costs that record only: a cut value is refused, never read shortened.
    text = _clock_file("3.00").rstrip("\n")
    lines = text.splitlines()
    t1 = np.datetime64("2020-06-25T00:00:30", "ns")
    for cut in (10, 30):  # inside the sigma, inside the bias
        path = _bad(tmp_path, text[:-cut] + "\n")
        ds = read_rinex_clock(path)
        assert np.isnan(ds["clock_s"].sel(sv="G01", time=t1).item())
        assert ds["clock_s"].sel(sv="G01").values[0] == -1.25e-4
        ledger = _ledger(ds)
        assert ledger.dropped("clock_records", "G") == {"damaged number": 1}
        assert f"{path}:{len(lines)}: RINEX clock record skipped: damaged number" in ledger.warnings


def test_garbled_number(tmp_path):
    lines = _clock_file("3.00").splitlines()
    index = next(i for i, l in enumerate(lines) if l.startswith("AS G01"))
    lines[index] = lines[index][:45] + "#" + lines[index][46:]
    path = _bad(tmp_path, "\n".join(lines) + "\n")
    ds = read_rinex_clock(path)
    assert np.isnan(ds["clock_s"].sel(sv="G01").values[0]) and ds["clock_s"].sel(sv="G01").values[1] == -1.26e-4
    ledger = _ledger(ds)
    assert ledger.dropped("clock_records", "G") == {"damaged number": 1}
    assert ledger.warnings == [f"{path}:{index + 1}: RINEX clock record skipped: damaged number"]


def test_record_in_neither_layout_costs_that_record(tmp_path):
    lines = _clock_file("3.00").splitlines()
    index = next(i for i, l in enumerate(lines) if l.startswith("AR"))
    lines[index] = lines[index][:3] + "MOJN00" + lines[index][3:]  # name 10 characters wide
    ds = read_rinex_clock(_bad(tmp_path, "\n".join(lines) + "\n"), kinds=("AS", "AR"))
    assert ds["station_clock_s"].sel(station="MOJN").values.tolist()[1] == 1.6e-7
    assert np.isnan(ds["station_clock_s"].sel(station="MOJN").values[0])
    assert _ledger(ds).dropped("clock_records", "-") == {"damaged epoch or name field": 1}
    assert f":{index + 1}: " in _ledger(ds).warnings[0]


def test_mislabelled_version_layout_detected(tmp_path):
    text = _clock_file("3.04").replace("     3.04", "     3.00", 1)  # A9 names under a 3.00 label
    ds = read_rinex_clock(_bad(tmp_path, text), kinds=("AS", "AR"))
    assert list(ds["station"].values) == ["MOJN00DNK"]


def test_unexpected_line(tmp_path):
    path = _bad(tmp_path, _clock_file("3.00") + "garbage here\n")
    ds = read_rinex_clock(path)
    assert ds.sizes["sv"] == 3
    ledger = _ledger(ds)
    assert ledger.dropped("clock_records", "-") == {"damaged line (not a record)": 1,
                                                     "not read: AR receiver clock": 2}
    assert ledger.warnings[0].endswith("RINEX clock line skipped: damaged line (not a record)")


def test_wrong_version_and_kind(tmp_path):
    with pytest.raises(FileFormatError, match=r":1: RINEX clock version 4.00 not supported"):
        read_rinex_clock(_bad(tmp_path, _clock_file("3.00").replace("     3.00", "     4.00", 1)))
    nav = "     3.05           N: GNSS NAV DATA    M: MIXED            RINEX VERSION / TYPE\n"
    with pytest.raises(FileFormatError, match=r":1: not a RINEX clock file"):
        read_rinex_clock(_bad(tmp_path, nav))


def test_no_end_of_header_and_empty(tmp_path):
    text = "\n".join(l for l in _clock_file("3.00").splitlines() if "END OF HEADER" not in l) + "\n"
    with pytest.raises(FileFormatError, match=r"no END OF HEADER"):
        read_rinex_clock(_bad(tmp_path, text))
    with pytest.raises(FileFormatError, match=r"bad.clk:1: empty file"):
        read_rinex_clock(_bad(tmp_path, ""))
    header_only = _clock_file("3.00").split("END OF HEADER")[0] + "END OF HEADER\n"
    with pytest.raises(FileFormatError, match=r"no data records"):
        read_rinex_clock(_bad(tmp_path, header_only))
