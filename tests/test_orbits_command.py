"""`gnssrel orbits`: outputs, summary keys, and one-line errors with exit status 2."""

from __future__ import annotations

import json

import pandas as pd
import pytest
from conftest import refdata_file

from gnssrel.cli import main

DAY = "2020-177/"


def _nav():
    return str(refdata_file(DAY + "MOJN00DNK_R_20201770000_01D_MN.rnx.gz"))


@pytest.mark.refdata
def test_state_table_csv_on_a_window(tmp_path, capsys):
    out = tmp_path / "states.csv"
    code = main(["orbits", _nav(), "--systems", "GR", "--start", "2020-06-25T10:00", "--end",
                 "2020-06-25T11:00", "--step", "600", "--output", str(out)])
    assert code == 0
    table = pd.read_csv(out)
    assert list(table.columns[:8]) == ["time", "sv", "x_m", "y_m", "z_m", "vx_m_per_s", "vy_m_per_s",
                                       "vz_m_per_s"]
    assert table["time"].nunique() == 7 and set(table["sv"].str[0]) == {"G", "R"}
    from gnssrel.orbits.selection import status_codes

    # the post rule (default): every status is one of its texts, the limits of G and R named in code 1
    assert set(table["status"]) <= {"ok", status_codes("post", "GR")[1], "unhealthy"}
    assert "GPS within half the fit interval" in status_codes("post", "GR")[1]
    ok = table["status"] == "ok"
    assert table.loc[ok, "x_m"].notna().all() and table.loc[~ok, "x_m"].isna().all()
    printed, _, block = capsys.readouterr().out.partition("accounting: ")
    title, header, *rows = printed.splitlines()
    assert "records and observations read" in block   # the accounting block follows
    assert title == "broadcast satellite states: 7 epochs, 2020-06-25 10:00:00 to 11:00:00 GPST"
    assert "epochs with a state (%)" in header and [r.split()[0] for r in rows] == ["G", "R"]


@pytest.mark.refdata
def test_time_scale_of_start_is_honoured(tmp_path, capsys):
    code = main(["orbits", _nav(), "--systems", "G", "--start", "2020-06-25T10:00 UTC", "--end",
                 "2020-06-25T10:10 UTC", "--step", "60", "--json"])
    assert code == 0
    summary = json.loads(capsys.readouterr().out)
    # UTC + 18 s = GPST on 2020-06-25 (IERS Bulletin C leap seconds); the grid keeps whole minutes
    assert summary["start"].startswith("2020-06-25T10:01:00") and summary["n_epochs"] == 10


@pytest.mark.refdata
def test_comparison_summary_json_has_the_issue_keys(tmp_path, capsys):
    summary_path, table_path = tmp_path / "summary.json", tmp_path / "per_sat.parquet"
    code = main(["orbits", _nav(), "--systems", "GE",
                 "--precise", str(refdata_file(DAY + "GRG0MGXFIN_20201760000_01D_15M_ORB.SP3.gz")),
                 str(refdata_file(DAY + "GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz")),
                 "--start", "2020-06-25T00:00", "--end", "2020-06-25T23:45",
                 "--summary", str(summary_path), "--output", str(table_path)])
    assert code == 0
    summary = json.loads(summary_path.read_text())
    assert set(summary["by_system"]) == {"G", "E"}
    assert summary["by_system"]["G"]["median_rms_3d_m"] <= 2.0 and summary["n_epochs"] == 96
    assert {"n_epochs", "rms_3d_m", "rms_radial_m", "rms_along_m", "rms_cross_m"} <= set(summary["satellites"]["G05"])
    per_sat = pd.read_parquet(table_path)
    assert per_sat.set_index("sv").loc["G05", "rms_3d_m"] == pytest.approx(summary["satellites"]["G05"]["rms_3d_m"])
    assert "median 3D RMS (m)" in capsys.readouterr().out


@pytest.mark.refdata
def test_netcdf_output_keeps_the_contract(tmp_path):
    import xarray as xr

    out = tmp_path / "states.nc"
    assert main(["orbits", _nav(), "--systems", "C", "--start", "2020-06-25T10:00", "--end",
                 "2020-06-25T10:30", "--step", "900", "--frame", "eci", "--output", str(out), "-q"]) == 0
    ds = xr.load_dataset(out)
    assert ds["position_ecef_m"].dims == ("time", "sv", "axis") and "position_eci_m" in ds
    assert "0: ok" in ds["status"].attrs["status_codes"] and ds.attrs["time_scale"] == "GPST"


def test_bad_output_suffix_is_refused_before_reading(tmp_path, capsys):
    code = main(["orbits", str(tmp_path / "missing.rnx"), "--output", str(tmp_path / "x.txt")])
    err = capsys.readouterr().err
    assert code == 2 and "unknown output format '.txt'" in err and len(err.strip().splitlines()) == 1


def test_bad_navigation_file_gives_one_line_and_status_2(tmp_path, capsys):
    bad = tmp_path / "bad.rnx"
    bad.write_text("this is not a RINEX file\n")
    code = main(["orbits", str(bad)])
    err = capsys.readouterr().err
    assert code == 2 and str(bad) in err and len(err.strip().splitlines()) == 1


def test_unknown_system_letter(tmp_path, capsys):
    assert main(["orbits", str(tmp_path / "x.rnx"), "--systems", "GX"]) == 2
    assert "unknown letters X" in capsys.readouterr().err


@pytest.mark.refdata
def test_default_comparison_window_is_the_navigation_files_day(capsys):
    # MOJN's daily file (2020-06-25) also holds records from 20:10 the evening before; with the
    # SP3 of both days given, the default comparison covers 2020-06-25 only: 96 epochs at 15 min.
    code = main(["orbits", _nav(), "--systems", "G", "--json",
                 "--precise", str(refdata_file(DAY + "GRG0MGXFIN_20201760000_01D_15M_ORB.SP3.gz")),
                 str(refdata_file(DAY + "GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz"))])
    summary = json.loads(capsys.readouterr().out)
    assert code == 0 and summary["n_epochs"] == 96
    assert summary["start"].startswith("2020-06-25T00:00:00") and summary["end"].startswith("2020-06-25T23:45")
