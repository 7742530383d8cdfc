"""RINEX clock reader on damaged input: a damaged record costs that record, counted in
``attrs["accounting"]`` (item ``clock_records``) and warned about with file and line; values a
strict reading of the format would reject are refused; values a column off their nominal
place are read whole, never mis-scaled (README, "Nothing lost, nothing silently wrong")."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError
from gnssrel.io.rinex_clock import read_rinex_clock

sys.path.insert(0, str(Path(__file__).parent))
from synthetic_clocks import make_constellation

T0 = np.datetime64("2020-06-25T00:00", "ns")
STEP = np.timedelta64(30, "s")
SVS = ("G01", "E11", "R07")


def _bias(sv, e):
    return -1.25e-4 + 1e-6 * SVS.index(sv) + 1e-9 * e


def _record(kind, name, e, values, wide):
    width = 9 if wide else 4
    s = 30 * e
    head = f"{kind} {name:<{width}s} 2020  6 25  0 {s // 60:2d}{s % 60:10.6f}{len(values):3d}   "
    return head + " ".join(f"{v:19.12E}" for v in values)


def _lines(version="3.04", time_system="GPS", n_epochs=5):
    wide = version >= "3.04"
    col = 65 if wide else 60
    lines = [f"{float(version):9.2f}           C                   M".ljust(col) + "RINEX VERSION / TYPE",
             f"   {time_system}".ljust(col) + "TIME SYSTEM ID",
             "    18".ljust(col) + "LEAP SECONDS",
             "TST  test centre".ljust(col) + "ANALYSIS CENTER",
             "".ljust(col) + "END OF HEADER"]
    for e in range(n_epochs):
        lines.append(_record("AR", "MOJN00DNK" if wide else "MOJN", e, [1.5e-7, 2.0e-11], wide))
        lines += [_record("AS", sv, e, [_bias(sv, e), 3.0e-11], wide) for sv in SVS]
    return lines


def _read(tmp_path, lines, name="damaged.clk", **kw):
    path = tmp_path / name
    path.write_bytes(("\n".join(lines) + "\n").encode("latin-1"))
    ds = read_rinex_clock(path, **kw)
    ledger = Ledger.from_dict(ds.attrs["accounting"])
    assert ledger.unbalanced() == []
    return path, ds, ledger


def _at(lines, start, nth=0):
    return [i for i, line in enumerate(lines) if line.startswith(start)][nth]


def test_clean_file_counts_as_and_not_read_ar(tmp_path):
    _, ds, ledger = _read(tmp_path, _lines())
    assert ds.sizes == {"time": 5, "sv": 3}
    for letter in "GER":
        assert ledger.count("clock_records", letter) == 5 and ledger.count("clock_records", letter, "used") == 5
    assert ledger.dropped("clock_records", "-") == {"not read: AR receiver clock": 5}
    assert ledger.warnings == []
    _, ds, ledger = _read(tmp_path, _lines(), kinds=("AS", "AR"))
    assert ledger.count("clock_records", "-", "used") == 5 and ds.sizes["station"] == 1


@pytest.mark.parametrize("version", ["3.00", "3.04"])
@pytest.mark.parametrize("shift", ["sigma", "bias"])
def test_value_a_column_right_is_read_whole(tmp_path, version, shift):
    # "2(E19.12,1X)" after the fixed prefix: blank-separated reals (RINEX clock 3.04, data record
    # table; from memory).  Read at fixed columns, a sigma one column right lost its last exponent
    # digit (x10 to x100 wrong).
    lines = _lines(version)
    i = _at(lines, "AS E11", 2)
    cut = lines[i].rindex(" ") if shift == "sigma" else lines[i].index("-1.2")
    lines[i] = lines[i][:cut] + " " + lines[i][cut:]
    _, ds, ledger = _read(tmp_path, lines)
    assert ds["clock_sigma_s"].sel(sv="E11").values[2] == 3.0e-11
    assert ds["clock_s"].sel(sv="E11").values[2] == float(f"{_bias('E11', 2):19.12E}")
    assert ledger.dropped("clock_records", "E") == {}


def test_values_glued_together_are_refused(tmp_path):
    lines = _lines()
    i = _at(lines, "AS G01", 1)
    cut = lines[i].rindex(" ")
    lines[i] = lines[i][:cut - 1] + lines[i][cut + 1:] + "  "  # sigma two columns left: no separator
    path, ds, ledger = _read(tmp_path, lines)
    assert np.isnan(ds["clock_s"].sel(sv="G01").values[1])
    assert ledger.dropped("clock_records", "G") == {"damaged number": 1}
    assert ledger.warnings == [f"{path}:{i + 1}: RINEX clock record skipped: damaged number"]


@pytest.mark.parametrize("bias, reason", [
    ("-1.2500_0000000E-04", "damaged number"),   # float() would read the underscore as a separator
    ("                NaN", "damaged number"),
    ("                INF", "damaged number"),
    ("-1.25000000000x0E-04"[:19], "damaged number"),
    (" 0.999000000000E+99", "value outside physical range"),
])
def test_refused_bias_costs_that_record(tmp_path, bias, reason):
    lines = _lines()
    i = _at(lines, "AS R07", 3)
    start = 13 + 32
    lines[i] = lines[i][:start] + bias + lines[i][start + 19:]
    path, ds, ledger = _read(tmp_path, lines)
    assert np.isnan(ds["clock_s"].sel(sv="R07").values[3])
    assert ds["clock_s"].sel(sv="R07").values[2] == float(f"{_bias('R07', 2):19.12E}")
    assert ledger.dropped("clock_records", "R") == {reason: 1}
    assert ledger.warnings == [f"{path}:{i + 1}: RINEX clock record skipped: {reason}"]


@pytest.mark.parametrize("date, reason", [
    ("1020  6 25", "impossible epoch"),                         # a year before GPS
    ("2020  2 30", "impossible epoch"),                         # 30 February
    ("2021  6 25", "epoch far from the file's other epochs"),   # a garbled year in range
    ("202O  6 25", "damaged epoch or name field"),
])
def test_refused_epoch_costs_that_record(tmp_path, date, reason):
    lines = _lines()
    i = _at(lines, "AS G01", 2)
    lines[i] = lines[i][:13] + date + lines[i][23:]
    path, ds, ledger = _read(tmp_path, lines)
    np.testing.assert_array_equal(ds["time"].values, T0 + np.arange(5) * STEP)
    assert np.isnan(ds["clock_s"].sel(sv="G01").values[2])
    assert ledger.dropped("clock_records", "G") == {reason: 1}
    assert ledger.warnings == [f"{path}:{i + 1}: RINEX clock record skipped: {reason}"]


def test_epoch_off_the_sampling_grid_is_refused(tmp_path):
    lines = _lines()
    i = _at(lines, "AS E11", 3)
    lines[i] = lines[i][:29] + " 32.000000" + lines[i][39:]   # 00:01:30 -> 00:01:32
    _, ds, ledger = _read(tmp_path, lines)
    assert ds.sizes["time"] == 5
    assert ledger.dropped("clock_records", "E") == {"epoch off the file's sampling grid": 1}


@pytest.mark.parametrize("name, reason", [("G0x", "damaged satellite name"), ("\xe901", "damaged satellite name")])
def test_garbled_satellite_name_is_counted(tmp_path, name, reason):
    lines = _lines()
    i = _at(lines, "AS G01", 4)
    lines[i] = lines[i][:3] + name + lines[i][6:]
    _, ds, ledger = _read(tmp_path, lines)
    assert ledger.dropped("clock_records", "-") == {reason: 1, "not read: AR receiver clock": 5}
    assert ledger.count("clock_records", "G") == 4 and ds.sizes["sv"] == 3


def test_cut_non_ascii_and_count_mismatch(tmp_path):
    lines = _lines()
    cut, byte, count = _at(lines, "AS G01", 0), _at(lines, "AS E11", 0), _at(lines, "AS R07", 0)
    lines[cut] = lines[cut][:60]
    lines[byte] = lines[byte][:50] + "\xe9" + lines[byte][51:]
    lines[count] = lines[count][:41] + "1" + lines[count][42:]  # one value announced, two on the line
    _, ds, ledger = _read(tmp_path, lines)
    assert ds["time"].values[0] == T0 + STEP  # nothing left of the first epoch
    assert ledger.dropped("clock_records", "G") == {"damaged number": 1}
    assert ledger.dropped("clock_records", "E") == {"non-ASCII byte": 1}
    assert ledger.dropped("clock_records", "R") == {"number of values disagrees with the line": 1}


def test_duplicates_exact_and_disagreeing(tmp_path):
    lines = _lines()
    same, other = _at(lines, "AS G01", 1), _at(lines, "AS E11", 2)
    lines.insert(other + 1, lines[other][:55] + "7" + lines[other][56:])
    lines.insert(same + 1, lines[same])
    _, ds, ledger = _read(tmp_path, lines)
    assert ledger.dropped("clock_records", "G") == {"duplicate": 1}
    assert ledger.dropped("clock_records", "E") == {"conflicting duplicates": 2}
    assert ds["clock_s"].sel(sv="G01").values[1] == float(f"{_bias('G01', 1):19.12E}")
    assert np.isnan(ds["clock_s"].sel(sv="E11").values[2])
    assert ds.indexes["time"].is_unique and ds.indexes["sv"].is_unique


def test_record_types_not_read_are_counted(tmp_path):
    lines = _lines()
    i = _at(lines, "AS G01", 2)
    lines.insert(i, lines[i].replace("AS G01", "CR MOJN", 1)[:len(lines[i])])
    lines.insert(i, "XY " + lines[i][3:])
    path, ds, ledger = _read(tmp_path, lines)
    assert ds.sizes["sv"] == 3 and ledger.count("clock_records", None, "used") == 15
    assert ledger.dropped("clock_records", "-") == {
        "not read: AR receiver clock": 5, "not read: CR calibration": 1,
        "not read: XY (record type unknown to the format)": 1}
    assert ledger.warnings == [(f"{path}:{i + 1}: RINEX clock line skipped: "
                               "not read: XY (record type unknown to the format)")]


@pytest.mark.parametrize("label", ["    BDT", "  BDT", "BDT"])
def test_time_system_a_column_off_is_read(tmp_path, label):
    lines = _lines(time_system="BDT")
    lines[1] = label.ljust(65) + "TIME SYSTEM ID"
    path, ds, ledger = _read(tmp_path, lines)
    assert ds.attrs["source_time_system"] == "BDT"
    assert ds["time"].values[0] == T0 + np.timedelta64(14, "s")  # BDT = GPST - 14 s (BDS-SIS-ICD 5.2.2)
    assert ledger.warnings == [f"{path}:2: RINEX clock header: TIME SYSTEM ID 'BDT' read off its columns 4-6"]


def test_unreadable_leap_seconds_falls_back_to_the_table(tmp_path):
    lines = _lines(time_system="UTC")
    lines[2] = "    1x".ljust(65) + "LEAP SECONDS"
    path, ds, ledger = _read(tmp_path, lines)
    assert ds["time"].values[0] == T0 + np.timedelta64(18, "s")  # GPST - UTC = 18 s in 2020 (IERS, published)
    assert ledger.warnings[0].startswith(f"{path}:3: RINEX clock header: LEAP SECONDS unreadable")


def test_every_record_damaged_is_one_error_with_file_and_line(tmp_path):
    lines = [line[:50] if line.startswith("AS") else line for line in _lines()]
    path = tmp_path / "all_bad.clk"
    path.write_text("\n".join(lines) + "\n")
    with pytest.raises(FileFormatError, match=r"no usable clock record") as err:
        read_rinex_clock(path)
    assert str(err.value).startswith(f"{path}:{_at(lines, 'AS') + 1}: ") and "\n" not in str(err.value)


def test_accounting_attr_survives_netcdf(tmp_path):
    from gnssrel.io.writers import write_table

    _, ds, _ = _read(tmp_path, _lines())
    out = write_table(ds, tmp_path / "clk.nc")
    with xr.open_dataset(out) as back:
        assert '"clock_records"' in back.attrs["accounting"]


def test_compare_clocks_survives_duplicate_keys():
    # A precise-clock Dataset built by hand with a satellite twice (two products concatenated)
    # made clocks/compare raise pandas InvalidIndexError; the first column is kept.
    from gnssrel.clocks.compare import compare_clocks

    times = T0 + np.arange(40) * np.timedelta64(300, "s")
    nav, states, _ = make_constellation(times, n_sat=6)
    clock = states["clock_poly_s"].values
    sv = np.concatenate([states["sv"].values, states["sv"].values[:1]])
    doubled = xr.Dataset({"clock_s": (("time", "sv"), np.concatenate([clock, clock[:, :1] + 1e-9], axis=1))},
                         coords={"time": times, "sv": sv})
    table, summary = compare_clocks(nav, doubled, states=states)
    assert summary["by_system"]["G"]["n_sat"] == 6 and len(table) == 240
    assert np.allclose(table["residual_ns"], 0.0, atol=1e-6)


def test_body_without_any_record_is_one_error(tmp_path):
    lines = _lines()[:5] + ["garbage here", "more garbage"]
    path = tmp_path / "garbage.clk"
    path.write_text("\n".join(lines) + "\n")
    with pytest.raises(FileFormatError, match=r"garbage.clk:6: RINEX clock body holds no data record"):
        read_rinex_clock(path)
