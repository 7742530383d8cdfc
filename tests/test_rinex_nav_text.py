"""Navigation reader against the files' own text (where georinex cannot serve as reference).

Galileo and BeiDou records of the mixed RINEX 3 day (georinex 1.16.2 returns NaN for
them) and the RINEX 4.00 file (georinex cannot read it) are parsed here by hand
with plain string slicing (RINEX 3.04/4.00: 4X,4D19.12 continuation lines, epoch
line A3,1X,I4,5(1X,I2),3D19.12) and compared value by value.  Time-rule values
are derived by hand from the cited definitions.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import refdata_file

from gnssrel.io.opening import read_text
from gnssrel.io.rinex_nav import NavigationData, read_navigation

MOJN = "2020-177/MOJN00DNK_R_20201770000_01D_MN.rnx.gz"
KMS = "2022-159/KMS300DNK_R_20221591000_01H_MN.rnx.gz"

# Field order of the Keplerian records written out independently (RINEX 3.04 Tables A8, A12).
E_ORDER = ["clock_bias_s", "clock_drift_s_per_s", "clock_drift_rate_s_per_s2",
           "iode", "crs_m", "delta_n_rad_per_s", "mean_anomaly_rad",
           "cuc_rad", "eccentricity", "cus_rad", "sqrt_a_sqrt_m",
           "toe_sow_s", "cic_rad", "omega0_rad", "cis_rad",
           "inclination_rad", "crc_m", "perigee_argument_rad", "omega_dot_rad_per_s",
           "idot_rad_per_s", "data_sources", "week", None,
           "accuracy_m", "health", "bgd_e5a_e1_s", "bgd_e5b_e1_s",
           "transmission_sow_s", None, None, None]
C_ORDER = E_ORDER[:20] + [None, "week", None, "accuracy_m", "health", "tgd1_b1_b3_s",
                          "tgd2_b2_b3_s", "transmission_sow_s", "aodc", None, None]
R_ORDER = ["clock_bias_s", "relative_frequency_bias", "message_frame_time_s",
           "x_m", "vx_m_per_s", "ax_m_per_s2", "health", "y_m", "vy_m_per_s", "ay_m_per_s2",
           "frequency_channel", "z_m", "vz_m_per_s", "az_m_per_s2", "age_days",
           "status_flags", "group_delay_l1_l2_s", "urai", "health_flags"]


def hand_parse(lines, index, n_lines):
    """Numbers of the record whose epoch line is lines[index], by slicing (blank -> None)."""
    out = []
    for k in range(n_lines):
        line = lines[index + k].ljust(80)
        starts = (23, 42, 61) if k == 0 else (4, 23, 42, 61)
        for a in starts:
            text = line[a:a + 19].strip().replace("D", "E")
            out.append(float(text) if text else None)
    return out


def check_records(nav, lines, letter, order, n_lines, scale=None):
    table = nav.ephemerides[letter]
    for row in table.itertuples():
        values = hand_parse(lines, row.line - 1, n_lines)
        assert lines[row.line - 1].startswith(row.sv)
        for name, value in zip(order, values):
            if name is None:
                continue
            got = getattr(row, name)
            if value is None:
                assert np.isnan(got), f"{row.sv} line {row.line} {name}: blank field gave {got}"
            else:
                factor = 1000.0 if scale and name in scale else 1.0
                assert got == value * factor, f"{row.sv} line {row.line} {name}: {got} != {value}"
    return len(table)


@pytest.fixture(scope="module")
def mojn():
    path = refdata_file(MOJN)
    return read_navigation(path), read_text(path).splitlines()


@pytest.mark.refdata
def test_mojn_galileo_and_beidou_match_the_text(mojn):
    nav, lines = mojn
    # Record counts: lines of the body starting with E / C (grep, 1662 and 344).
    assert check_records(nav, lines, "E", E_ORDER, 8) == 1662
    assert check_records(nav, lines, "C", C_ORDER, 8) == 344
    # Blank spare fields must not make records NaN.
    for letter in "EC":
        assert np.isfinite(nav.ephemerides[letter]["sqrt_a_sqrt_m"]).all()
        assert np.isfinite(nav.ephemerides[letter]["toe_sow_s"]).all()


@pytest.mark.refdata
def test_mojn_times_and_types(mojn):
    nav, _ = mojn
    e = nav.ephemerides["E"]
    first = e[e.sv == "E01"].iloc[0]
    # File: "E01 2020 06 24 23 10 00", Toe 342600 s of (GPS-aligned) week 2111, data sources 258.
    assert first.toc == np.datetime64("2020-06-24T23:10:00")
    assert first.toe == np.datetime64("1980-01-06") + np.timedelta64(2111 * 604800 + 342600, "s")
    assert first.nav_type == "FNAV" and first.clock_frequency_pair == "E1,E5a"
    assert set(e.loc[e.data_sources == 517, "nav_type"]) == {"INAV"}  # bits 0, 2, 9
    assert set(e.loc[e.data_sources == 258, "nav_type"]) == {"FNAV"}  # bits 1, 8
    c = nav.ephemerides["C"]
    c05 = c[c.sv == "C05"].iloc[0]
    # "C05 2020 06 24 22 00 00" in BDT; BDT = GPST - 14 s; BDT week 755, Toe 338400 s.
    assert c05.toc == np.datetime64("2020-06-24T22:00:14")
    assert c05.toe == np.datetime64("2006-01-01T00:00:14") + np.timedelta64(755 * 604800 + 338400, "s")
    assert c05.toe == c05.toc
    assert c05.nav_type == "D2" and c05.is_geo
    assert set(c.loc[c.is_geo, "sv"]) <= {"C01", "C02", "C03", "C04", "C05", "C59", "C60", "C61"}
    assert set(c.loc[~c.is_geo, "nav_type"]) == {"D1"}
    r = nav.ephemerides["R"]
    r01 = r[r.sv == "R01"].iloc[0]
    # "R01 2020 06 24 23 45 00" UTC, header LEAP SECONDS 18; X = 1.372008105469e+04 km.
    assert r01.toc == np.datetime64("2020-06-24T23:45:18")
    assert r01.x_m == 1.372008105469e+04 * 1000.0
    assert r01.urai == 15.0 and np.isnan(r01.group_delay_l1_l2_s)  # .999999999999e+09 = unknown
    g = nav.ephemerides["G"]
    g01 = g[g.sv == "G01"].iloc[0]
    # toe 360000 s week 2111; transmission 355746 s of the same week.
    assert g01.transmission_time == np.datetime64("1980-01-06") + np.timedelta64(2111 * 604800 + 355746, "s")
    assert nav.header["leap_seconds"] == 18
    assert nav.header["ionosphere"]["GAL"] == [28.25, 7.8125e-03, 1.0071e-02]
    assert nav.header["ionosphere"]["GPSB"] == [8.1920e+04, 9.8304e+04, -6.5536e+04, -5.2429e+05]
    assert nav.header["time_corrections"]["GPUT"]["a0_s"] == 9.3132257462e-10
    assert nav.header["skipped"] == {} and len(nav.ephemerides["S"]) == 2168  # SBAS read since issue 14
    for table in nav.ephemerides.values():  # contract: sorted by (sv, toc), RangeIndex
        assert list(table.index) == list(range(len(table)))
        keys = list(zip(table.sv, table.toc))
        assert keys == sorted(keys)


@pytest.mark.refdata
def test_systems_argument(mojn):
    path = refdata_file(MOJN)
    assert read_navigation(path, systems="GE").systems == "GE"
    only_r = read_navigation(path, systems=["r"])
    assert only_r.systems == "R"
    assert only_r.ephemerides["R"].equals(mojn[0].ephemerides["R"])


@pytest.mark.refdata
def test_rinex4_matches_the_text():
    path = refdata_file(KMS)
    nav = read_navigation(path)
    lines = read_text(path).splitlines()
    markers = [ln.split() for ln in lines if ln.startswith("> EPH")]
    expected = {}
    for _, _, sv, kind in markers:
        expected[(sv[0], kind)] = expected.get((sv[0], kind), 0) + 1
    for letter, table in nav.ephemerides.items():
        got = table.groupby("nav_type").size().to_dict()
        assert got == {k: n for (s, k), n in expected.items() if s == letter}
    assert check_records(nav, lines, "E", E_ORDER, 8) == 108
    assert check_records(nav, lines, "C", C_ORDER, 8) == 36
    assert check_records(nav, lines, "R", R_ORDER, 5, scale={"x_m", "y_m", "z_m", "vx_m_per_s",
                         "vy_m_per_s", "vz_m_per_s", "ax_m_per_s2", "ay_m_per_s2", "az_m_per_s2"}) == 24
    # The nav_type comes from the marker line: E01 is there as INAV and FNAV with the same toc.
    e01 = nav.ephemerides["E"].query("sv == 'E01'")
    assert {"INAV", "FNAV"} <= set(e01.nav_type)
    assert nav.header["skipped"] == {}       # SBAS and STO read since issue 14
    assert len(nav.ephemerides["S"]) == 158 and len(nav.header["system_time_offsets"]) == 3
    # "> ION G29 LNAV": alpha0-3 then beta0-3.
    assert nav.header["ionosphere"]["GPSA"] == [1.024454832077E-08, 2.235174179077E-08,
                                                -5.960464477539E-08, -1.192092895508E-07]
    assert nav.header["ionosphere"]["GAL"] == [7.850000000000E+01, 5.390625000000E-01, 2.713012695312E-02]
    r03 = nav.ephemerides["R"].query("sv == 'R03'").iloc[0]
    assert r03.toc == np.datetime64("2022-06-08T09:45:18")  # UTC 09:45:00 + 18 s
    assert r03.status_flags == 183.0 and r03.urai == 3.0


@pytest.mark.refdata
def test_rinex2_systems_and_time_rules():
    glo = read_navigation(refdata_file("2018-210/p1462100.18g"))
    assert glo.header["leap_seconds"] is None  # none in the file: built-in table, 18 s in 2018
    r22 = glo.ephemerides["R"].query("sv == 'R22'").iloc[0]
    assert r22.toc == np.datetime64("2018-07-28T23:45:18")
    assert r22.x_m == 2.253991210938e+03 * 1000.0 and r22.frequency_channel == -3
    gal = read_navigation(refdata_file("2018-210/ceda2100.18e"))
    e05 = gal.ephemerides["E"].query("sv == 'E05'").iloc[0]
    assert e05.toe == np.datetime64("2018-07-29T02:50:00")  # week 2012, 10200 s
    assert gal.header["ionosphere"]["GAL"] == [49.25, 0.20703, 0.0040283]
    gps = read_navigation(refdata_file("2018-210/ab422100.18n"))
    g10 = gps.ephemerides["G"].query("sv == 'G10'").iloc[0]
    # Transmission time 18 s of week 2012 (the toe week, toe 7200 s).
    assert g10.transmission_time == np.datetime64("2018-07-29T00:00:18")


@pytest.mark.refdata
def test_transmission_time_given_in_the_toe_week():
    elko = read_navigation(refdata_file("2018-210/ELKO00USA_R_20182100000_01D_MN.rnx.gz"), "G")
    g02 = elko.ephemerides["G"].query("sv == 'G02' and toe_sow_s == 0").iloc[0]
    # Transmission -7182 s relative to week 2012 (starts 2018-07-29): 2018-07-28 22:00:18.
    assert g02.transmission_sow_s == -7182.0
    assert g02.transmission_time == np.datetime64("2018-07-28T22:00:18")


GPS_RECORD = """\
G02 2018 07 29 00 00 00 4.444736987352E-05-1.136868377216E-11 0.000000000000E+00
     5.300000000000E+01-9.928125000000E+01 5.059496462622E-09-9.323327965461E-01
    -4.759058356285E-06 1.796138891950E-02 4.099681973457E-06 5.153783548355E+03
     0.000000000000E+00-1.452863216400E-07 2.347277701675E+00 3.799796104431E-07
     9.511577990145E-01 2.990625000000E+02-1.843102142568E+00-8.680718729636E-09
    -1.821504444400E-10 1.000000000000E+00 {week} 0.000000000000E+00
     2.000000000000E+00 0.000000000000E+00-2.048909664154E-08 5.300000000000E+01
     {tx} 4.000000000000E+00
"""
HEADER3 = ("     3.03           N: GNSS NAV DATA    G: GPS              RINEX VERSION / TYPE\n"
           "                                                            END OF HEADER\n")


def _gps_file(tmp_path, week="2.012000000000E+03", tx="5.976000000000E+05", body=None):
    path = tmp_path / "one.rnx"
    path.write_text(HEADER3 + (body or GPS_RECORD.format(week=week, tx=tx)))
    return path


def test_transmission_in_previous_week_is_shifted(tmp_path):
    # toe 0 s of week 2012; transmission 597600 s would be 6.9 days after toe: one week earlier.
    nav = read_navigation(_gps_file(tmp_path))
    row = nav.ephemerides["G"].iloc[0]
    assert row.transmission_time == np.datetime64("2018-07-28T22:00:00")
    assert row.toe == np.datetime64("2018-07-29T00:00:00")


def test_truncated_week_is_resolved_near_toc(tmp_path):
    # 988 = 2012 mod 1024 (a 10-bit week, IS-GPS-200 20.3.3.3.1.1).
    row = read_navigation(_gps_file(tmp_path, week="9.880000000000E+02")).ephemerides["G"].iloc[0]
    assert row.week == 988 and row.toe == np.datetime64("2018-07-29T00:00:00")


def test_numbers_run_together_and_lowercase_d(tmp_path):
    body = GPS_RECORD.format(week="2.012000000000E+03", tx="5.976000000000E+05")
    body = body.replace("     5.300000000000E+01-9.928125000000E+01 5.059496462622E-09-9.323327965461E-01",
                        "    -5.300000000000d+01-9.928125000000D+01-5.059496462622E-09-9.323327965461E-01")
    row = read_navigation(_gps_file(tmp_path, body=body)).ephemerides["G"].iloc[0]
    assert (row.iode, row.crs_m, row.delta_n_rad_per_s, row.mean_anomaly_rad) == \
        (-53.0, -99.28125, -5.059496462622e-09, -0.9323327965461)
    assert row.fit_interval_h == 4.0


def test_blank_field_is_nan_and_keeps_the_record(tmp_path):
    body = GPS_RECORD.format(week="2.012000000000E+03", tx="5.976000000000E+05")
    body = body.replace("-2.048909664154E-08", " " * 19)  # TGD blank
    row = read_navigation(_gps_file(tmp_path, body=body)).ephemerides["G"].iloc[0]
    assert np.isnan(row.tgd_s) and row.iodc == 53.0 and row.sqrt_a_sqrt_m == 5.153783548355e+03


def _qzss_file(tmp_path, flag):
    """The GPS record above as a QZSS one (QZS-1-like sqrt A and e) with fit-interval flag ``flag``."""
    body = GPS_RECORD.format(week="2.012000000000E+03", tx="5.976000000000E+05").replace("G02 ", "J01 ")
    body = body.replace("1.796138891950E-02", "7.578634459060E-02").replace("5.153783548355E+03",
                                                                          "6.493451776505E+03")
    body = body.replace(" 4.000000000000E+00\n", f" {flag:.12E}\n")
    path = tmp_path / f"qzss{flag}.rnx"
    path.write_text(HEADER3.replace("G: GPS ", "J: QZSS") + body)
    return path


@pytest.mark.parametrize("flag, hours", [(0, 2.0), (1, None)])
def test_qzss_fit_interval_flag(tmp_path, flag, hours):
    # RINEX 3.04 Table A9 / IS-QZSS-PNT 4.1.2.4 (from memory): QZSS writes a flag, not hours:
    # 0 = a fit interval of 2 hours, 1 = longer than 2 hours (how long is not said: NaN).
    row = read_navigation(_qzss_file(tmp_path, flag)).ephemerides["J"].iloc[0]
    assert row.fit_interval_flag == flag
    if hours is None:
        assert np.isnan(row.fit_interval_h)
    else:
        assert row.fit_interval_h == hours


@pytest.mark.refdata
def test_merge_drops_duplicates_and_sorts():
    gn = read_navigation(refdata_file("2024-124/NYA100NOR_S_20241240000_01D_GN.rnx.gz"))
    en = read_navigation(refdata_file("2024-124/NYA100NOR_S_20241240000_01D_EN.rnx.gz"))
    merged = NavigationData.merge([gn, en, gn])
    assert merged.systems == "GE"
    assert len(merged.ephemerides["G"]) == len(gn.ephemerides["G"])
    assert merged.ephemerides["E"].equals(en.ephemerides["E"])
    assert len(merged.header["merged_from"]) == 3


BRD4 = "2023-071/BRD400DLR_S_20230710000_01D_MN.rnx.gz"


@pytest.mark.refdata
def test_rinex4_accounting_of_every_record_kind():
    # Counts of the file's own markers ("> EPH G.. LNAV" ...), counted with grep when the
    # accounting was written; ION records are counted under "-" with STO/EOP.
    nav = read_navigation(refdata_file(BRD4))
    acc = nav.accounting
    assert acc.unbalanced() == [] and acc.warnings == []
    cells = {s: c for s, c in acc.as_dict()["navigation_records"].items()}
    # Since issue 14 every kind is read: nothing "not read" remains.
    assert cells["G"] == {"read": 762, "used": 762}
    assert cells["E"] == {"read": 5840, "used": 5840}
    assert cells["C"] == {"read": 2621, "used": 2621}
    assert cells["J"] == {"read": 292, "used": 292}
    assert cells["R"] == {"read": 1240, "used": 1240}
    assert cells["I"] == {"read": 283, "used": 283}
    assert cells["S"] == {"read": 9072, "used": 9072}
    dash = cells["-"]
    assert dash == {"read": 126 + 32 + 130, "used": 126 + 32 + 130}   # STO, EOP, 130 "> ION" markers
    assert sorted(nav.header["ionosphere"]) == ["BDSA", "BDSB", "GAL", "GPSA", "GPSB", "IRNA", "IRNB",
                                                "QZSA", "QZSB"]
    assert {s: len(t) for s, t in nav.ephemerides.items()} == nav.header["n_records"]


@pytest.mark.refdata
def test_multi_day_file_keeps_every_record():
    # ELKO 2018-210 carries unhealthy C16 records with impossible orbits (sqrt(A) 1028-1991,
    # e 0.25-0.49) up to 2018-08-01: what was broadcast is kept (the orbit stage marks them
    # unhealthy), and the span check keeps the records 2.3 days after the bulk.
    nav = read_navigation(refdata_file("2018-210/ELKO00USA_R_20182100000_01D_MN.rnx.gz"))
    assert nav.header["n_records"] == {"G": 225, "E": 1293, "C": 106, "R": 494}
    assert nav.accounting.unbalanced() == [] and nav.accounting.warnings == []


@pytest.mark.refdata
def test_stale_record_far_from_the_bulk_is_refused():
    # HERT 2024-092 (a file of 2024-04-01) starts with a G01 record of 2023-07-10: it would
    # stretch the default time window over nine months.  Refused and counted.
    path = refdata_file("2024-092/HERT00GBR_R_20240920000_01D_GN.rnx.gz")
    nav = read_navigation(path)
    acc = nav.accounting
    assert acc.count("navigation_records", "G", "refused: epoch far from the file's other records") == 1
    assert acc.count("navigation_records", "G", "used") == 230 == len(nav.ephemerides["G"])
    assert acc.warnings[0].startswith(f"{path}:8: G01 record of 2023-07-10")
