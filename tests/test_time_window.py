"""One default window and one satellite rule for every command (issue 12; gnssrel.pipeline.window).

Checked against the file-naming rules of RINEX (RINEX 3.05 section 4.1 long names
``SSSSMRCCC_K_YYYYDDDHHMM_PPU_...``; RINEX 2.11 section 4 short names ``ssssdddf.yyt``; from
the format documents), against the grid arithmetic itself, and on the demo and MOJN 2020-177.
"""

from __future__ import annotations

import json
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from conftest import SAMPLE_LOGS, refdata_file

from gnssrel.accounting import Ledger
from gnssrel.cli import main
from gnssrel.pipeline.window import aligned_grid, analysis_window, declared_period, drop_excluded

NS = "ns"
DEMO_NAV = str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx")
DEMO_SP3 = str(SAMPLE_LOGS / "KVA0DEMFIN_20251620830_06H_15M_ORB.SP3")
MOJN = "2020-177/MOJN00DNK_R_20201770000_01D_MN.rnx.gz"
GRG_SP3 = ("2020-177/GRG0MGXFIN_20201760000_01D_15M_ORB.SP3.gz", "2020-177/GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz")


def t(text):
    return np.datetime64(text, NS)


@pytest.mark.parametrize("name, period", [
    ("MOJN00DNK_R_20201770000_01D_MN.rnx.gz", ("2020-06-25T00:00", "2020-06-26T00:00")),   # day 177 of 2020
    ("KVRP00ZZZ_R_20251621000_03H_MN.rnx", ("2025-06-11T10:00", "2025-06-11T13:00")),
    ("KMS300DNK_R_20221591000_01H_MN.rnx.gz", ("2022-06-08T10:00", "2022-06-08T11:00")),
    ("cbw10010.21n.gz", ("2021-01-01T00:00", "2021-01-02T00:00")),                         # session 0: the day
    ("ab422100.18n", ("2018-07-29T00:00", "2018-07-30T00:00")),
    ("abcd177b.20n", ("2020-06-25T01:00", "2020-06-25T02:00")),                            # session b: 01 h
])
def test_declared_period_of_rinex_file_names(name, period):
    assert declared_period(f"/some/folder/{name}") == (t(period[0]), t(period[1]))


@pytest.mark.parametrize("name", ["ONE0_MN.rnx", "brdc.nav", "MOJN00DNK_R_20204000000_01D_MN.rnx"])
def test_names_without_a_valid_period_declare_none(name):
    assert declared_period(name) is None


def _nav(path, **tables):
    """A stand-in NavigationData: reference times per system (toe; t_b for GLONASS)."""
    ephemerides = {s: pd.DataFrame({"sv": f"{s}01", "toe" if s != "R" else "toc": np.array(v, "datetime64[ns]")})
                   for s, v in tables.items()}
    return SimpleNamespace(ephemerides=ephemerides, header={}, path=path)


# A daily file as MOJN 2020-177: a few records of the evening before, the day, 00:00 the next day;
# Galileo's last record at 23:40, GPS's at 22:00 (issue 12: --systems E changed the window's end).
EVENING = [t("2020-06-24T20:10"), t("2020-06-24T22:00")]
GPS_DAY = list(t("2020-06-25T00:00") + np.arange(0, 23 * 3600, 7200) * np.timedelta64(1, "s")) + [t("2020-06-26")]
GAL_DAY = list(t("2020-06-25T00:00") + np.arange(0, 86_000, 600) * np.timedelta64(1, "s"))


@pytest.mark.parametrize("path", ["MOJN00DNK_R_20201770000_01D_MN.rnx", "mojn_nav.rnx"])
def test_default_window_is_the_day_whatever_the_systems(path):
    # named file: the declared day; other name: the day holding most records (same day here)
    nav = _nav(path, G=EVENING + GPS_DAY, E=GAL_DAY)
    for systems in ("G", "E", "GE"):
        w = analysis_window(nav, systems)
        assert (w.start, w.end) == (t("2020-06-25T00:00"), t("2020-06-26T00:00") - np.timedelta64(1, NS))
    # with --systems only E is read: still the same day
    assert analysis_window(_nav(path, E=GAL_DAY), "E").end == w.end


def test_several_daily_files_make_a_window_of_several_days():
    day = t("2025-06-11T00:00")
    refs = day + np.arange(0, 3 * 86400, 3600) * np.timedelta64(1, "s")
    nav = _nav("merged.rnx", G=list(refs) + [t("2025-06-10T22:00")])      # + one record of the evening before
    w = analysis_window(nav, "G")
    assert w.start == day and w.end == day + np.timedelta64(3, "D") - np.timedelta64(1, NS)


def test_the_window_is_cut_to_the_precise_products():
    nav = _nav("MOJN00DNK_R_20201770000_01D_MN.rnx", G=EVENING + GPS_DAY)
    sp3_times = t("2020-06-24T00:00") + np.arange(192) * np.timedelta64(15, "m")    # two days at 15 min
    sp3 = xr.Dataset(coords={"time": sp3_times})
    w = analysis_window(nav, "G", precise=(sp3, None))
    assert (w.start, w.end) == (t("2020-06-25T00:00"), t("2020-06-25T23:45"))
    # logs, when given, decide
    obs = xr.Dataset(coords={"time": [t("2020-06-25T06:00"), t("2020-06-25T07:00")]})
    w = analysis_window(nav, "G", obs_list=[obs], precise=(sp3,))
    assert (w.start, w.end) == (t("2020-06-25T06:00"), t("2020-06-25T07:00"))


def test_grid_counts_whole_steps_from_midnight():
    # --start 06:00 UTC = 06:00:18 GPST (18 leap seconds in 2020): the first epoch on the 30 s grid is
    # 06:00:30, and --end 12:00 UTC = 12:00:18 GPST gives 12:00:00 as the last (issue 12)
    times = aligned_grid(t("2020-06-25T06:00:18"), t("2020-06-25T12:00:18"), 30.0)
    assert times[0] == t("2020-06-25T06:00:30") and times[-1] == t("2020-06-25T12:00:00")
    assert times.size == 720 and np.all(np.diff(times) == np.timedelta64(30, "s"))
    # 300 s steps from a start already on the grid
    times = aligned_grid(t("2020-06-25T00:00"), t("2020-06-25T00:59:59"), 300.0)
    assert times[0] == t("2020-06-25T00:00") and times[-1] == t("2020-06-25T00:55")


def _json(capsys, *argv):
    assert main([*argv, "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_every_command_on_the_demo_uses_the_same_window(capsys):
    # the nav file's name declares 10:00 + 3 h (its records span 08:00-14:00): every command, every
    # --systems, works on 10:00:00 to 12:59:30 GPST at 30 s
    for argv in (["orbits", DEMO_NAV], ["orbits", DEMO_NAV, "--systems", "E"],
                 ["relativity", DEMO_NAV], ["relativity", DEMO_NAV, "--systems", "C"]):
        s = _json(capsys, *argv)
        assert (s["start"], s["end"], s["n_epochs"]) == ("2025-06-11T10:00:00.000000000",
                                                         "2025-06-11T12:59:30.000000000", 360), argv
    # with SP3 (08:30-14:30 at 15 min): the SP3 epochs in that window
    s = _json(capsys, "orbits", DEMO_NAV, "--precise", DEMO_SP3)
    assert (s["start"], s["end"], s["n_epochs"]) == ("2025-06-11T10:00:00.000000000",
                                                     "2025-06-11T12:45:00.000000000", 12)


def test_the_span_printed_is_the_span_written(tmp_path, capsys):
    out = tmp_path / "terms.csv"
    assert main(["relativity", DEMO_NAV, "--start", "2025-06-11T10:00 UTC", "--end", "2025-06-11T11:00 UTC",
                 "--output", str(out)]) == 0
    printed = capsys.readouterr().out.splitlines()[0]
    table = pd.read_csv(out, parse_dates=["time"])
    # 10:00 UTC = 10:00:18 GPST (18 leap seconds): first grid epoch 10:00:30; 11:00:18 -> last 11:00:00
    assert table["time"].min() == pd.Timestamp("2025-06-11 10:00:30")
    assert table["time"].max() == pd.Timestamp("2025-06-11 11:00:00")
    assert "120 epochs" in printed and "2025-06-11 10:00:30 to 11:00:00 GPST" in printed
    s = _json(capsys, "orbits", DEMO_NAV, "--start", "2025-06-11T10:00 UTC", "--end", "2025-06-11T11:00 UTC")
    assert (s["start"], s["end"]) == ("2025-06-11T10:00:30.000000000", "2025-06-11T11:00:00.000000000")


def _sp3_with(svs, n_t=4):
    times = t("2020-06-25T00:00") + np.arange(n_t) * np.timedelta64(15, "m")
    pos = np.ones((n_t, len(svs), 3)) * 2.6e7
    pos[0, 0] = np.nan                                          # one missing record: not counted
    return xr.Dataset({"position_ecef_m": (("time", "sv", "axis"), pos)},
                      coords={"time": times, "sv": svs, "axis": ["x", "y", "z"]}, attrs={"source": "test"})


def test_excluded_satellites_leave_the_precise_path_counted():
    ledger = Ledger()
    ledger.read("sp3_records", "E", 11)
    ledger.used("sp3_records", "E", 11)
    kept = drop_excluded(_sp3_with(["E14", "E11", "E18"]), ledger)
    assert list(kept["sv"].values) == ["E11"] and kept.attrs["source"] == "test"
    # E14: 3 finite records (one NaN), E18: 4 -> 7 excluded by rule, 4 used
    assert ledger.dropped("sp3_records", "E") == {"excluded by rule": 7}
    assert ledger.count("sp3_records", "E", "used") == 4 and ledger.unbalanced() == []
    # asked for with --include-unhealthy: kept, as in the broadcast path
    assert list(drop_excluded(_sp3_with(["E14", "E11"]), Ledger(), include_unhealthy=True)["sv"].values) == \
        ["E14", "E11"]


@pytest.mark.refdata
def test_mojn_commands_share_the_day_and_the_excluded_satellites(capsys):
    nav = str(refdata_file(MOJN))
    sp3 = [str(refdata_file(p)) for p in GRG_SP3]
    day = ("2020-06-25T00:00:00.000000000", "2020-06-25T23:59:30.000000000")
    # before: orbits/relativity started at 20:10 the evening before; --systems E ended at 23:40
    for argv in (["orbits", nav], ["orbits", nav, "--systems", "E", "--step", "300"],
                 ["relativity", nav, "--systems", "G", "--step", "300"]):
        s = _json(capsys, *argv)
        assert s["start"] == day[0] and s["end"][:13] == "2020-06-25T23", argv
    s = _json(capsys, "orbits", nav, "--step", "30")
    assert (s["start"], s["end"], s["n_epochs"]) == (*day, 2880)
    # with SP3: the same day, cut at the last SP3 epoch (23:45); E14/E18 left out of both paths
    s = _json(capsys, "relativity", nav, "--systems", "E", "--step", "900", "--precise", *sp3)
    assert s["start"] == day[0] and s["end"] == "2020-06-25T23:45:00.000000000"
    assert not {"E14", "E18"} & set(s["satellites"])
    assert s["accounting"]["sp3_records"]["E"]["excluded by rule"] == 2 * 2 * 96       # E14, E18: 96 epochs a day, two SP3 days
    s = _json(capsys, "orbits", nav, "--systems", "E", "--precise", *sp3)
    assert "E14" not in s["satellites"] and s["n_epochs"] == 96
    # --include-unhealthy: in both
    s = _json(capsys, "relativity", nav, "--systems", "E", "--step", "900", "--precise", *sp3,
              "--include-unhealthy")
    assert {"E14", "E18"} <= set(s["satellites"])
    assert s["satellites"]["E14"]["icd_vs_state_max_diff_ns"] is not None     # broadcast elements present
