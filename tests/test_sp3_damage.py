"""SP3 reader on damaged input: a damaged record costs that record (a damaged epoch line its
epoch), counted in ``attrs["accounting"]`` and warned about with file and line; values a strict
reading of SP3-c/d section 2 would reject are refused, never read."""

from __future__ import annotations

import numpy as np
import pytest

from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError
from gnssrel.io.sp3 import read_sp3

SVS = ("G01", "E11", "R07")
T0 = np.datetime64("2020-06-25T00:00", "ns")
STEP = np.timedelta64(15, "m")


def _record(sv, e, i):
    x, y, z = 15000.0 + 10 * e + i, -20000.5 + i, 5000.25 - e  # |r| ~ 25 500 km
    return f"P{sv}{x:14.6f}{y:14.6f}{z:14.6f}{100.0 + i + 0.5 * e:14.6f}"


def _lines(n_epochs=5, time_system="GPS"):
    """A small SP3-c file: 3 satellites, n_epochs at 15 min, SP3-c section 2/3 layout."""
    lines = [f"#cP2020  6 25  0  0  0.00000000 {n_epochs:7d} ORBIT IGb14 FIT  TST",
             "## 2111 345600.00000000   900.00000000 59025 0.0000000000000",
             "+    3   " + "".join(SVS).ljust(51, "0"),
             "++       " + "  5" * 17,
             f"%c M  cc {time_system} ccc cccc cccc cccc cccc ccccc ccccc ccccc ccccc",
             "%c cc cc ccc ccc cccc cccc cccc cccc ccccc ccccc ccccc ccccc",
             "/* test file"]
    for e in range(n_epochs):
        lines.append(f"*  2020  6 25 {15 * e // 60:2d} {15 * e % 60:2d}  0.00000000")
        lines += [_record(sv, e, i) for i, sv in enumerate(SVS)]
    return lines + ["EOF"]


def _read(tmp_path, lines, name="damaged.sp3", **kw):
    path = tmp_path / name
    text = "\n".join(lines) + "\n"
    path.write_bytes(text.encode("latin-1"))
    ds = read_sp3(path, **kw)
    ledger = Ledger.from_dict(ds.attrs["accounting"])
    assert ledger.unbalanced() == []
    return path, ds, ledger


def _line_of(lines, start, nth=0):
    return [i for i, line in enumerate(lines) if line.startswith(start)][nth]


def test_clean_file_counts_every_record(tmp_path):
    _, ds, ledger = _read(tmp_path, _lines())
    assert ds.sizes == {"time": 5, "sv": 3, "axis": 3}
    for letter in "GER":
        assert ledger.count("sp3_records", letter) == 5 and ledger.count("sp3_records", letter, "used") == 5
    assert ledger.warnings == []
    e11 = ds.sel(sv="E11").isel(time=2)
    np.testing.assert_array_equal(e11["position_ecef_m"].values, [15021.0e3, -19999.5e3, 4998.25e3])


@pytest.mark.parametrize("field, reason", [
    ("   1_0000.1234", "damaged number"),   # float("1_0000.1234") would read 10000.1234
    ("           NaN", "damaged number"),
    ("           INF", "damaged number"),
    ("  15000.12345x", "damaged number"),
    ("  1500.0123456", "damaged number"),   # the point one column off: F14.6 has it in column 8
    ("   1.50001E+04", "damaged number"),   # no exponent in an F14.6 field
])
def test_refused_number_costs_that_record(tmp_path, field, reason):
    lines = _lines()
    i = _line_of(lines, "PE11", 1)
    lines[i] = lines[i][:4] + field + lines[i][18:]
    path, ds, ledger = _read(tmp_path, lines)
    assert np.isnan(ds["position_ecef_m"].sel(sv="E11").isel(time=1)).all()
    assert np.isnan(ds["clock_s"].sel(sv="E11").isel(time=1))
    assert ds["clock_s"].sel(sv="G01").isel(time=1).item() == pytest.approx(100.5e-6, abs=1e-15)
    assert ledger.dropped("sp3_records") == {reason: 1}
    assert ledger.count("sp3_records", "E", "used") == 4
    assert ledger.warnings == [f"{path}:{i + 1}: SP3 record skipped: {reason}"]


def test_underscore_in_clock_is_refused(tmp_path):
    lines = _lines()
    i = _line_of(lines, "PG01", 3)
    lines[i] = lines[i][:46] + "     1_01.5000" + lines[i][60:]
    _, ds, ledger = _read(tmp_path, lines)
    assert np.isnan(ds["clock_s"].sel(sv="G01").isel(time=3))
    assert ledger.dropped("sp3_records", "G") == {"damaged number": 1}


@pytest.mark.parametrize("sv_text", ["G0x", "Q01", "G?1", "\xe901"])
def test_garbled_satellite_id_is_counted_not_lost_silently(tmp_path, sv_text):
    lines = _lines()
    i = _line_of(lines, "PG01", 2)
    lines[i] = "P" + sv_text + lines[i][4:]
    path, ds, ledger = _read(tmp_path, lines)
    assert np.isnan(ds["clock_s"].sel(sv="G01").isel(time=2))
    assert ledger.dropped("sp3_records", "-") == {"damaged satellite id": 1}
    assert ledger.count("sp3_records", "-") == 1 and ledger.count("sp3_records", "G") == 4
    epoch_line = _line_of(lines, "*", 2) + 1
    assert ledger.warnings == [f"{path}:{i + 1}: SP3 record skipped: damaged satellite id",
                               (f"{path}:{epoch_line}: SP3 epoch has no record of G01, which the header "
                               "lists (a line deleted?)")]


def test_non_ascii_byte_in_a_number(tmp_path):
    lines = _lines()
    i = _line_of(lines, "PR07", 0)
    lines[i] = lines[i][:20] + "\xe9" + lines[i][21:]
    _, ds, ledger = _read(tmp_path, lines)
    assert ledger.dropped("sp3_records") == {"damaged number": 1}
    assert ds.sizes["time"] == 5


def test_line_cut_short_deleted_and_duplicated(tmp_path):
    lines = _lines()
    cut, gone, twice = _line_of(lines, "PG01", 0), _line_of(lines, "PE11", 3), _line_of(lines, "PR07", 4)
    lines[cut] = lines[cut][:40]
    lines.insert(twice, lines[twice])
    del lines[gone]
    path, ds, ledger = _read(tmp_path, lines)
    assert ledger.dropped("sp3_records") == {"record cut short": 1, "duplicate": 1}
    assert ledger.count("sp3_records", "E") == 4 and ledger.count("sp3_records", "E", "used") == 4
    # a missing line: no record, nothing to count, but said (SP3-c 2: one record per listed satellite)
    assert np.isnan(ds["clock_s"].sel(sv="E11").isel(time=3))
    assert f"{path}:{_line_of(lines, '*', 3) + 1}: SP3 epoch has no record of E11, which the header lists " \
        "(a line deleted?)" in ledger.warnings
    assert ds["clock_s"].sel(sv="R07").isel(time=4).item() == pytest.approx(104.0e-6, abs=1e-15)
    assert ds.indexes["time"].is_unique and ds.indexes["sv"].is_unique


def test_disagreeing_duplicates_refuse_that_satellite_and_epoch(tmp_path):
    lines = _lines()
    i = _line_of(lines, "PR07", 1)
    lines.insert(i + 1, lines[i][:50] + "9" + lines[i][51:])
    _, ds, ledger = _read(tmp_path, lines)
    assert ledger.dropped("sp3_records", "R") == {"conflicting duplicates": 2}
    assert np.isnan(ds["clock_s"].sel(sv="R07").isel(time=1))
    assert np.isfinite(ds["clock_s"].sel(sv="R07").isel(time=0))


def test_duplicated_epoch_line_gives_one_epoch(tmp_path):
    lines = _lines()
    i = _line_of(lines, "*", 2)
    lines.insert(i, lines[i])
    _, ds, ledger = _read(tmp_path, lines)
    assert ds.sizes["time"] == 5 and ds.indexes["time"].is_unique
    assert ledger.dropped("sp3_records") == {}


@pytest.mark.parametrize("epoch, reason", [
    ("*  2020  2 30  0 30  0.00000000", "impossible epoch"),            # 30 February
    ("*  1020  6 25  0 30  0.00000000", "impossible epoch"),            # before GPS
    ("*  2021  6 25  0 30  0.00000000", "epoch far from the file's other epochs"),
    ("*  2020  6 25  1  0  0.00000000", "epoch out of order"),          # 01:00 between 00:15 and 00:45
    ("*  2020  6 25  0 30  7.00000000", "epoch off the file's sampling grid"),
    ("*  2020  6 25  0 3O  0.00000000", "epoch line damaged"),
    ("*  2020_ 6 25  0 30  0.00000000", "epoch line damaged"),
])
def test_refused_epoch_costs_that_epoch(tmp_path, epoch, reason):
    lines = _lines()
    i = _line_of(lines, "*", 2)
    lines[i] = epoch
    path, ds, ledger = _read(tmp_path, lines)
    assert ds.sizes["time"] == 4
    assert T0 + 2 * STEP not in ds["time"].values
    assert ledger.dropped("sp3_records") == {reason: 3}
    assert ledger.count("sp3_records", None, "used") == 12
    assert any(w.startswith(f"{path}:{i + 1}: ") for w in ledger.warnings)


def test_epoch_line_deleted_costs_the_records_it_carried(tmp_path):
    lines = _lines()
    del lines[_line_of(lines, "*", 3)]
    _, ds, ledger = _read(tmp_path, lines)
    # the records of the lost epoch now repeat the satellites of epoch 2 with other values:
    # both epochs are refused (which values belong where cannot be told), and counted
    assert ledger.dropped("sp3_records") == {"conflicting duplicates": 6}
    np.testing.assert_array_equal(ds["time"].values, [T0, T0 + STEP, T0 + 4 * STEP])
    assert np.isfinite(ds["clock_s"]).all()


def test_positions_outside_physical_range_and_absent_markers(tmp_path):
    lines = _lines()
    low, high, absent, no_clock = (_line_of(lines, "PG01", 0), _line_of(lines, "PE11", 0),
                                   _line_of(lines, "PR07", 0), _line_of(lines, "PG01", 1))
    lines[low] = f"PG01{1000.0:14.6f}{2000.0:14.6f}{3000.0:14.6f}{100.0:14.6f}"     # inside the Earth
    lines[high] = f"PE11{150000.0:14.6f}{2000.0:14.6f}{3000.0:14.6f}{100.0:14.6f}"  # beyond 100 000 km
    lines[absent] = f"PR07{0.0:14.6f}{0.0:14.6f}{0.0:14.6f}{102.0:14.6f}"           # SP3 "bad or absent"
    lines[no_clock] = lines[no_clock][:46] + " 999999.999999"                          # SP3 "bad or absent"
    _, ds, ledger = _read(tmp_path, lines)
    assert ledger.dropped("sp3_records") == {"position outside physical range": 2}
    r07 = ds.sel(sv="R07").isel(time=0)
    assert np.isnan(r07["position_ecef_m"]).all() and r07["clock_s"].item() == pytest.approx(102e-6, abs=1e-15)
    g01 = ds.sel(sv="G01").isel(time=1)
    assert np.isnan(g01["clock_s"].item()) and np.isfinite(g01["position_ecef_m"]).all()
    assert ledger.count("sp3_records", "R", "used") == 5 and ledger.count("sp3_records", "G", "used") == 4


def test_leading_blank_line_costs_nothing(tmp_path):
    path, ds, ledger = _read(tmp_path, [""] + _lines())
    assert ds.sizes["time"] == 5 and ledger.count("sp3_records", None, "used") == 15
    assert ledger.warnings == [f"{path}:1: 1 blank line(s) before the SP3 header skipped"]


@pytest.mark.parametrize("shift", [-1, 1])
def test_time_system_one_column_off_is_read(tmp_path, shift):
    lines = _lines(time_system="BDT")
    i = _line_of(lines, "%c")
    lines[i] = lines[i][:9] + " BDT" + lines[i][13:] if shift > 0 else lines[i][:8] + "BDT " + lines[i][12:]
    path, ds, ledger = _read(tmp_path, lines)
    assert ds.attrs["source_time_system"] == "BDT"
    assert ds["time"].values[0] == T0 + np.timedelta64(14, "s")  # BDT = GPST - 14 s (BDS-SIS-ICD 5.2.2)
    assert ledger.warnings == [(f"{path}:{i + 1}: SP3 header: time system 'BDT' read one column off "
                               "its columns 10-12")]


def test_system_filter_is_counted(tmp_path):
    _, ds, ledger = _read(tmp_path, _lines(), systems="G")
    assert list(ds["sv"].values) == ["G01"]
    assert ledger.dropped("sp3_records", "E") == {"system not selected": 5}


def test_every_record_damaged_is_one_error_with_file_and_line(tmp_path):
    lines = [line[:20] if line.startswith("P") else line for line in _lines()]
    path = tmp_path / "all_bad.sp3"
    path.write_text("\n".join(lines) + "\n")
    with pytest.raises(FileFormatError, match=r"no usable SP3 position record") as err:
        read_sp3(path)
    assert str(err.value).startswith(f"{path}:{_line_of(lines, 'P') + 1}: ")
    assert "\n" not in str(err.value)


def test_merged_files_merge_their_ledgers(tmp_path):
    first = _lines()
    second = _lines()
    i = _line_of(second, "PG01", 4)
    second[i] = second[i][:10] + "_" + second[i][11:]
    p1, p2 = tmp_path / "a.sp3", tmp_path / "b.sp3"
    p1.write_text("\n".join(first) + "\n")
    p2.write_text("\n".join(second) + "\n")
    ds = read_sp3([p1, p2])
    ledger = Ledger.from_dict(ds.attrs["accounting"])
    assert ledger.unbalanced() == []
    assert ledger.count("sp3_records", "G") == 10
    # the second file repeats the epochs of the first: its records are left aside and counted
    assert ledger.dropped("sp3_records", "G") == {"damaged number": 1, "epoch also in an earlier file": 4}
    assert ledger.count("sp3_records", "G", "used") == 5
    assert ledger.warnings == [f"{p2}:{i + 1}: SP3 record skipped: damaged number"]


def test_accounting_attr_survives_netcdf(tmp_path):
    from gnssrel.io.writers import write_table

    _, ds, _ = _read(tmp_path, _lines())
    out = write_table(ds, tmp_path / "sp3.nc")
    import json

    import xarray as xr

    with xr.open_dataset(out) as back:
        assert json.loads(back.attrs["accounting"])["sp3_records"]["G"] == {"read": 5, "used": 5}


def test_damaged_velocity_record_costs_that_velocity(tmp_path):
    lines = _lines()
    lines[0] = "#cV" + lines[0][3:]
    for i in reversed([k for k, line in enumerate(lines) if line.startswith("P")]):
        lines.insert(i + 1, f"V{lines[i][1:4]}{1234.5:14.6f}{-5678.9:14.6f}{10.0:14.6f}{-2.5:14.6f}")
    bad = _line_of(lines, "VE11", 2)
    lines[bad] = lines[bad][:10] + "NaN" + lines[bad][13:]
    path, ds, ledger = _read(tmp_path, lines)
    e11 = ds["velocity_ecef_m_per_s"].sel(sv="E11")
    assert np.isnan(e11.isel(time=2)).all()
    np.testing.assert_allclose(e11.isel(time=1).values, [123.45, -567.89, 1.0])  # dm/s -> m/s (SP3-c 2)
    assert ledger.dropped("sp3_velocity_records") == {"damaged number": 1}
    assert ledger.count("sp3_velocity_records", None, "used") == 14 and ledger.dropped("sp3_records") == {}
    assert ledger.warnings == [f"{path}:{bad + 1}: SP3 record skipped: damaged number"]


def test_missing_or_garbled_interval_line_is_taken_from_the_epochs(tmp_path):
    lines = _lines()
    del lines[1]
    path, ds, ledger = _read(tmp_path, lines)
    assert ds.attrs["epoch_interval_s"] == 900.0 and ds.sizes["time"] == 5
    assert ledger.warnings == [(f"{path}:2: SP3 header: no '##' line after line 1; epoch interval taken "
                               "from the epochs")]
    lines = _lines()
    lines[1] = lines[1][:24] + "   9_00.000000" + lines[1][38:]
    _, ds, ledger = _read(tmp_path, lines)
    assert ds.attrs["epoch_interval_s"] == 900.0
    assert "epoch interval (columns 25-38) unreadable" in ledger.warnings[0]


def test_garbled_header_satellite_list_costs_nothing(tmp_path):
    lines = _lines()
    lines[2] = lines[2][:13] + "\xe9" + lines[2][14:]  # "+" line: "G01E\xe91R07..."
    _, ds, ledger = _read(tmp_path, lines)
    assert ds.sizes["sv"] == 3 and ledger.count("sp3_records", None, "used") == 15
