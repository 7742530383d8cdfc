"""Every command on every system: `gnssrel orbits|relativity|clocks --systems GECJRIS` on the
RINEX 4.00 day BRD400DLR 2023-071 (issue 14), in a 30-minute window to stay fast.

Record counts per type: the file itself (test_rinex4_messages.test_brd400dlr_every_record_is_read).
Nothing may be left "not read" (skipped) on this file, in the terminal or in the summary; `clocks`
needs precise products or receiver clocks, which this day lacks: a one-line refusal, exit 2.
"""

from __future__ import annotations

import json

import pytest
from conftest import refdata_file

from gnssrel.cli import main

BRD4 = "2023-071/BRD400DLR_S_20230710000_01D_MN.rnx.gz"
WINDOW = ["--systems", "GECJRIS", "--start", "2023-03-12T00:00", "--end", "2023-03-12T00:30"]
READ = {"G": 762, "E": 5840, "C": 2621, "J": 292, "R": 1240, "I": 283, "S": 9072, "-": 288}
"""Records per system in BRD400DLR (ephemerides by type summed; "-": 126 STO, 32 EOP, 130 ION)."""


def _no_record_left_unread(accounting: dict) -> None:
    records = accounting["navigation_records"]
    assert {s: records[s]["read"] for s in records} == READ
    for letter, counts in records.items():
        assert not [reason for reason in counts if "not read" in reason], letter
        assert counts["read"] == sum(n for key, n in counts.items() if key != "read"), letter


@pytest.mark.refdata
def test_orbits_on_every_system(tmp_path, capsys):
    summary = tmp_path / "orbits.json"
    assert main(["orbits", str(refdata_file(BRD4)), *WINDOW, "--step", "60", "--summary", str(summary),
                 "--output", str(tmp_path / "states.csv")]) == 0
    printed = capsys.readouterr()
    assert "not read" not in printed.out + printed.err and "skipped" not in printed.out + printed.err
    for label in ("G GPS", "E Galileo", "C BeiDou", "J QZSS", "R GLONASS", "I NavIC", "S SBAS"):
        assert f"\n{label}" in printed.out, label
    out = json.loads(summary.read_text())
    assert list(out["by_system"]) == list("GECJRIS")
    # 2023-03-12 00:00-00:30: all 4 NavIC and 4 QZSS satellites have a state at every epoch;
    # SBAS only the GEOs whose records are healthy (health 0).
    assert out["by_system"]["I"]["ok_share"] == 1.0 and out["by_system"]["J"]["ok_share"] == 1.0
    assert out["by_system"]["S"]["status_counts"].get("ok", 0) > 0
    for letter in "GECR":
        assert out["by_system"][letter]["ok_share"] > 0.85, letter
    _no_record_left_unread(out["accounting"])


@pytest.mark.refdata
def test_relativity_on_every_system(tmp_path, capsys):
    summary = tmp_path / "relativity.json"
    assert main(["relativity", str(refdata_file(BRD4)), *WINDOW, "--step", "60",
                 "--summary", str(summary)]) == 0
    printed = capsys.readouterr()
    assert "not read" not in printed.out + printed.err
    lines = {line[:1]: line for line in printed.out.splitlines() if line[:2] in {f"{s} " for s in "GECJRIS"}}
    assert set(lines) == set("GECJRIS")
    out = json.loads(summary.read_text())
    assert list(out["by_system"]) == list("GECJRIS")
    for sv, entry in out["satellites"].items():
        if sv[0] in "IS":          # geosynchronous: +46.58 us/day against TT (derived, test_navic_sbas)
            assert entry["us_per_day_total"] == pytest.approx(46.58, abs=0.1), sv
            assert entry["periodic_max_abs_ns"] is not None, sv
    # NavIC's periodic term: I02 F e sqrt(A) = 5.72 ns (test_navic_sbas); in 30 min it reaches part of it
    assert 0.0 < out["satellites"]["I02"]["periodic_max_abs_ns"] <= 5.8
    _no_record_left_unread(out["accounting"])


@pytest.mark.refdata
def test_clocks_without_precise_products_refuse_in_one_line(capsys):
    assert main(["clocks", str(refdata_file(BRD4)), *WINDOW]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("gnssrel clocks: error:") and "--precise" in err[0]
