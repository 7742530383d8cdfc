"""Bad navigation files give one FileFormatError naming the file and the line."""

from __future__ import annotations

import gzip

import pytest

from gnssrel.errors import FileFormatError, GnssrelInputError
from gnssrel.io.rinex_nav import read_navigation

HEADER3 = ("     3.04           N: GNSS NAV DATA    M: MIXED            RINEX VERSION / TYPE\n"
           "    18                                                      LEAP SECONDS        \n"
           "                                                            END OF HEADER       \n")
RECORD = """\
G02 2018 07 29 00 00 00 4.444736987352E-05-1.136868377216E-11 0.000000000000E+00
     5.300000000000E+01-9.928125000000E+01 5.059496462622E-09-9.323327965461E-01
    -4.759058356285E-06 1.796138891950E-02 4.099681973457E-06 5.153783548355E+03
     0.000000000000E+00-1.452863216400E-07 2.347277701675E+00 3.799796104431E-07
     9.511577990145E-01 2.990625000000E+02-1.843102142568E+00-8.680718729636E-09
    -1.821504444400E-10 1.000000000000E+00 2.012000000000E+03 0.000000000000E+00
     2.000000000000E+00 0.000000000000E+00-2.048909664154E-08 5.300000000000E+01
    -7.182000000000E+03 4.000000000000E+00
"""


def _error(tmp_path, text, name="bad.rnx"):
    path = tmp_path / name
    path.write_text(text)
    with pytest.raises(FileFormatError) as info:
        read_navigation(path)
    message = str(info.value)
    assert "\n" not in message
    return path, message


def test_good_file_reads(tmp_path):
    # The template itself is valid: the failures below come from the damage only.
    path = tmp_path / "good.rnx"
    path.write_text(HEADER3 + RECORD + RECORD.replace("G02", "G03"))
    assert len(read_navigation(path).ephemerides["G"]) == 2


def test_empty_file(tmp_path):
    path, message = _error(tmp_path, "")
    assert message.startswith(f"{path}:1: empty file")


def test_empty_compressed_file(tmp_path):
    path = tmp_path / "empty.rnx.gz"
    path.write_bytes(gzip.compress(b"\n\n"))
    with pytest.raises(FileFormatError, match=r"empty\.rnx\.gz:1: empty file"):
        read_navigation(path)


def test_no_end_of_header(tmp_path):
    path, message = _error(tmp_path, HEADER3.splitlines(True)[0] + HEADER3.splitlines(True)[1])
    assert message.startswith(f"{path}:2: no END OF HEADER line")


def test_unknown_version(tmp_path):
    path, message = _error(tmp_path, HEADER3.replace("     3.04", "     5.00") + RECORD)
    assert message.startswith(f"{path}:1: unknown RINEX version '5.00'")


def test_observation_file_is_refused(tmp_path):
    text = ("     3.04           OBSERVATION DATA    M                   RINEX VERSION / TYPE\n"
            "                                                            END OF HEADER\n")
    path, message = _error(tmp_path, text)
    assert message.startswith(f"{path}:1: not a navigation file (file type 'O'")


def test_not_rinex_at_all(tmp_path):
    path, message = _error(tmp_path, "#cP2020  6 25  0  0  0.00000000      96 ORBIT IGS14 HLM  GRG\n")
    assert message.startswith(f"{path}:1: not a RINEX file")


# A file whose only records are damaged cannot be used: one FileFormatError naming the
# first damaged record (record-level damage among good records: test_rinex_nav_damage.py).
NOTHING = "no readable navigation record"


def test_only_record_truncated(tmp_path):
    path, message = _error(tmp_path, HEADER3 + "".join(RECORD.splitlines(True)[:5]))
    assert message.startswith(f"{path}:4: {NOTHING} (1 read, none usable); first problem: "
                              f"truncated G record: 5 of 8 lines (record starts at line 4)")


def test_only_records_truncated_and_duplicated(tmp_path):
    lines = RECORD.splitlines(True)
    text = HEADER3 + "".join(lines[:6]) + "".join(lines[:3] + lines[2:])
    path, message = _error(tmp_path, text)
    assert message.startswith(f"{path}:4: {NOTHING} (2 read, none usable); first problem: "
                              f"truncated G record: 6 of 8 lines")


def test_only_record_garbled_number(tmp_path):
    bad = RECORD.replace("5.153783548355E+03", "5.153783X48355E+03")
    path, message = _error(tmp_path, HEADER3 + bad)
    assert message.startswith(f"{path}:6: {NOTHING} (1 read, none usable); first problem: G record: "
                              f"garbled number (expected a right-aligned D19.12) '5.153783X48355E+03' "
                              f"in columns 62-80")
    assert "line reads" in message


def test_only_record_impossible_epoch(tmp_path):
    path, message = _error(tmp_path, HEADER3 + RECORD.replace("2018 07 29", "2018 13 29"))
    assert message.startswith(f"{path}:4: {NOTHING}")
    assert "impossible epoch" in message


def test_only_record_blank_week(tmp_path):
    path, message = _error(tmp_path, HEADER3 + RECORD.replace("2.012000000000E+03", " " * 18))
    assert message.startswith(f"{path}:9: {NOTHING}")
    assert "blank week field" in message


def test_only_record_unknown_system_letter(tmp_path):
    path, message = _error(tmp_path, HEADER3 + RECORD.replace("G02", "X02"))
    assert message.startswith(f"{path}:4: {NOTHING}")
    assert "unknown satellite system letter 'X'" in message


def test_rinex4_bad_marker(tmp_path):
    text = HEADER3.replace("3.04", "4.00") + "> EPH\n" + RECORD
    path, message = _error(tmp_path, text)
    assert message.startswith(f"{path}:4: {NOTHING}")
    assert "record marker must read '> EPH Snn TYPE'" in message


def test_rinex4_truncated_eph(tmp_path):
    text = HEADER3.replace("3.04", "4.00") + "> EPH G02 LNAV\n" + "".join(RECORD.splitlines(True)[:7])
    path, message = _error(tmp_path, text)
    assert message.startswith(f"{path}:4: {NOTHING}")
    assert "truncated G record: 7 of 8 lines" in message


def test_unknown_systems_argument(tmp_path):
    path = tmp_path / "good.rnx"
    path.write_text(HEADER3 + RECORD)
    with pytest.raises(GnssrelInputError, match="unknown system letter"):
        read_navigation(path, systems="GX")


def test_missing_file(tmp_path):
    with pytest.raises(FileFormatError, match="no such file"):
        read_navigation(tmp_path / "absent.rnx")


def test_file_cut_inside_a_number_is_truncated_not_read(tmp_path):
    # A file cut mid-field still "parses" ("2.95200" of "2.952000000000E+00"), so the reader
    # checks that every filled D19.12 field ends in its last column (RINEX 3.05 A.2): the
    # cut record is dropped and counted, the records before it are read.
    from conftest import SAMPLE_LOGS

    from gnssrel.accounting import Ledger

    lines = (SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx").read_text().splitlines(keepends=True)
    first = next(i for i, ln in enumerate(lines) if "END OF HEADER" in ln) + 1
    assert lines[first][0] == "G" and lines[first + 8][0] == "G"   # two GPS records: 8 lines each
    last_line = lines[first + 15]
    bad = tmp_path / "cut.rnx"
    bad.write_text("".join(lines[:first + 15]) + last_line[:12])  # cut inside its first number
    nav = read_navigation(bad)
    assert len(nav.ephemerides["G"]) == 1
    ledger = nav.accounting
    assert isinstance(ledger, Ledger) and ledger.unbalanced() == []
    assert ledger.count("navigation_records", "G", "damaged") == 1
    line_no = first + 16
    assert any(w.startswith(f"{bad}:{line_no}: ") and "columns 5-23" in w for w in ledger.warnings)
