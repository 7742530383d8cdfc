"""Every summary carries one balanced ledger: each record and observation read is used or
dropped with a counted reason (README, "Nothing lost, nothing silently wrong", point 1).

Expected counts on the demo data are the code's own earlier output (regression), checked
for consistency with the scenario (sample_logs/README.md: 3 h at 30 s, 24 GPS, 18 Galileo,
9 BeiDou satellites; SP3 every 15 min over 6 h).
"""

from __future__ import annotations

import json
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from conftest import refdata_file

from gnssrel.accounting import Ledger
from gnssrel.cli import main
from gnssrel.orbits.spans import navigation_span
from gnssrel.pipeline import accounting

LOGS = Path(__file__).resolve().parents[1] / "sample_logs"
NAV = str(LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx")
SP3 = str(LOGS / "KVA0DEMFIN_20251620830_06H_15M_ORB.SP3")
CLK = str(LOGS / "KVA0DEMFIN_20251621000_03H_30S_CLK.CLK")
OBS = str(LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx")


def _summary(capsys, *argv) -> dict:
    code = main([*argv, "--json"])
    out, err = capsys.readouterr()
    assert code == 0, err
    return json.loads(out)


def _balanced(summary) -> Ledger:
    ledger = Ledger.from_dict(summary["accounting"])
    assert ledger.unbalanced() == []
    return ledger


def test_orbits_summary_counts_sp3_records_outside_the_window(capsys):
    ledger = _balanced(_summary(capsys, "orbits", NAV, "--precise", SP3))
    # 25 SP3 epochs (08:30 to 14:30) of 24 GPS satellites; the comparison window is the period the
    # nav file's name declares (_20251621000_03H_: 10:00 to 13:00, end excluded; gnssrel.pipeline.window),
    # so 12 epochs (10:00 to 12:45) are compared and the 13 others left aside.
    assert ledger.count("sp3_records", "G") == 25 * 24
    assert ledger.dropped("sp3_records", "G") == {"outside the time window": 13 * 24}
    assert ledger.count("navigation_records", "G") == 96


def test_a_narrow_window_retires_navigation_records_with_their_reasons(capsys):
    ledger = _balanced(_summary(capsys, "orbits", NAV, "--systems", "G", "--start", "2025-06-11T13:30",
                                "--end", "2025-06-11T14:00", "--step", "300"))
    dropped = ledger.dropped("navigation_records", "G")
    used = ledger.count("navigation_records", "G", "used")
    assert used > 0 and dropped.get("outside the time window", 0) > 0
    assert used + sum(dropped.values()) == 96


def test_relativity_and_clocks_summaries_are_balanced(capsys):
    rel = _balanced(_summary(capsys, "relativity", NAV, "--step", "300"))
    assert rel.count("navigation_records") == 96 + 108 + 45
    clk = _balanced(_summary(capsys, "clocks", NAV, "--precise", CLK, "--receiver-clocks",
                             str(LOGS / "KVRP_satellite_clocks.csv"), "--start", "2025-06-11T10:00",
                             "--end", "2025-06-11T11:00"))
    # 361 clock epochs (10:00 to 13:00 at 30 s) of 24 GPS satellites; 121 of them in the hour.
    assert clk.count("clock_records", "G") == 361 * 24
    assert clk.count("clock_records", "G", "used") == 121 * 24
    assert clk.dropped("clock_records", "G") == {"outside the time window": 240 * 24}
    assert clk.count("receiver_clock_rows") > clk.count("receiver_clock_rows", outcome="used") > 0


def test_audit_counts_every_pseudorange_by_reason(capsys):
    summary = _summary(capsys, "audit", OBS, NAV, "--elevation-mask", "30", "--step", "60",
                       "--receiver-fixes", str(LOGS / "KVRP_fixes.nmea"), "--max-pdop", "0")
    ledger = _balanced(summary)             # (no PDOP gate: a 30 degree mask leaves PDOP above 10 at times)
    g_read = ledger.count("observations", "G")
    dropped = ledger.dropped("observations", "G")
    # --step 60 keeps every other epoch of the 30 s log: half the pseudoranges (odd count aside).
    assert abs(dropped["not on the --step grid"] - g_read / 2) <= g_read * 0.01
    assert dropped["below the elevation mask"] > 0                 # a 30 degree mask leaves some below
    assert ledger.count("observations", "G", "used") == g_read - sum(dropped.values())
    assert ledger.dropped("epochs") == {"not on the --step grid": 180}
    assert ledger.count("fixes") > 0


def test_audit_of_the_demo_log_uses_every_pseudorange(capsys):
    ledger = _balanced(_summary(capsys, "audit", OBS, NAV))
    for system in "GEC":
        assert ledger.count("observations", system) == ledger.count("observations", system, "used") > 0


def test_terminal_block_shows_only_lines_with_drops_and_a_total(capsys):
    assert main(["orbits", NAV, "--precise", SP3]) == 0
    out = capsys.readouterr().out
    block = out[out.index("accounting: "):].splitlines()
    # 12 SP3 epochs in the nav file's declared 10:00-13:00 (24 G, 18 E, 9 C satellites) + 138 nav records
    assert block[0] == "accounting: 1524 records and observations read, 750 used, 774 dropped with a reason"
    assert block[-3:] == ["  sp3 records G: 288 used of 600 read; dropped: 312 outside the time window",
                          "  sp3 records E: 216 used of 450 read; dropped: 234 outside the time window",
                          "  sp3 records C: 108 used of 225 read; dropped: 117 outside the time window"]
    assert all(line.startswith("  navigation records ") for line in block[1:-3])


def test_verbose_lists_the_warnings():
    ledger = Ledger()
    ledger.read("navigation_records", "G", 3)
    ledger.used("navigation_records", "G", 2)
    ledger.drop("navigation_records", "G", "damaged", 1)
    ledger.warn("bad number in column 5", "x.rnx", 12)
    short = accounting.block_lines(ledger.as_dict())
    assert short[0].endswith("1 warning (-v lists them)")
    full = accounting.block_lines(ledger.as_dict(), verbose=True)
    assert full[-1] == "  warning: x.rnx:12: bad number in column 5"


def test_retire_navigation_reasons_from_the_state_rows():
    t0 = np.datetime64("2025-06-11T10:00", "ns")
    table = pd.DataFrame({"sv": ["G01"] * 4, "toe": [t0 - np.timedelta64(10, "h"), t0, t0 + np.timedelta64(1, "h"),
                                                      t0 + np.timedelta64(30, "m")],
                          "health": [0, 0, 0, 1], "fit_interval_h": [4.0] * 4})
    nav = SimpleNamespace(ephemerides={"G": table, "E": table.iloc[:1]}, header={}, path=None)
    ledger = accounting.navigation_ledger(nav)
    states = xr.Dataset({"ephemeris_row": (("time", "sv"), np.array([[1], [1], [-1]]))},
                        coords={"time": [t0, t0, t0], "sv": ["G01"]})
    accounting.retire_navigation(ledger, nav, [states], "G", t0, t0 + np.timedelta64(1, "h"))
    assert ledger.dropped("navigation_records", "G") == {"outside the time window": 1, "unhealthy": 1,
                                                         "superseded (never the nearest record)": 1}
    assert ledger.dropped("navigation_records", "E") == {"system not requested": 1}
    assert ledger.unbalanced() == []


def test_default_window_comes_from_the_bulk_of_the_records():
    day = np.datetime64("2020-06-25T00:00", "ns")
    refs = day + np.arange(0, 86400, 7200) * np.timedelta64(1, "s")
    garbled = np.datetime64("2021-11-10T00:00", "ns")                # one record with a wrong week
    table = pd.DataFrame({"sv": "G01", "toe": np.append(refs, garbled)})
    nav = SimpleNamespace(ephemerides={"G": table}, header={}, path="x.rnx")
    assert navigation_span(nav, "G") == (refs.min(), refs.max())
    # a daily file's records of 00:00 the next day still belong to the span
    nxt = pd.DataFrame({"sv": "G02", "toe": [day + np.timedelta64(1, "D")]})
    nav.ephemerides["G"] = pd.concat([table, nxt], ignore_index=True)
    assert navigation_span(nav, "G")[1] == day + np.timedelta64(1, "D")


@pytest.mark.refdata
def test_audit_on_nya1_for_ninety_minutes_is_balanced(capsys):
    day = "2024-124/NYA100NOR_S_20241240000_01D_"
    summary = _summary(capsys, "audit", str(refdata_file(day + "30S_MO.crx.gz")),
                       *(str(refdata_file(day + f"{k}N.rnx.gz")) for k in "GEC"),
                       "--start", "2024-05-03T10:00", "--end", "2024-05-03T11:30")
    ledger = _balanced(summary)
    for system in "GEC":
        used = ledger.count("observations", system, "used")
        assert used > 0.3 * ledger.count("observations", system)
        assert ledger.dropped("observations", system).get("below the elevation mask", 0) > 0
    # GLONASS is observed but has no navigation file here: counted, not silently lost.
    assert ledger.count("observations", "R") == sum(ledger.dropped("observations", "R").values()) > 0


def test_an_excluded_satellite_is_counted_as_excluded_not_superseded():
    t0 = np.datetime64("2025-06-11T10:00", "ns")
    table = pd.DataFrame({"sv": ["E14", "E11"], "toe": [t0, t0], "health": [0, 0], "accuracy_m": [3.1, 3.1]})
    nav = SimpleNamespace(ephemerides={"E": table}, header={}, path=None)
    ledger = accounting.navigation_ledger(nav)
    states = xr.Dataset({"ephemeris_row": (("time", "sv"), np.array([[-1, 1]]))},
                        coords={"time": [t0], "sv": ["E14", "E11"]})
    accounting.retire_navigation(ledger, nav, [states], "E", t0, t0)
    # E14 and E18 are left out unless --include-unhealthy (gnssrel.orbits.selection)
    assert ledger.dropped("navigation_records", "E") == {"excluded by rule": 1}
    ledger = accounting.navigation_ledger(nav)
    accounting.retire_navigation(ledger, nav, [states], "E", t0, t0, include_unhealthy=True)
    assert ledger.dropped("navigation_records", "E") == {"superseded (never the nearest record)": 1}
