"""A damaged or impossible navigation record costs that record only, and is counted.

Each test builds a small file (a few records written here) in which one record is
damaged; the others must be read as if nothing happened, the damaged one must be
absent from the tables, counted in ``nav.accounting`` with its reason, and named
(file and line) in a warning.  The ledger must balance (read = used + dropped).

Format facts behind the checks (RINEX 3.05 section A.2, Tables A5/A6; RINEX 2.11
Table A4; RINEX 4.00 section 5): numbers are Fortran D19.12, right-aligned in their
19 columns; the epoch line is A1,I2.2,1X,I4,5(1X,I2.2) (RINEX 2: I2,5I3,F5.1).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from test_rinex_nav_bad_input import HEADER3, RECORD  # a RINEX 3.04 header (LEAP SECONDS 18), G02

from gnssrel.errors import FileFormatError
from gnssrel.io.rinex_nav import NavigationData, read_navigation

ITEM = "navigation_records"
# GLONASS record (MOJN 2020-177, RINEX 3.05: positions in km).
GLONASS = """\
R01 2020 06 24 23 45 00 6.355997174978e-05 0.000000000000e+00 3.438000000000e+05
     1.372008105469e+04 1.682619094849e+00-0.000000000000e+00 0.000000000000e+00
     1.826717285156e+03 2.401678085327e+00 0.000000000000e+00 1.000000000000e+00
     2.143656884766e+04-1.280283927917e+00-2.793967723846e-09 0.000000000000e+00
"""
SBAS = """\
S23 2018 07 29 00 00 16 0.000000000000e+00 0.000000000000e+00 3.456300000000e+05
     3.594460000000e+04 0.000000000000e+00 0.000000000000e+00 6.300000000000e+01
     2.204414000000e+04 0.000000000000e+00 0.000000000000e+00 3.276700000000e+04
     0.000000000000e+00 0.000000000000e+00 0.000000000000e+00 9.200000000000e+01
"""
BAD_LINE = 12  # the damaged record is the second one: lines 12-19


def _read(tmp_path, text, name="nav.rnx"):
    path = tmp_path / name
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_text(text)
    nav = read_navigation(path)
    assert nav.accounting.unbalanced() == []
    return path, nav


def _one_damaged(tmp_path, bad_record, reason="damaged", system="G", line=BAD_LINE, text=None):
    """G03, <bad record>, G05: the bad one is dropped and counted, the others read."""
    text = text or (HEADER3 + RECORD.replace("G02", "G03") + bad_record + RECORD.replace("G02", "G05"))
    path, nav = _read(tmp_path, text)
    assert list(nav.ephemerides["G"].sv) == ["G03", "G05"]
    acc = nav.accounting
    assert acc.count(ITEM, "G", "used") == 2
    assert acc.count(ITEM, system, reason) == 1
    assert acc.count(ITEM) == 3
    hits = [w for w in acc.warnings if w.startswith(f"{path}:{line}: ")]
    assert len(hits) == 1, acc.warnings
    return hits[0]


# ------------------------------------------------------------------ damaged records
def test_truncated_record_in_mid_file(tmp_path):
    bad = "".join(RECORD.splitlines(True)[:7])
    warning = _one_damaged(tmp_path, bad)
    assert "truncated G record: 7 of 8 lines (record starts at line 12)" in warning


def test_duplicated_line(tmp_path):
    lines = RECORD.splitlines(True)
    warning = _one_damaged(tmp_path, "".join(lines[:4] + lines[3:]))
    assert "G record has 9 lines, expected 8" in warning


def test_garbled_number(tmp_path):
    warning = _one_damaged(tmp_path, RECORD.replace("5.153783548355E+03", "5.153783X48355E+03"),
                           line=BAD_LINE + 2)
    assert "'5.153783X48355E+03' in columns 62-80" in warning


def test_blank_integer_field(tmp_path):
    warning = _one_damaged(tmp_path, RECORD.replace("2.012000000000E+03", " " * 18), line=BAD_LINE + 5)
    assert "blank week field" in warning


def test_garbled_satellite_number(tmp_path):
    # Was a crash in int().
    warning = _one_damaged(tmp_path, RECORD.replace("G02", "G0X"))
    assert "garbled satellite number" in warning


def test_unknown_system_letter_at_a_record_start(tmp_path):
    warning = _one_damaged(tmp_path, RECORD.replace("G02", "X02"), system="-")
    assert "unknown satellite system letter 'X'" in warning


def test_epoch_in_the_wrong_columns(tmp_path):
    warning = _one_damaged(tmp_path, RECORD.replace("G02 2018 07 29 00 00 00 ", "G02  2018 07 29 00 00 00"))
    assert "garbled" in warning


def test_number_ending_early(tmp_path):
    # One column to the left: "5.153783548355E+03 " would read 5153.78 and leave a blank.
    bad = RECORD.replace(" 5.153783548355E+03", "5.153783548355E+03 ")
    _one_damaged(tmp_path, bad, line=BAD_LINE + 2)


def test_non_ascii_byte(tmp_path):
    # Was a UnicodeDecodeError in other readers; a byte 0xB5 inside a number here.
    bad = RECORD.encode().replace(b"5.153783548355E+03", b"5.15378\xb5548355E+03")
    text = (HEADER3 + RECORD.replace("G02", "G03")).encode() + bad + RECORD.replace("G02", "G05").encode()
    path, nav = _read(tmp_path, text)
    assert list(nav.ephemerides["G"].sv) == ["G03", "G05"]
    assert nav.accounting.count(ITEM, "G", "damaged") == 1
    assert any(w.startswith(f"{path}:{BAD_LINE + 2}: ") for w in nav.accounting.warnings)


# ------------------------------------------------------------------ refused, not guessed
@pytest.mark.parametrize("text", ["5.15378_548355E+03", "               NaN", "               INF",
                                  "5.153783548355E+3 ", " 5.153783548355+03", "5.153783548355E+0X"])
def test_number_a_strict_reading_refuses(tmp_path, text):
    # numpy's float parse takes "5.15378_548355E+03" as 5153.78548355 (a digit separator)
    # and "NaN"/"INF" as numbers: each must cost the record instead.
    _one_damaged(tmp_path, RECORD.replace("5.153783548355E+03", text), line=BAD_LINE + 2)


@pytest.mark.parametrize("old, new, field", [
    ("5.153783548355E+03", "9.990000000000E+99", "sqrt_a_sqrt_m"),
    ("5.153783548355E+03", "5.153783548355E+02", "sqrt_a_sqrt_m"),
    ("1.796138891950E-02", "5.796138891950E-01", "eccentricity"),
    ("9.511577990145E-01", "9.511577990145E+00", "inclination_rad"),
    ("4.444736987352E-05", "4.444736987352E+00", "clock_bias_s"),
    ("-1.136868377216E-11", "-1.136868377216E-01", "clock_drift_s_per_s"),
    ("-8.680718729636E-09", "-8.680718729636E-03", "omega_dot_rad_per_s"),
    ("-7.182000000000E+03", "-7.182000000000E+99", "transmission_sow_s"),
])
def test_value_out_of_its_physical_range(tmp_path, old, new, field):
    warning = _one_damaged(tmp_path, RECORD.replace(old, new), reason=f"refused: {field} out of range",
                           line=_line_of(old))
    assert field in warning


def _line_of(text):
    return BAD_LINE + next(k for k, ln in enumerate(RECORD.splitlines()) if text in ln)


def test_unknown_transmission_time_marker_is_allowed(tmp_path):
    # RINEX 3.05 Table A6: 0.999999999999E+09 marks an unknown transmission time.
    _, nav = _read(tmp_path, HEADER3 + RECORD.replace("-7.182000000000E+03", " 9.999999999990E+08"))
    row = nav.ephemerides["G"].iloc[0]
    assert pd.isna(row.transmission_time) and nav.accounting.count(ITEM, "G", "used") == 1


def test_unhealthy_record_keeps_its_broadcast_values(tmp_path):
    # Satellites in test broadcast impossible orbits flagged unhealthy (ELKO 2018-210 C16:
    # sqrt(A) 1028 m^0.5, e 0.49, health 1): kept as broadcast, no state is computed from them.
    bad = RECORD.replace("1.796138891950E-02", "4.862745096907E-01").replace(
        " 2.000000000000E+00 0.000000000000E+00-2.048909664154E-08",
        " 2.000000000000E+00 1.000000000000E+00-2.048909664154E-08")
    _, nav = _read(tmp_path, HEADER3 + bad)
    assert nav.ephemerides["G"].eccentricity.iloc[0] == 0.4862745096907


def test_glonass_record_one_line_short_from_rinex_305_on(tmp_path):
    # RINEX 3.05 Table A11: five lines per GLONASS record (four before 3.05).  A 3.05 record
    # with a line deleted must not pass as a four-line one (its fields would shift a line).
    five = GLONASS + "     0.000000000000e+00 0.000000000000e+00 0.000000000000e+00 0.000000000000e+00\n"
    lines = five.splitlines(True)
    short = "".join(lines[:1] + lines[2:]).replace("R01", "R02")
    header = HEADER3.replace("3.04", "3.05")
    _, nav = _read(tmp_path, header + five + short + five.replace("R01", "R03"))
    assert list(nav.ephemerides["R"].sv) == ["R01", "R03"]
    assert nav.accounting.count(ITEM, "R", "damaged") == 1
    _, nav = _read(tmp_path, HEADER3 + GLONASS + five.replace("R01", "R02"), name="old.rnx")
    assert list(nav.ephemerides["R"].sv) == ["R01"]          # 3.04: four lines only


def test_glonass_position_out_of_range(tmp_path):
    header = HEADER3
    bad = GLONASS.replace("R01", "R02").replace("1.372008105469e+04", "1.372008105469e+14")
    _, nav = _read(tmp_path, header + GLONASS + bad + GLONASS.replace("R01", "R03"))
    assert list(nav.ephemerides["R"].sv) == ["R01", "R03"]
    assert nav.accounting.count(ITEM, "R", "refused: x_m out of range") == 1
    assert nav.ephemerides["R"].x_m.iloc[0] == pytest.approx(13720081.05469)


@pytest.mark.parametrize("date", ["2018 02 30", "2018 13 29", "2019 02 29", "1020 07 29", "2018 07 29 24"])
def test_impossible_date(tmp_path, date):
    # 30 February was read as 2 March: the day must exist in its month.
    bad = RECORD.replace("2018 07 29 00", date if len(date) > 10 else date + " 00")
    warning = _one_damaged(tmp_path, bad, reason="refused: impossible date")
    assert "impossible epoch" in warning


def test_rinex2_value_in_the_wrong_columns(tmp_path):
    # RINEX 2.11 Table A4: 3X,4D19.12.  "1.493000000000D+04" shifted two columns right
    # would read 1.493 in a lenient reader; here the field is no D19.12 number: refused.
    header = ("     2.11           N: GPS NAV DATA                         RINEX VERSION / TYPE\n"
              "                                                            END OF HEADER\n")
    rec = """\
 2 18  7 29  0  0  0.0 4.444736987352D-05-1.136868377216D-11 0.000000000000D+00
    5.300000000000D+01-9.928125000000D+01 5.059496462622D-09-9.323327965461D-01
   -4.759058356285D-06 1.796138891950D-02 4.099681973457D-06 5.153783548355D+03
    1.493000000000D+04-1.452863216400D-07 2.347277701675D+00 3.799796104431D-07
    9.511577990145D-01 2.990625000000D+02-1.843102142568D+00-8.680718729636D-09
   -1.821504444400D-10 1.000000000000D+00 2.012000000000D+03 0.000000000000D+00
    2.000000000000D+00 0.000000000000D+00-2.048909664154D-08 5.300000000000D+01
   -7.182000000000D+03 4.000000000000D+00
"""
    shifted = rec.replace("    1.493000000000D+04-1.452863216400D-07",
                          "      1.493000000000D+041.452863216400D-07")
    _, nav = _read(tmp_path, header + rec + shifted.replace(" 2 18", " 3 18"))
    table = nav.ephemerides["G"]
    assert list(table.sv) == ["G02"] and table.toe_sow_s.iloc[0] == 14930.0
    assert nav.accounting.count(ITEM, "G", "damaged") == 1


def test_week_that_disagrees_with_the_epoch(tmp_path):
    warning = _one_damaged(tmp_path, RECORD.replace("2.012000000000E+03", "2.013000000000E+03"),
                           reason="refused: week disagrees with the epoch", line=BAD_LINE)
    assert "week 2013" in warning


def test_epoch_far_from_the_other_records(tmp_path):
    # A garbled year moves a record by a year: far outside the bulk of the file.
    good = "".join(RECORD.replace("G02", f"G{k:02d}") for k in range(3, 12))
    far = RECORD.replace("G02", "G20").replace("2018 07 29", "2018 08 12").replace(
        "2.012000000000E+03", "2.014000000000E+03")
    _, nav = _read(tmp_path, HEADER3 + good + far)
    assert "G20" not in set(nav.ephemerides["G"].sv) and len(nav.ephemerides["G"]) == 9
    assert nav.accounting.count(ITEM, "G", "refused: epoch far from the file's other records") == 1


def test_records_over_three_days_are_kept(tmp_path):
    # A multi-day file (like ELKO 2018-210) keeps every record: the span is the bulk's.
    days = [("2018 07 29", "2.012000000000E+03", "0.000000000000E+00"),
            ("2018 07 30", "2.012000000000E+03", "8.640000000000E+04"),
            ("2018 07 31", "2.012000000000E+03", "1.728000000000E+05")]
    body = "".join(RECORD.replace("G02", f"G{k:02d}").replace("2018 07 29", d).replace(
        "2.012000000000E+03", w).replace(" 0.000000000000E+00-1.452863216400E-07", f" {s}-1.452863216400E-07")
        for k, (d, w, s) in enumerate(days * 2, start=1))
    _, nav = _read(tmp_path, HEADER3 + body)
    assert len(nav.ephemerides["G"]) == 6


@pytest.mark.parametrize("value, kept", [("    -1", None), ("  1017", None)])
def test_impossible_leap_seconds_refused(tmp_path, value, kept):
    header = HEADER3.replace("    18", value)
    path, nav = _read(tmp_path, header + GLONASS.replace("2020 06 24", "2018 07 29"))
    assert nav.header["leap_seconds"] is kept
    assert nav.header["leap_seconds_refused"] == int(value)
    assert any(w.startswith(f"{path}:2: LEAP SECONDS {int(value)}") for w in nav.accounting.warnings)
    # The built-in table (18 s in 2018) converts t_b: UTC 23:45:00 -> GPST 23:45:18.
    assert nav.ephemerides["R"].toc.iloc[0] == np.datetime64("2018-07-29T23:45:18")


def test_plausible_leap_seconds_that_disagree_warn(tmp_path):
    _, nav = _read(tmp_path, HEADER3.replace("    18", "    17") + RECORD)
    assert nav.header["leap_seconds"] == 17
    assert any("disagrees with the built-in table (18 s" in w for w in nav.accounting.warnings)


def test_garbled_optional_header_line_is_skipped(tmp_path):
    header = HEADER3.replace("    18    ", "    18    ").replace(
        "                                                            END OF HEADER",
        "GPSA   1.1176D-08  7.4506D-09 -5.96X6D-08 -5.9605D-08       IONOSPHERIC CORR    \n"
        "                                                            END OF HEADER")
    path, nav = _read(tmp_path, header + RECORD)
    assert "GPSA" not in nav.header["ionosphere"] and len(nav.ephemerides["G"]) == 1
    assert any(w.startswith(f"{path}:3: garbled number") for w in nav.accounting.warnings)


# ------------------------------------------------------------------ accounting of what is not read
def test_sbas_and_navic_records_are_counted(tmp_path):
    # Since issue 14 both are tabulated (RINEX 3.04 SBAS and IRNSS records).
    navic = RECORD.replace("G02", "I02").replace("5.153783548355E+03", "6.493359437943E+03")  # geosynchronous
    _, nav = _read(tmp_path, HEADER3 + RECORD + SBAS + navic)
    acc = nav.accounting
    assert acc.count(ITEM, "S", "used") == 1 and acc.count(ITEM, "I", "used") == 1
    assert nav.header["skipped"] == {}
    assert acc.count(ITEM, "G", "used") == 1 and acc.unbalanced() == []


def test_rinex4_record_kinds_are_counted(tmp_path):
    # Since issue 14: CNAV, SBAS, STO and EOP are read; a CNAV record one line short is damaged.
    header = HEADER3.replace("3.04", "4.00")
    sto = ("> STO C21 CNVX\n    2018 07 29 00 20 00 BDGA\n"
           "     2.286000000000e+03-2.502929419279e-08 2.664535259100e-14 6.776263578034e-21\n")
    eop = ("> EOP G27 CNVX\n    2018 07 29 16 51 12-4.024982452393e-02 3.957748413086e-05 0.000000000000e+00\n"
           "                        3.562908172607e-01 2.602100372314e-03 0.000000000000e+00\n"
           "     4.392000000000e+03-1.940387487411e-02-1.411736011505e-04 0.000000000000e+00\n")
    # the LNAV record read as CNAV: its IODE slot is A_dot there (53 m/s cannot be): 0.053 m/s
    # and its L2-codes slot Delta n0 dot (1 rad/s^2 cannot be): 1e-13
    cnav = RECORD.replace("5.300000000000E+01", "5.300000000000E-02").replace(
        "1.000000000000E+00 2.012000000000E+03", "1.000000000000E-13 2.012000000000E+03") \
        + "     6.000000000000e+00 2.012000000000e+03\n"
    text = (header + "> EPH G02 LNAV\n" + RECORD + "> EPH G02 CNAV\n" + cnav + sto + eop
            + "> EPH S23 SBAS\n" + SBAS + "> EPH G03 CNAV\n" + RECORD.replace("G02", "G03"))
    _, nav = _read(tmp_path, text)
    acc = nav.accounting
    assert acc.count(ITEM, "G") == 3 and acc.count(ITEM, "G", "used") == 2
    assert acc.count(ITEM, "G", "damaged") == 1              # G03 CNAV: 8 of 9 lines
    assert acc.count(ITEM, "-", "used") == 2 and acc.count(ITEM, "S", "used") == 1
    assert nav.header["skipped"] == {} and acc.unbalanced() == []
    assert sorted(nav.ephemerides["G"].nav_type) == ["CNAV", "LNAV"]
    sto_entry = nav.header["system_time_offsets"][0]
    assert (sto_entry["code"], sto_entry["a0_s"], sto_entry["message"]) == ("BDGA", -2.502929419279e-08, "CNVX")
    assert nav.header["time_corrections"]["BDGA"]["a1_s_per_s"] == 2.664535259100e-14
    eop_entry = nav.header["earth_orientation"][0]
    assert (eop_entry["y_pole_arcsec"], eop_entry["ut1_utc_s"]) == (3.562908172607e-01, -1.940387487411e-02)


KLOBUCHAR = ("    2018 07 29 00 08 54 3.259629011154e-08 7.450580596924e-09-1.788139343262e-07\n"
             "     0.000000000000e+00 1.351680000000e+05 0.000000000000e+00-2.621440000000e+05\n"
             "     1.310720000000e+05\n")
BDGIM = ("    2018 07 29 00 00 00 3.550000000000e+01 2.000000000000e+00 1.200000000000e+01\n"
         "     1.337500000000e+01-1.725000000000e+01 1.125000000000e+00 1.000000000000e+00\n"
         "     3.000000000000e+00 3.750000000000e-01\n")


def test_rinex4_ion_message_type_is_checked(tmp_path):
    # RINEX 4.00 ION records: BeiDou CNVX is BDGIM (nine coefficients), not Klobuchar.
    header = HEADER3.replace("3.04", "4.00")
    text = (header + "> EPH G02 LNAV\n" + RECORD + "> ION C30 CNVX\n" + BDGIM
            + "> ION C05 D1D2\n" + KLOBUCHAR + "> ION C05 D1D2\n")
    _, nav = _read(tmp_path, text)
    assert nav.header["ionosphere"]["BDSA"] == [3.259629011154e-08, 7.450580596924e-09,
                                                -1.788139343262e-07, 0.0]
    acc = nav.accounting
    assert acc.count(ITEM, "-", "used") == 2              # BDGIM kept too since issue 14
    assert nav.header["ionosphere_models"]["C CNVX"]["values"][:3] == [35.5, 2.0, 12.0]
    assert len(nav.header["ionosphere_models"]["C CNVX"]["values"]) >= 9
    assert acc.count(ITEM, "-", "not read: empty ION record") == 1
    assert acc.count(ITEM, "C") == 0 and acc.count(ITEM, "G", "used") == 1


def test_bdgim_alone_gives_no_klobuchar(tmp_path):
    header = HEADER3.replace("3.04", "4.00")
    _, nav = _read(tmp_path, header + "> EPH G02 LNAV\n" + RECORD + "> ION C30 CNVX\n" + BDGIM)
    assert "BDSA" not in nav.header["ionosphere"]


def test_systems_not_requested_are_counted(tmp_path):
    path = tmp_path / "nav.rnx"
    path.write_text(HEADER3 + RECORD + GLONASS)
    nav = read_navigation(path, systems="R")
    assert nav.accounting.count(ITEM, "G", "system not requested") == 1
    assert nav.accounting.count(ITEM, "R", "used") == 1 and nav.accounting.unbalanced() == []


def test_good_file_has_no_warning(tmp_path):
    _, nav = _read(tmp_path, HEADER3 + RECORD + RECORD.replace("G02", "G03"))
    assert nav.accounting.warnings == [] and nav.accounting.count(ITEM, "G", "used") == 2


def test_every_record_damaged_raises(tmp_path):
    path = tmp_path / "nav.rnx"
    path.write_text(HEADER3 + RECORD.replace("G02", "G0X") + RECORD.replace("2018 07 29", "2018 02 30"))
    with pytest.raises(FileFormatError, match=r"nav\.rnx:4: no readable navigation record \(2 read"):
        read_navigation(path)


# ------------------------------------------------------------------ several files
GAL_HEADER = ("     3.04           N: GNSS NAV DATA    E: GALILEO          RINEX VERSION / TYPE\n"
              "GAL    6.6250D+01 -1.6406D-01  2.5940D-03  0.0000D+00       IONOSPHERIC CORR    \n"
              "                                                            END OF HEADER       \n")
GPS_HEADER = ("     3.04           N: GNSS NAV DATA    G: GPS              RINEX VERSION / TYPE\n"
              "GPSA   1.1176D-08  7.4506D-09 -5.9605D-08 -5.9605D-08       IONOSPHERIC CORR    \n"
              "GPSB   9.0112D+04  1.6384D+04 -1.9661D+05 -6.5536D+04       IONOSPHERIC CORR    \n"
              "GPUT -2.7939677238D-09-7.105427358D-15 319488 2308          TIME SYSTEM CORR    \n"
              "    18                                                      LEAP SECONDS        \n"
              "                                                            END OF HEADER       \n")


def test_merge_keeps_every_files_header_values(tmp_path):
    # Was: Galileo file first, GPS file second lost the GPS Klobuchar coefficients.
    gal = tmp_path / "gal.rnx"
    gal.write_text(GAL_HEADER + RECORD.replace("G02", "E02").replace("1.000000000000E+00 2.012",
                                                                      "5.170000000000E+02 2.012"))
    gps = tmp_path / "gps.rnx"
    gps.write_text(GPS_HEADER + RECORD)
    other = tmp_path / "other.rnx"
    other.write_text(GPS_HEADER.replace("1.1176D-08", "2.2352D-08") + RECORD)
    merged = NavigationData.merge([read_navigation(gal), read_navigation(gps), read_navigation(other)])
    header = merged.header
    assert header["ionosphere"]["GPSA"] == [1.1176e-08, 7.4506e-09, -5.9605e-08, -5.9605e-08]
    assert header["ionosphere"]["GAL"] == [66.25, -0.16406, 0.002594]
    assert header["ionosphere_sources"] == {"GAL": "gal.rnx", "GPSA": "gps.rnx", "GPSB": "gps.rnx"}
    assert header["time_correction_sources"] == {"GPUT": "gps.rnx"}
    assert header["leap_seconds"] == 18 and header["leap_seconds_source"] == "gps.rnx"
    acc = merged.accounting
    assert any("ionosphere GPSA differs" in w and "other.rnx" in w for w in acc.warnings)
    # The G02 record of other.rnx is the one of gps.rnx: retired as a duplicate.
    assert len(merged.ephemerides["G"]) == 1 and len(merged.ephemerides["E"]) == 1
    assert acc.count(ITEM, "G") == 2 and acc.count(ITEM, "G", "used") == 1
    assert acc.count(ITEM, "G", "duplicate of another file's record") == 1
    assert acc.unbalanced() == []
