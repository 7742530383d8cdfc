"""RINEX 4 records beyond the legacy messages: GPS/QZSS CNAV and CNV2, BeiDou CNV1/CNV2, NavIC,
SBAS, and STO / EOP / ION into the header (issue 14).

The records below are written here in the layout of RINEX 4.00 section 5 (their fields modelled
on BRD400DLR 2023-071 records, moved to 2018-07-29 = GPS week 2012, BDT week 656, with digits
changed); each assertion names the field it checks.  The layouts: gnssrel/io/rinex_nav_messages.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import refdata_file
from test_rinex_nav_bad_input import HEADER3

from gnssrel.io.rinex_nav import read_navigation

ITEM = "navigation_records"
HEADER4 = HEADER3.replace("3.04", "4.00")
G_CNAV = """\
> EPH G01 CNAV
G01 2018 07 29 01 30 00 2.037292579189e-04-3.829825345747e-12 0.000000000000e+00
     1.004886627197e-02-7.072656250000e+01 3.657473777035e-09 3.125034792323e+00
    -3.700144588947e-06 1.249689736869e-02 1.198053359985e-05 5.153655571344e+03
     5.427000000000e+05 3.539025783539e-08-2.635818870379e+00-1.955777406693e-07
     9.898042815727e-01 1.578281250000e+02 9.391968103684e-01-7.430610178219e-09
    -1.892935991239e-11-1.056170179553e-13-6.000000000000e+00 2.000000000000e+00
    -1.000000000000e+00 1.000000000000e+00 4.656612873077e-09 7.000000000000e+00
    -3.492459654808e-10-2.532033249736e-09 7.188646122813e-09 7.275957614183e-09
     6.000000000000e+00 2.011000000000e+03
"""
J_CNV2 = """\
> EPH J02 CNV2
J02 2018 07 29 00 00 00-1.144682755694e-06-1.207922650792e-13 0.000000000000e+00
    -3.147602081299e-03 9.170351562500e+02 2.065264597989e-09 2.434895731204e+00
     2.688914537430e-05 7.469547953224e-02-5.310401320457e-06 6.493639722506e+03
     0.000000000000e+00 3.920868039131e-07 1.589127294513e+00-2.514570951462e-08
     7.207610123035e-01 2.703476562500e+02-1.566545919257e+00-2.745950757636e-09
     2.191162699293e-10 7.520716448831e-15-3.000000000000e+00 0.000000000000e+00
    -9.000000000000e+00 0.000000000000e+00 0.000000000000e+00 0.000000000000e+00
     0.000000000000e+00 0.000000000000e+00 2.182787284255e-09 2.153683453798e-09
    -9.022187441587e-10-1.746229827404e-10
    -3.582000000000e+03 2.012000000000e+03
"""
C_CNV1 = """\
> EPH C19 CNV1
C19 2018 07 29 00 00 00-8.956108940765e-04-9.041656312547e-13 0.000000000000e+00
    -2.287387847900e-03-5.843750000000e+00 3.871232680951e-09 8.650567350738e-01
    -2.142041921616e-07 1.015573448967e-03 5.141831934452e-06 5.282620728736e+03
     0.000000000000e+00 1.862645149231e-09-1.163148544709e+00-3.445893526077e-08
     9.722051715392e-01 2.620468750000e+02-1.135667398911e+00-6.910823577827e-09
     1.100045821324e-10 3.232818114092e-14 3.000000000000e+00 0.000000000000e+00
     0.000000000000e+00-4.000000000000e+00-1.000000000000e+00-1.000000000000e+00
    -8.731149137020e-10                    9.487848728895e-09-5.820766091347e-09
     0.000000000000e+00 0.000000000000e+00 0.000000000000e+00 0.000000000000e+00
     0.000000000000e+00                                       0.000000000000e+00
"""
C_CNV2 = C_CNV1.replace("CNV1", "CNV2").replace(
    "    -8.731149137020e-10                    9.487848728895e-09",
    "                       -2.735760062933e-09 9.487848728895e-09")
I_LNAV = """\
> EPH I02 LNAV
I02 2018 07 29 00 00 00 1.104795373976e-04-2.819433575496e-11 0.000000000000e+00
     0.000000000000e+00 8.749375000000e+02 3.607293115380e-09 2.597586517985e+00
     2.821534872055e-05 1.982442918234e-03-5.252659320831e-06 6.493359437943e+03
     0.000000000000e+00-4.842877388000e-08 1.593280097620e+00-2.607703208923e-08
     5.066347814522e-01 2.349375000000e+02 3.053916198771e+00-3.412999307978e-09
     1.453631978178e-10                    2.012000000000e+03
     2.000000000000e+00 0.000000000000e+00-1.862645149231e-09
     1.200000000000e+01
"""
S_SBAS = """\
> EPH S27 SBAS
S27 2018 07 29 00 00 32 1.862645149231e-09 0.000000000000e+00 3.200000000000e+01
     2.417094016000e+04 1.600000000000e-04 0.000000000000e+00 0.000000000000e+00
     3.489281600000e+04 2.000000000000e-04 1.250000000000e-06 4.000000000000e+00
     5.120000000000e+02-4.000000000000e-04 0.000000000000e+00 1.100000000000e+01
"""
STO = """\
> STO I03 LNAV
    2018 07 29 00 04 48 IRGP
     3.360000000000e+02 3.201421350241e-09 9.769962616701e-15 1.694065894509e-20
"""
EOP = """\
> EOP J02 CNVX
    2018 07 29 16 51 12-4.024982452393e-02 3.957748413086e-05 0.000000000000e+00
                        3.562908172607e-01 2.602100372314e-03 0.000000000000e+00
     4.392000000000e+03-1.940387487411e-02-1.411736011505e-04 0.000000000000e+00
"""
BDGIM = """\
> ION C30 CNVX
    2018 07 29 00 00 00 3.550000000000e+01 2.000000000000e+00 1.200000000000e+01
     1.337500000000e+01-1.725000000000e+01 1.125000000000e+00 1.000000000000e+00
     3.000000000000e+00 3.750000000000e-01
"""
ALL = G_CNAV + J_CNV2 + C_CNV1 + C_CNV2 + I_LNAV + S_SBAS + STO + EOP + BDGIM
WEEK_2012 = np.datetime64("2018-07-29T00:00:00", "ns")   # GPS week 2012 starts (IS-GPS-200 6.2.4 epoch + 2012 w)


def _read(tmp_path, body):
    path = tmp_path / "nav4.rnx"
    path.write_text(HEADER4 + body)
    return read_navigation(path)


def test_every_record_kind_is_read_into_its_columns(tmp_path):
    nav = _read(tmp_path, ALL)
    acc = nav.accounting
    assert acc.unbalanced() == [] and acc.warnings == [] and nav.header["skipped"] == {}
    assert {s: acc.count(ITEM, s, "used") for s in "GJCIS-"} == \
        {"G": 1, "J": 1, "C": 2, "I": 1, "S": 1, "-": 3}
    g = nav.ephemerides["G"].iloc[0]
    # G CNAV (RINEX 4.00, GPS CNAV record): line 1 A_dot, line 3 t_op, line 5 Delta n0 dot, line 7 ISCs.
    assert g.nav_type == "CNAV" and g.a_dot_m_per_s == 1.004886627197e-02
    assert g.delta_n_dot_rad_per_s2 == -1.056170179553e-13 and g.prediction_sow_s == 542700.0
    assert (g.isc_l1ca_s, g.isc_l5q5_s, g.tgd_s) == (-3.492459654808e-10, 7.275957614183e-09, 4.656612873077e-09)
    assert (g.urai_ed, g.urai_ned0, g.urai_ned1, g.urai_ned2) == (-1.0, -6.0, 2.0, 7.0)
    # CNAV t_oe = t_oc (the epoch), week of toc; t_tm 6 s of week 2011 lands half a week away: +1 week.
    assert g.toe == g.toc == WEEK_2012 + np.timedelta64(5400, "s")
    assert g.week == 2012 and g.toe_sow_s == 5400.0
    assert g.transmission_time == WEEK_2012 + np.timedelta64(6, "s")
    j = nav.ephemerides["J"].iloc[0]
    # J CNV2: line 8 the L1C ISCs, line 9 t_tm = -3582 s of week 2012 (the end of week 2011).
    assert j.nav_type == "CNV2" and (j.isc_l1cd_s, j.isc_l1cp_s) == (-9.022187441587e-10, -1.746229827404e-10)
    assert j.transmission_time == WEEK_2012 - np.timedelta64(3582, "s")
    c = nav.ephemerides["C"].set_index("nav_type")
    # BeiDou CNV1/CNV2: epoch BDT (GPST = BDT + 14 s), toe 0 s of BDT week 656, type 3 = MEO.
    for kind in ("CNV1", "CNV2"):
        assert c.loc[kind, "toe"] == c.loc[kind, "toc"] == WEEK_2012 + np.timedelta64(14, "s")
        assert c.loc[kind, "week"] == 656 and c.loc[kind, "satellite_type"] == 3 and not c.loc[kind, "is_geo"]
        assert c.loc[kind, "tgd_b1cp_s"] == 9.487848728895e-09 and c.loc[kind, "a_dot_m_per_s"] == -2.287387847900e-03
    assert c.loc["CNV1", "isc_b1cd_s"] == -8.731149137020e-10 and np.isnan(c.loc["CNV1", "isc_b2ad_s"])
    assert c.loc["CNV2", "isc_b2ad_s"] == -2.735760062933e-09 and np.isnan(c.loc["CNV2", "isc_b1cd_s"])
    i = nav.ephemerides["I"].iloc[0]
    # NavIC: week 2012 on the GPS count; URA 2 m; TGD line 6.
    assert (i.week, i.toe, i.accuracy_m, i.tgd_s) == (2012, WEEK_2012, 2.0, -1.862645149231e-09)
    s = nav.ephemerides["S"].iloc[0]
    # SBAS: km -> m; a_Gf0 on the epoch line; URA code and IODN in the fourth column.
    assert (s.x_m, s.vy_m_per_s, s.ay_m_per_s2) == (2.417094016e4 * 1000.0, 2e-4 * 1000.0, 1.25e-6 * 1000.0)
    assert (s.clock_bias_s, s.accuracy_code, s.iodn, s.toc) == \
        (1.862645149231e-09, 4.0, 11.0, WEEK_2012 + np.timedelta64(32, "s"))


def test_sto_eop_and_bdgim_records_fill_the_header(tmp_path):
    nav = _read(tmp_path, STO + EOP + BDGIM + I_LNAV)
    sto = nav.header["system_time_offsets"]
    assert [(o["sv"], o["message"], o["code"], o["a0_s"]) for o in sto] == [("I03", "LNAV", "IRGP", 3.201421350241e-09)]
    irgp = nav.header["time_corrections"]["IRGP"]
    assert (irgp["reference_week"], irgp["reference_sow_s"], irgp["source"]) == (2012, 288.0, "STO record")
    # IRNST - GPST: gnssrel's built-in 0 s against the broadcast 3.2 ns, reported beside it.
    assert nav.header["time_offsets_vs_builtin"] == {"IRGP": {"broadcast_a0_s": 3.201421350241e-09, "builtin_s": 0.0,
                                                              "epoch": "2018-07-29T00:04:48", "sv": "I03"}}
    eop = nav.header["earth_orientation"][0]
    assert (eop["message"], eop["x_pole_arcsec"], eop["ut1_utc_rate_s_per_day"]) == \
        ("CNVX", -4.024982452393e-02, -1.411736011505e-04)
    bdgim = nav.header["ionosphere_models"]["C CNVX"]
    assert bdgim["model"] == "bdgim" and bdgim["values"][:9] == \
        [35.5, 2.0, 12.0, 13.375, -17.25, 1.125, 1.0, 3.0, 0.375]
    assert "BDSA" not in nav.header["ionosphere"]                         # BDGIM is no Klobuchar


def test_a_damaged_cnav_record_costs_that_record_only(tmp_path):
    garbled = G_CNAV.replace("1.004886627197e-02", "1.0048866_7197e-02")
    short = C_CNV1.replace("     0.000000000000e+00                                       0.000000000000e+00\n", "")
    nav = _read(tmp_path, garbled + short + J_CNV2)
    acc = nav.accounting
    assert acc.count(ITEM, "G", "damaged") == 1 and acc.count(ITEM, "C", "damaged") == 1
    assert acc.count(ITEM, "J", "used") == 1 and acc.unbalanced() == []
    assert any("truncated C record: 9 of 10 lines" in w for w in acc.warnings)


def test_beidou_type_geo_is_believed_only_for_a_geosynchronous_orbit(tmp_path):
    meo_typed_geo = C_CNV1.replace(" 3.000000000000e+00 0.000000000000e+00\n", " 1.000000000000e+00 0.000000000000e+00\n")
    geo = meo_typed_geo.replace("C19", "C20").replace("5.282620728736e+03", "6.493400000000e+03") \
        .replace("9.722051715392e-01", "3.000000000000e-02")
    c = _read(tmp_path, meo_typed_geo + geo).ephemerides["C"].set_index("sv")
    assert c.loc["C19", "satellite_type"] == 1 and not c.loc["C19", "is_geo"]
    assert c.loc["C20", "is_geo"]


@pytest.mark.refdata
def test_brd400dlr_every_record_is_read():
    # Counts of the file's "> EPH Snn TYPE" markers (grep, 2023-071): nothing is "not read" any more.
    nav = read_navigation(refdata_file("2023-071/BRD400DLR_S_20230710000_01D_MN.rnx.gz"))
    counts = {(s, k): n for s, t in nav.ephemerides.items() for k, n in t.groupby("nav_type").size().items()}
    assert counts == {("G", "LNAV"): 428, ("G", "CNAV"): 334, ("J", "LNAV"): 96, ("J", "CNAV"): 98,
                      ("J", "CNV2"): 98, ("E", "INAV"): 2943, ("E", "FNAV"): 2897, ("C", "D1"): 893,
                      ("C", "D2"): 168, ("C", "CNV1"): 634, ("C", "CNV2"): 926, ("R", "FDMA"): 1240,
                      ("S", "SBAS"): 9072, ("I", "LNAV"): 283}
    outcomes = {o for cells in nav.accounting.as_dict()[ITEM].values() for o in cells}
    assert outcomes == {"read", "used"} and nav.accounting.warnings == []
    assert len(nav.header["system_time_offsets"]) == 126 and len(nav.header["earth_orientation"]) == 32
    assert len(nav.header["ionosphere_records"]) == 130
    assert sorted(nav.header["ionosphere_models"]) == ["C CNVX", "C D1D2", "E IFNV", "G CNVX", "G LNAV",
                                                       "I LNAV", "J CNVX", "J LNAV"]
    # BeiDou-3 CNAV: type 2 IGSO for C38-C40 only; no record is GEO by its own orbit.
    c = nav.ephemerides["C"].query("nav_type in ['CNV1', 'CNV2']")
    assert set(c.loc[c.satellite_type == 2, "sv"]) == {"C38", "C39", "C40"} and not c.is_geo.any()


def test_out_of_range_values_of_the_new_records_are_refused(tmp_path):
    # A_dot 25 bits x 2^-21 m/s (IS-GPS-200 Table 30-I, from memory): 40 m/s cannot be broadcast;
    # SBAS Z dot at most 524 m/s (RTCA DO-229 message type 9, from memory): 5 km/s cannot either.
    cnav = G_CNAV.replace(" 1.000000000000e+00 4.656612873077e-09", " 0.000000000000e+00 4.656612873077e-09") \
        .replace("1.004886627197e-02", "4.004886627197e+01")
    sbas = S_SBAS.replace("5.120000000000e+02-4.000000000000e-04", "5.120000000000e+02-5.000000000000e+00")
    nav = _read(tmp_path, cnav + sbas + I_LNAV)
    acc = nav.accounting
    assert acc.count(ITEM, "G", "refused: a_dot_m_per_s out of range") == 1
    assert acc.count(ITEM, "S", "refused: vz_m_per_s out of range") == 1
    assert acc.count(ITEM, "I", "used") == 1 and acc.unbalanced() == []
