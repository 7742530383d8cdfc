"""The observation reader on small damaged or unusual inputs built here (tests/obs_samples.py).

Each test names the defect it guards against; every ledger must balance
(read == used + dropped, gnssrel.accounting).
"""

from __future__ import annotations

import gzip
import warnings

import numpy as np
import pytest
from obs_samples import V2_SATS, V3_SATS, header_line, rinex2, rinex3, value

from gnssrel import read_observations
from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError

T0 = np.datetime64("2021-01-01T00:00:00", "ns")


def _write(tmp_path, name, text):
    path = tmp_path / name
    path.write_bytes(text.encode("latin-1") if isinstance(text, str) else text)
    return path


def _ledger(ds):
    ledger = Ledger.from_dict(ds.attrs["accounting"])
    assert ledger.unbalanced() == []
    return ledger


# ---- RINEX 2: the last epoch is kept (was: silent data loss) ------------------------------------

def test_rinex2_last_satellite_with_blank_last_line_keeps_the_last_epoch(tmp_path):
    # RINEX 2.11 table A2: each satellite takes ceil(6/5) = 2 lines, the second blank when it
    # has no value there; R03 (the last satellite) has a blank second line in every epoch.
    head, body = rinex2(blank_last_line_of=("R03",))
    ds = read_observations(_write(tmp_path, "test0010.21o", head + body))
    assert ds.sizes["time"] == 6 and ds.attrs["skipped_epochs"] == 0
    assert ds["C1"].sel(sv="R03").values[-1] == value(5, 2, 0)
    assert np.isnan(ds["S2"].sel(sv="R03").values).all()
    ledger = _ledger(ds)
    assert ledger.count("epochs", "-", "used") == 6 and ledger.dropped("epochs") == {}


def test_rinex2_trailing_blank_lines_left_out_at_the_end_of_the_file(tmp_path):
    head, body = rinex2(blank_last_line_of=("R03",))
    ds = read_observations(_write(tmp_path, "test0010.21o", head + body[:-1]))  # last blank line absent
    assert ds.sizes["time"] == 6
    assert any("read as blank" in w for w in ds.attrs["warnings"])
    assert _ledger(ds).count("epochs", "-", "used") == 6


@pytest.mark.parametrize("version", [2, 3])
def test_complete_last_line_without_line_end_is_kept(tmp_path, version):
    head, body = (rinex2 if version == 2 else rinex3)()
    ds = read_observations(_write(tmp_path, "test0010.21o", head + body.rstrip("\n")))
    assert ds.sizes["time"] == 6 and ds.attrs["skipped_epochs"] == 0
    last_sv = (V2_SATS if version == 2 else V3_SATS)[-1]
    code = "S2" if version == 2 else "S1X"
    n_types = 6 if version == 2 else 3
    assert ds[code].sel(sv=last_sv).values[-1] == value(5, len(V2_SATS if version == 2 else V3_SATS) - 1,
                                                        n_types - 1)
    assert any("its last line is complete" in w for w in ds.attrs["warnings"])


@pytest.mark.parametrize("version", [2, 3])
def test_last_line_cut_inside_a_value_costs_the_last_epoch(tmp_path, version):
    head, body = (rinex2 if version == 2 else rinex3)()
    text = head + body.rstrip("\n")[:-5]  # ends inside the last F14.3 value
    ds = read_observations(_write(tmp_path, "test0010.21o", text))
    assert ds.sizes["time"] == 5
    ledger = _ledger(ds)
    assert ledger.dropped("epochs") == {"cut by end of file": 1}
    assert any("cut short" in w for w in ledger.warnings)


# ---- GLO time system in RINEX 2 is UTC -----------------------------------------------------------

def test_rinex2_glo_time_system_is_utc(tmp_path):
    # RINEX 2.11 table A1 (TIME OF FIRST OBS: "GLO (=UTC time system)") and 8.1.1: GLONASS
    # observation time tags are UTC; GPST = UTC + 18 s in 2021 (IERS Bulletin C, published).
    head, body = rinex2(time_system="GLO")
    ds = read_observations(_write(tmp_path, "glo.21o", head + body))
    assert ds.attrs["source_time_scale"] == "UTC"
    assert ds.time.values[0] == T0 + np.timedelta64(18, "s")


# ---- Hatanaka: epochs lost by the decompressor are counted ------------------------------------------

def test_hatanaka_repeated_line_counts_the_lost_epochs(tmp_path):
    hatanaka = pytest.importorskip("hatanaka")
    head, body = rinex3()
    crx = hatanaka.compress((head + body).encode(), compression="none").decode().splitlines(keepends=True)
    first_body = next(i for i, ln in enumerate(crx) if "END OF HEADER" in ln) + 1
    k = first_body + 9  # a data line of the second epoch, repeated
    damaged = crx[:k] + [crx[k]] + crx[k:]
    path = _write(tmp_path, "TEST00XXX_R_20210010000_01D_30S_MO.crx", "".join(damaged))
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # the decompressor's raw warning must not leak
        ds = read_observations(path)
    ledger = _ledger(ds)
    # The decompressor wrote epoch 1, epoch 2 with shifted values (R03 gets E11's line) and a
    # comment record of its own (flag 4), and skipped epochs 3-6.
    assert ds.sizes["time"] == 1 and ds["C1C"].sel(sv="G07").values[0] == value(0, 1, 0)
    assert ledger.dropped("epochs") == {"lost in Hatanaka decompression": 4, "event record": 1,
                                        "damaged in Hatanaka decompression": 1}
    assert any(w.startswith(f"{path}:") and "Hatanaka decompression" in w for w in ledger.warnings)


# ---- crashes turned into one-line errors or counted damage -----------------------------------------

@pytest.mark.parametrize("damage", ["flip", "truncate"])
def test_damaged_gzip_is_one_line_error_naming_the_file(tmp_path, damage):
    head, body = rinex3()
    raw = bytearray(gzip.compress((head + body).encode()))
    if damage == "flip":
        raw[len(raw) // 2] ^= 0xFF  # zlib.error: invalid code / distance
    else:
        raw = raw[: len(raw) - 12]  # EOFError
    path = _write(tmp_path, "test0010.21o.gz", bytes(raw))
    with pytest.raises(FileFormatError) as err:
        read_observations(path)
    assert str(err.value).startswith(f"{path}: compressed file is damaged or truncated")
    assert "\n" not in str(err.value)


def test_damaged_unix_compress_and_zip(tmp_path):
    for name, raw in (("a.21o.Z", b"\x1f\x9d\x90" + bytes(range(200, 256))),
                      ("a.zip", b"PK\x03\x04" + b"\x00" * 40)):
        path = _write(tmp_path, name, raw)
        with pytest.raises(FileFormatError, match="damaged or truncated"):
            read_observations(path)


@pytest.mark.parametrize("version", [2, 3])
def test_non_ascii_byte_in_satellite_column_damages_that_epoch(tmp_path, version):
    head, body = (rinex2 if version == 2 else rinex3)()
    raw = bytearray((head + body).encode())
    marker = (" 21  1  1  0  1  0" if version == 2 else "> 2021 01 01 00 01  0").encode()
    at = raw.index(marker)
    sat_at = at + 32 if version == 2 else raw.index(b"\n", at) + 1
    raw[sat_at] = 0xE9  # 'é' in latin-1, not ASCII
    ds = read_observations(_write(tmp_path, "test0010.21o", bytes(raw)))
    assert ds.sizes["time"] == 5
    assert T0 + np.timedelta64(60, "s") not in ds.time.values
    assert _ledger(ds).dropped("epochs") == {"damaged": 1}


@pytest.mark.parametrize("text", ["1_2345678.125", "         NaN  ", "         INF  ", " 1234567.12500"])
def test_refused_numbers_damage_their_epoch(tmp_path, text):
    # F14.3 (RINEX 3.05 table A13): digits, sign and point, the point in column 11 of 14.
    head, body = rinex3()
    lines = body.splitlines(keepends=True)
    lines[1] = lines[1][:3] + f"{text:>14s}" + lines[1][17:]
    ds = read_observations(_write(tmp_path, "test.rnx", head + "".join(lines)))
    assert ds.sizes["time"] == 5 and ds.time.values[0] == T0 + np.timedelta64(30, "s")
    assert _ledger(ds).dropped("epochs") == {"damaged": 1}


@pytest.mark.parametrize("label, content", [
    ("DELTA-UTC: A0,A1,T,W", " " + "  1.862645149231D-09 1.243449787580D-14   503808     2040"),
    ("APPROX POSITION XYZ", "  1000000.0000  2000000.0000  3000000.0000"),
    ("TIME OF LAST OBS", "  2021     1     1     0     2   30.0000000     GPS"),
    ("ANTENNA: DELTA H/E/N", "        1.5000        0.0000        0.0000"),
])
def test_misaligned_optional_header_line_is_left_aside_with_a_warning(tmp_path, label, content):
    head, body = rinex3()
    if label == "APPROX POSITION XYZ":  # the only one, shifted
        head = head.replace(header_line(content, label), "")
    extra = " " + header_line(content, label)  # the whole line one column to the right
    head = head.replace(header_line("", "END OF HEADER"), extra + header_line("", "END OF HEADER"))
    ds = read_observations(_write(tmp_path, "test.rnx", head + body))
    assert ds.sizes["time"] == 6
    ledger = _ledger(ds)
    assert ledger.warnings and all("line ignored" in w for w in ledger.warnings)
    assert ds["C1C"].sel(sv="G05").values[0] == value(0, 0, 0)


@pytest.mark.parametrize("leap", [-1, 1017, 17])
def test_implausible_leap_seconds_refused_with_a_warning(tmp_path, leap):
    # GPS - UTC is 18 s in 2021 (IERS Bulletin C); -1 and 1017 cannot be, 17 disagrees with the
    # built-in table (timescales.check_leap_seconds).
    head, body = rinex3(time_system="GLO", leap=leap)
    ds = read_observations(_write(tmp_path, "test.rnx", head + body))
    assert ds.attrs["leap_seconds"] is None
    assert any("LEAP SECONDS" in w for w in _ledger(ds).warnings)
    good = read_observations(_write(tmp_path, "good.rnx", "".join(rinex3(time_system="GLO", leap=18))))
    np.testing.assert_array_equal(ds.time.values, good.time.values)  # the built-in table's 18 s


def test_unreadable_scale_factor_drops_its_system_only(tmp_path):
    head, body = rinex3(extra_header=[header_line("G  1x    1 C1C", "SYS / SCALE FACTOR")])
    ds = read_observations(_write(tmp_path, "test.rnx", head + body))
    assert not any(sv.startswith("G") for sv in ds.sv.values) and "E11" in ds.sv.values
    assert _ledger(ds).dropped("observations", "G") == {"SYS / SCALE FACTOR unreadable": 12}


# ---- accounting -------------------------------------------------------------------------------------

def test_accounting_of_epochs_and_observations(tmp_path):
    head, body = rinex3()
    lines = body.splitlines(keepends=True)
    # epoch 3 repeats epoch 2's time; epoch 5 gets a garbled field; a flag-4 record is added.
    lines[2 * 5] = lines[1 * 5]
    lines[4 * 5 + 1] = lines[4 * 5 + 1][:8] + "x" + lines[4 * 5 + 1][9:]
    lines += [f">{'':30s}4  1\n", header_line("A COMMENT", "COMMENT")]
    ds = read_observations(_write(tmp_path, "test.rnx", head + "".join(lines)), systems="GR",
                           observables=["C1", "L1"], end=T0 + np.timedelta64(120, "s"))
    ledger = _ledger(ds)
    # 7 records: 2 used (00:00:00, 00:00:30), 1 repeated time, 1 damaged, 1 event record,
    # 2 outside the span (00:02:00 is epoch 5, damaged; 00:02:30 is outside).
    assert ledger.count("epochs", "-") == 7
    assert ledger.dropped("epochs") == {"repeated time": 1, "damaged": 1, "event record": 1,
                                        "outside the requested time span": 1}
    assert ledger.count("epochs", "-", "used") == ds.sizes["time"] == 3
    # Kept epochs 0, 1, 3 (00:00, 00:30, 01:00 -- epoch 2's copy of 00:30 is the repeat): each has
    # G05, G07 (C1C), R03 (C1C) used and E11 (C1X) not requested.
    assert ledger.count("observations", "G", "used") == 6 and ledger.count("observations", "R", "used") == 3
    assert ledger.dropped("observations", "E") == {"system not requested": 3}


def test_obs_types_count_disagreeing_costs_that_system_only(tmp_path):
    # RINEX 3.05 table A2: "SYS / # / OBS TYPES" count then the codes; 4 declared, 3 listed.
    head, body = rinex3()
    head = head.replace(header_line("G    3 C1C L1C S1C", "SYS / # / OBS TYPES"),
                        header_line("G    4 C1C L1C S1C", "SYS / # / OBS TYPES"))
    ds = read_observations(_write(tmp_path, "test.rnx", head + body))
    assert sorted(ds.sv.values) == ["E11", "R03"] and ds.sizes["time"] == 6
    assert any("declares 4 types but lists 3" in w for w in _ledger(ds).warnings)


def test_shifted_time_of_first_obs_keeps_its_time_system(tmp_path):
    # BDT = GPST - 14 s (BDS-SIS-ICD-B1I 3.0, 5.2.2): a shifted line must not fall back to GPS.
    head, body = rinex3(time_system="BDT")
    line = next(ln for ln in head.splitlines(keepends=True) if "TIME OF FIRST OBS" in ln)
    ds = read_observations(_write(tmp_path, "test.rnx", head.replace(line, " " + line) + body))
    assert ds.attrs["source_time_scale"] == "BDT" and ds.attrs["time_of_first_obs"] is None
    assert ds.time.values[0] == T0 + np.timedelta64(14, "s")
    assert len(_ledger(ds).warnings) == 2  # date unreadable (ignored); time system found off its columns


def test_rinex2_data_line_out_of_place_damages_its_epoch(tmp_path):
    # RINEX 2.11 table A2: with 6 types a satellite's second line holds one value; a full line in
    # that place (two data lines swapped) cannot be, and must not give G07 the values of R03.
    head, body = rinex2()
    lines = body.splitlines(keepends=True)
    g07_second, r03_first = 1 + 1 * 2 + 1, 1 + 2 * 2   # body lines: epoch line, then 2 per satellite
    lines[g07_second], lines[r03_first] = lines[r03_first], lines[g07_second]
    ds = read_observations(_write(tmp_path, "test0010.21o", head + "".join(lines)))
    assert ds.sizes["time"] == 5 and ds.time.values[0] == T0 + np.timedelta64(30, "s")
    assert _ledger(ds).dropped("epochs") == {"damaged": 1}


def test_a_system_with_many_observation_types_is_read(tmp_path, monkeypatch):
    # 36 types for GPS (RINEX 3.05 table A2 allows continuation lines of 13 types): a satellite
    # line of 3 + 36 x 16 columns; the reader used to stop at 24 types with a ValueError.
    import obs_samples

    codes = [f"{k}{b}{a}" for a in "CWX" for b in "125" for k in "CLDS"]
    monkeypatch.setitem(obs_samples.V3_TYPES, "G", codes)
    head, body = rinex3(sats=["G05", "E11"])
    ds = read_observations(_write(tmp_path, "test.rnx", head + body), systems="E")
    assert ds["C1X"].sel(sv="E11").values[0] == value(0, 1, 0)
    ds = read_observations(_write(tmp_path, "test.rnx", head + body))
    assert ds["S5X"].sel(sv="G05").values[-1] == value(5, 0, 35)
    assert _ledger(ds).count("observations", "G", "used") == 9 * 6
    filtered = _ledger(read_observations(tmp_path / "test.rnx", systems="E"))
    assert filtered.dropped("observations", "G") == {"system not requested": 9 * 6}
