"""Time scales, weeks and rollover, checked against published epochs (REFERENCE-CHECKS E9)."""

import numpy as np
import pytest

from gnssrel import timescales as ts
from gnssrel.errors import TimeScaleError


def t(text):
    return np.datetime64(text, "ns")


@pytest.mark.parametrize("date, week", [
    ("1999-08-22", 1024),  # first GPS week rollover, IS-GPS-200 (published)
    ("2006-01-01", 1356),  # BDT week 0 origin expressed in GPS weeks (derived)
    ("2019-04-07", 2048),  # second rollover (derived; widely reported)
])
def test_gps_week_of_published_dates(date, week):
    w, sow = ts.to_week_seconds(t(date))
    assert w == week and sow == 0.0


def test_bdt_is_gpst_minus_14_s():
    # BDS-SIS-ICD-B1I 5.2.2 (published): BDT week 0 starts 2006-01-01 00:00:00 UTC = 00:00:14 GPST
    assert ts.to_gpst(t("2006-01-01T00:00:00"), "BDT") == t("2006-01-01T00:00:14")
    w, sow = ts.to_week_seconds(ts.to_gpst(t("2020-06-25T00:00:00"), "BDT"), "BDT")
    assert (w, sow) == (755, 4 * 86400.0)  # 2020-06-25 is Thursday of BDT week 755 (derived)


def test_glonasst_is_utc_plus_3h_with_leap_seconds():
    # GLONASS ICD 2008 3.3.3; GPST - UTC = 18 s since 2017-01-01 (IERS Bulletin C, published)
    got = ts.to_gpst(t("2020-06-25T03:00:00"), "GLONASST")
    assert got == t("2020-06-25T00:00:18")
    assert ts.from_gpst(got, "GLONASST") == t("2020-06-25T03:00:00")


def test_leap_second_boundary():
    # 2016-12-31T23:59:60 UTC inserted: 17 s before, 18 s after (IERS Bulletin C 52)
    assert ts.leap_seconds_utc(t("2016-12-31T23:59:59")) == 17
    assert ts.leap_seconds_utc(t("2017-01-01T00:00:00")) == 18
    assert ts.leap_seconds_gpst(t("2017-01-01T00:00:17")) == 17
    assert ts.leap_seconds_gpst(t("2017-01-01T00:00:18")) == 18


def test_round_trip_all_scales():
    x = t("2024-05-03T12:34:56.123456789")
    for scale in ts.SCALES:
        assert ts.to_gpst(ts.from_gpst(x, scale), scale) == x


def test_week_seconds_round_trip_keeps_nanoseconds():
    x = t("2020-06-25T23:59:59.999999999")
    w, sow = ts.to_week_seconds(x)
    back = ts.from_week_seconds(w, sow)
    assert abs((back - x).astype("int64")) <= 1


def test_rollover_resolution():
    near = t("2020-06-25")
    assert ts.resolve_week_rollover(2111 % 1024, near) == 2111
    assert ts.resolve_week_rollover(1023, t("2019-04-10")) == 2047  # just before the 2019 rollover


def test_week_crossover_folds_half_weeks():
    # IS-GPS-200 20.3.3.3.3.1: tk > 302400 s -> subtract 604800 s
    np.testing.assert_allclose(ts.week_crossover([302401.0, -302401.0, 1000.0]),
                               [-302399.0, 302399.0, 1000.0])


def test_seconds_between_is_exact_across_a_week():
    a, b = t("2020-06-20T00:00:00.000000001"), t("2020-06-27T00:00:00")
    assert ts.seconds_between(b, a) == pytest.approx(604799.999999999, abs=1e-9)


def test_time_without_scale_is_refused_with_the_fix():
    with pytest.raises(TimeScaleError, match="append one, e.g. '2020-06-25T06:00 GPST'"):
        ts.parse_time("2020-06-25T06:00")
    assert ts.parse_time("2020-06-25T06:00 GPST") == t("2020-06-25T06:00")
    assert ts.parse_time("2020-06-25T06:00Z") == t("2020-06-25T06:00:18")
    assert ts.parse_time("2020-06-25T06:00", default_scale="BDT") == t("2020-06-25T06:00:14")


def test_unknown_scale_and_garbage_are_refused():
    with pytest.raises(TimeScaleError, match="unknown time scale"):
        ts.to_gpst(t("2020-01-01"), "XYZ")
    with pytest.raises(TimeScaleError, match="cannot read time"):
        ts.parse_time("yesterday GPST")
