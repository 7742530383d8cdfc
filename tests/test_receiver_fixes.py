"""Receiver fixes: NMEA 0183 GGA and the documented CSV; the firmware comparison."""

from functools import reduce

import numpy as np
import pandas as pd
import pytest

from gnssrel.accounting import Ledger
from gnssrel.audit import firmware
from gnssrel.errors import FileFormatError
from gnssrel.geodesy import geodetic_to_ecef
from gnssrel.io.receiver_fixes import read_fixes_csv, read_nmea_gga, read_receiver_fixes

# The GGA example quoted in most NMEA 0183 descriptions (from memory), checksum 47.
CLASSIC_GGA = "$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47"


def _sentence(body):
    return f"${body}*{reduce(lambda a, c: a ^ ord(c), body, 0):02X}"


def test_classic_gga_sentence(tmp_path):
    path = tmp_path / "log.nmea"
    path.write_text(_sentence("GPZDA,123500.00,03,05,2024,00,00") + "\n" + CLASSIC_GGA + "\n")
    df = read_nmea_gga(path)
    assert len(df) == 1
    assert df["lat_deg"][0] == pytest.approx(48 + 7.038 / 60, abs=1e-12)
    assert df["lon_deg"][0] == pytest.approx(11 + 31.0 / 60, abs=1e-12)
    assert df["height_m"][0] == pytest.approx(545.4 + 46.9, abs=1e-6)      # altitude + geoid separation
    # UTC 12:35:19 on 2024-05-03 is GPST 12:35:37 (GPST - UTC = 18 s since 2017, IERS Bulletin C).
    assert df["time"][0] == np.datetime64("2024-05-03T12:35:37", "ns")
    xyz = geodetic_to_ecef(np.radians(df["lat_deg"][0]), np.radians(df["lon_deg"][0]), df["height_m"][0])
    assert df[["x_m", "y_m", "z_m"]].to_numpy()[0] == pytest.approx(xyz, abs=1e-6)


def test_bad_checksum_names_file_and_line(tmp_path):
    path = tmp_path / "bad.nmea"
    path.write_text(_sentence("GPZDA,123500.00,03,05,2024,00,00") + "\n" + CLASSIC_GGA[:-2] + "48\n")
    with pytest.raises(FileFormatError) as err:
        read_nmea_gga(path)
    assert err.value.line == 2 and str(path) in str(err.value)
    assert "checksum" in str(err.value) and f"{path}:2:" in str(err.value)


def test_missing_checksum_and_missing_date_are_errors(tmp_path):
    path = tmp_path / "nocs.nmea"
    path.write_text(CLASSIC_GGA[:-3] + "\n")
    with pytest.raises(FileFormatError, match="no checksum"):
        read_nmea_gga(path)
    path.write_text(CLASSIC_GGA + "\n")
    with pytest.raises(FileFormatError, match="date"):
        read_nmea_gga(path)
    assert read_nmea_gga(path, date_utc="2024-05-03")["time"][0] == np.datetime64("2024-05-03T12:35:37", "ns")


def test_fix_quality_zero_is_skipped_and_midnight_rolls_the_date(tmp_path):
    lines = [_sentence("GPRMC,235959.00,A,4807.038,N,01131.000,E,0.0,0.0,030524,,,A"),
             _sentence("GPGGA,235959.00,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"),
             _sentence("GPGGA,000000.00,4807.038,N,01131.000,E,0,00,,,M,,M,,"),
             _sentence("GPGGA,000001.00,4807.038,S,01131.000,W,2,08,0.9,545.4,M,46.9,M,,")]
    path = tmp_path / "roll.nmea"
    path.write_text("\n".join(lines) + "\n")
    df = read_receiver_fixes(path)
    assert len(df) == 2
    assert df["time"][1] - df["time"][0] == np.timedelta64(2, "s")
    assert df["lat_deg"][1] < 0 and df["lon_deg"][1] < 0


def test_csv_ecef_and_geodetic(tmp_path):
    ecef = tmp_path / "ecef.csv"
    ecef.write_text("# fixes\ntime,time_scale,x_m,y_m,z_m\n2024-05-03T00:00:00,GPST,1202434.1,252632.2,6237772.4\n"
                    "2024-05-03T00:00:30,UTC,1202435.1,252632.2,6237772.4\n")
    df = read_receiver_fixes(ecef)
    assert df["time"][1] == np.datetime64("2024-05-03T00:00:48", "ns")
    assert df["lat_deg"][0] == pytest.approx(78.9296, abs=1e-3)            # NYA1, Svalbard
    geo = tmp_path / "geo.csv"
    geo.write_text("time,time_scale,lat_deg,lon_deg,height_m\n2024-05-03T00:00:00,GPST,0,0,0\n")
    assert read_fixes_csv(geo)[["x_m", "y_m", "z_m"]].to_numpy()[0] == pytest.approx([6378137.0, 0, 0])


def test_csv_errors_name_the_line(tmp_path):
    path = tmp_path / "bad.csv"
    path.write_text("time,time_scale,x_m,y_m,z_m\n2024-05-03T00:00:00,GPST,1,2\n")
    with pytest.raises(FileFormatError) as err:
        read_fixes_csv(path)
    assert err.value.line == 2
    path.write_text("time,x_m,y_m,z_m\n")
    with pytest.raises(FileFormatError, match="header"):
        read_fixes_csv(path)
    path.write_text("time,time_scale,x_m,y_m,z_m\n2024-05-03T00:00:00,MARS,1,2,3\n")
    with pytest.raises(FileFormatError) as err:
        read_fixes_csv(path)
    assert err.value.line == 2


def test_firmware_verdict_picks_the_closest_hypothesis():
    t = np.datetime64("2024-05-03T00:00", "ns") + np.arange(20) * np.timedelta64(30, "s")
    truth = np.array([1202434.0, 252632.0, 6237772.0])
    rng = np.random.default_rng(0)

    def positions(shift):
        xyz = truth + shift + rng.normal(0, 0.3, (t.size, 3))
        return pd.DataFrame({"time": t, "x_m": xyz[:, 0], "y_m": xyz[:, 1], "z_m": xyz[:, 2]})

    fixes = positions(np.array([0.0, 0.0, 5.0]))              # the receiver's fixes
    hyp = {"applied": positions(np.zeros(3)), "omitted": positions(np.array([0.0, 0.0, 5.0])),
           "doubled": positions(np.array([0.0, 0.0, -5.0]))}
    out = firmware.compare_with_hypotheses(fixes, hyp)
    assert out["closest"] == "omitted"
    assert out["margin_m"] == pytest.approx(4.5, abs=0.8)
    assert out["verdict"].startswith("closest to 'omitted'")
    same = firmware.compare_with_hypotheses(fixes, {"a": hyp["omitted"], "b": positions(np.array([0, 0, 5.1]))})
    assert same["verdict"].startswith("undetermined")


# ---- damaged sentences and rows cost that fix only (README, "Nothing lost") --------------------------------

ZDA = "GPZDA,123500.00,03,05,2024,00,00"
GOOD_GGA = "GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"


def _ledger(df):
    ledger = Ledger.from_dict(df.attrs["accounting"])
    assert ledger.unbalanced() == []
    return ledger


@pytest.mark.parametrize("gga, reason", [
    ("GPGGA,123520,4807.038,N,01131.000,E,A,08,0.9,545.4,M,46.9,M,,", "garbled field"),     # quality A
    ("GPGGA,123520,4807.038,N,01131.000,E,1.5,08,0.9,545.4,M,46.9,M,,", "garbled field"),
    ("GPGGA,123520,4807.038,N,01131.000,E,NaN,08,0.9,545.4,M,46.9,M,,", "garbled field"),
    # float("48_07.038") would take this one
    ("GPGGA,123520,48_07.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,", "garbled field"),
    ("GPGGA,123520,4807.038,N,01131.000,E,1,08,0.9,5_45.4,M,46.9,M,,", "garbled field"),
    ("GPGGA,123520,4807.038,N,01131.000,E,1,08,0.9,NaN,M,46.9,M,,", "garbled field"),
    ("GPGGA,123520,4807.038,N,01131.000,E,1,08,0.9,inf,M,46.9,M,,", "garbled field"),
    ("GPGGA,1235_0,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,", "garbled field"),
    ("GPGGA,123520,4867.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,", "value out of range"),  # 67 minutes
    ("GPGGA,123520,4807.038,X,01131.000,E,1,08,0.9,545.4,M,46.9,M,,", "garbled field"),
    ("GPGGA,123520,4807.038,N,01131.000,E,0,00,,,M,,M,,", "quality 0 (no fix)"),
    ("GPGGA,123520,4807.038", "garbled field"),
])
def test_a_bad_gga_is_refused_and_counted(tmp_path, gga, reason):
    path = tmp_path / "log.nmea"
    path.write_text("\n".join([_sentence(ZDA), _sentence(GOOD_GGA), _sentence(gga)]) + "\n")
    df = read_nmea_gga(path)
    assert len(df) == 1 and df["line"][0] == 2
    ledger = _ledger(df)
    assert ledger.count("fixes", "-") == 2 and ledger.dropped("fixes") == {reason: 1}
    if reason != "quality 0 (no fix)":
        assert ledger.warnings[0].startswith(f"{path}:3: fix refused")


def test_bad_checksum_costs_that_sentence(tmp_path):
    path = tmp_path / "log.nmea"
    path.write_text("\n".join([_sentence(ZDA), _sentence(GOOD_GGA), CLASSIC_GGA[:-2] + "48",
                               CLASSIC_GGA[:-2] + "zz"]) + "\n")
    ledger = _ledger(read_nmea_gga(path))
    assert ledger.count("fixes", "-", "used") == 1 and ledger.dropped("fixes") == {"bad checksum": 2}


@pytest.mark.parametrize("zda", ["GPZDA,123500.00,xx,05,2024,00,00", "GPZDA,123500.00,30,02,2024,00,00",
                                 "GPZDA,123500.00,03,0_5,2024,00,00"])
def test_garbled_zda_date_is_ignored_not_guessed(tmp_path, zda):
    path = tmp_path / "log.nmea"
    path.write_text("\n".join([_sentence(ZDA), _sentence(zda), _sentence(GOOD_GGA)]) + "\n")
    df = read_nmea_gga(path)
    assert df["time"][0] == np.datetime64("2024-05-03T12:35:37", "ns")       # the first ZDA's date
    assert any(":2: ZDA date is not a calendar date" in w for w in _ledger(df).warnings)


@pytest.mark.parametrize("row, reason", [
    ("2024-05-03T00:00:30,GPST,1_202435.1,252632.2,6237772.4", "garbled field"),
    ("2024-05-03T00:00:30,GPST,NaN,252632.2,6237772.4", "garbled field"),
    ("2024-05-03T00:00:30,GPST,INF,252632.2,6237772.4", "garbled field"),
    ("2024-02-30T00:00:30,GPST,1202435.1,252632.2,6237772.4", "garbled field"),
    ("2024-05-03T00:00:30,GPST,1202435.1,252632.2,6237772.4,7", "wrong number of columns"),
    ("2024-05-03T00:00:30,GPST,1e12,252632.2,6237772.4", "value out of range"),
    ("\x00\x8b\x1f\xff appended bytes", "wrong number of columns"),
])
def test_csv_bad_row_is_refused_and_counted(tmp_path, row, reason):
    path = tmp_path / "fixes.csv"
    path.write_bytes(b"time,time_scale,x_m,y_m,z_m\n2024-05-03T00:00:00,GPST,1202434.1,252632.2,6237772.4\n"
                     + row.encode("latin-1") + b"\n")
    df = read_fixes_csv(path)
    assert len(df) == 1
    ledger = _ledger(df)
    assert ledger.dropped("fixes") == {reason: 1} and ledger.warnings[0].startswith(f"{path}:3: fix refused")
