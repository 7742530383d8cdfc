"""Inputs that do not belong together, absurd windows and broken pipes: one line naming the
file and the real cause, exit 2 (or the pipe's code), never a traceback (README, "Nothing lost, nothing silently wrong").

Inputs are cut from the invented demo data in sample_logs/ and changed in the test.
"""

from __future__ import annotations

import json
import os
import stat
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

from gnssrel.accounting import Ledger
from gnssrel.cli import main
from gnssrel.io import writers

LOGS = Path(__file__).resolve().parents[1] / "sample_logs"
NAV = str(LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx")
OBS = LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"
SP3 = LOGS / "KVA0DEMFIN_20251620830_06H_15M_ORB.SP3"
CLOCK_TABLE = LOGS / "KVRP_satellite_clocks.csv"


def _run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _one_line_error(err: str, *words) -> str:
    lines = [line for line in err.splitlines() if "error:" in line]
    assert len(lines) == 1 and "Traceback" not in err, err
    for word in words:
        assert word in lines[0], lines[0]
    return lines[0]


def _log_of_another_year(tmp_path, n_epochs: int = 3) -> Path:
    """The first epochs of the demo log, moved a year back (header and epoch lines)."""
    lines = OBS.read_text().splitlines()
    epochs = [i for i, line in enumerate(lines) if line.startswith(">")]
    out = []
    for line in lines[:epochs[n_epochs]]:
        if "TIME OF FIRST OBS" in line or "TIME OF LAST OBS" in line:
            line = line.replace("  2025", "  2024", 1)
        if line.startswith("> 2025"):
            line = "> 2024" + line[6:]
        out.append(line)
    path = tmp_path / "OTHR_2024.rnx"
    path.write_text("\n".join(out) + "\n")
    return path


def test_report_with_a_log_of_another_day_is_no_overlap_exit_2(tmp_path, capsys):
    obs = _log_of_another_year(tmp_path)
    code, _, err = _run(capsys, "report", NAV, "--obs", obs, "--output", tmp_path / "r")
    assert code == 2
    _one_line_error(err, "OTHR_2024.rnx", "no overlap", "2024-06-11 10:00:00", "2025-06-11 08:00:00")
    assert not (tmp_path / "r").exists()


def test_audit_with_a_navigation_file_of_another_day_names_both_spans(tmp_path, capsys):
    code, _, err = _run(capsys, "audit", _log_of_another_year(tmp_path), NAV)
    assert code == 2
    _one_line_error(err, "OTHR_2024.rnx", "no overlap", "the log's epochs span 2024-06-11",
                    "the navigation records 2025-06-11")


def test_audit_without_pseudoranges_names_the_file(tmp_path, capsys):
    lines = OBS.read_text().splitlines()[:40]
    lines = ["G    6 L1C L1C S1C L2W L2W S2W".ljust(60) + "SYS / # / OBS TYPES"
             if line.startswith("G    6") else line for line in lines]
    path = tmp_path / "PHAS.rnx"
    path.write_text("\n".join(lines) + "\n")
    code, _, err = _run(capsys, "audit", path, NAV, "--systems", "G")
    assert code == 2
    _one_line_error(err, "PHAS.rnx", "no pseudoranges of a supported system", "1 epoch read")


def test_relativity_too_short_default_window_says_which_window_and_file(tmp_path, capsys):
    nav = tmp_path / "ONE0_MN.rnx"                    # the header and a single GPS record
    nav.write_text("\n".join(Path(NAV).read_text().splitlines()[:18]) + "\n")
    # the default window is the day holding the record (the name declares no period); 12 h steps: 2 epochs
    code, _, err = _run(capsys, "relativity", nav, "--step", "43200")
    assert code == 2
    _one_line_error(err, "only 2 epochs", "default window 2025-06-11 00:00:00 to 2025-06-12 00:00:00 GPST",
                    "ONE0_MN.rnx")


def test_orbits_window_after_the_records_is_no_overlap(capsys):
    code, _, err = _run(capsys, "orbits", NAV, "--start", "2026-01-01")
    assert code == 2
    _one_line_error(err, "no overlap", "--start 2026-01-01", "2025-06-11 08:00:00 to 14:00:00 GPST",
                    "KVRP00ZZZ_R_20251621000_03H_MN.rnx")


def test_an_absurd_window_is_refused_with_the_way_out(capsys):
    code, _, err = _run(capsys, "orbits", NAV, "--start", "2020-01-01", "--end", "2025-06-11T12:00")
    assert code == 2
    _one_line_error(err, "--step", "shorter --start/--end")
    code, _, err = _run(capsys, "relativity", NAV, "--start", "2025-01-01", "--end", "2025-06-11T12:00")
    assert code == 2
    _one_line_error(err, "--step")


def _clock_table_of_another_year(tmp_path) -> Path:
    text = CLOCK_TABLE.read_text().replace("2025-06-11T", "2024-06-11T")
    path = tmp_path / "OTHR_satellite_clocks.csv"
    path.write_text(text)
    return path


def test_receiver_clock_table_of_another_day_names_the_real_cause(tmp_path, capsys):
    table = _clock_table_of_another_year(tmp_path)
    code, _, err = _run(capsys, "clocks", NAV, "--receiver-clocks", table)
    assert code == 2
    _one_line_error(err, "OTHR_satellite_clocks.csv", "no overlap", "2024-06-11")
    code, _, err = _run(capsys, "audit", OBS, NAV, "--receiver-clocks", table)
    assert code == 2
    line = _one_line_error(err, "OTHR_satellite_clocks.csv", "no overlap", "2024-06-11", "2025-06-11")
    assert "no row of the requested systems" not in line


def test_a_repeated_sp3_epoch_block_cannot_crash_the_clock_comparison(tmp_path, capsys):
    lines = SP3.read_text().splitlines(keepends=True)
    starts = [i for i, line in enumerate(lines) if line.startswith("*")]
    block = lines[starts[3]:starts[4]]
    path = tmp_path / "DUP0.SP3"
    path.write_text("".join(lines[:starts[4]] + block + lines[starts[4]:]))
    code, out, err = _run(capsys, "clocks", NAV, "--precise", path, "--json")
    assert code == 0, err
    ledger = Ledger.from_dict(json.loads(out)["accounting"])
    assert ledger.unbalanced() == []
    duplicates = sum(n for reason, n in ledger.dropped("sp3_records").items() if "duplicate" in reason)
    assert duplicates == len(block) - 1                 # one record per satellite of the repeated epoch


def test_a_closed_pipe_ends_quietly():
    read_end, write_end = os.pipe()
    os.close(read_end)                                  # as `| head` does once it has its lines
    try:
        done = subprocess.run([sys.executable, "-m", "gnssrel", "orbits", NAV, "--step", "3600", "--json"],
                              stdout=write_end, stderr=subprocess.PIPE, timeout=120, check=False)
    finally:
        os.close(write_end)
    assert done.returncode == 141                       # 128 + SIGPIPE, what a shell reports (common practice)
    assert b"Traceback" not in done.stderr and b"Error" not in done.stderr


@pytest.mark.parametrize("umask, mode", [(0o022, 0o644), (0o077, 0o600), (0o002, 0o664)])
def test_outputs_follow_the_umask(tmp_path, umask, mode):
    old = os.umask(umask)
    try:
        csv = writers.write_table(pd.DataFrame({"a": [1, 2]}), tmp_path / "t.csv")
        summary = writers.write_json({"a": 1}, tmp_path / "s.json")
    finally:
        os.umask(old)
    assert stat.S_IMODE(os.stat(csv).st_mode) == mode
    assert stat.S_IMODE(os.stat(summary).st_mode) == mode


def test_a_replaced_output_keeps_its_own_permissions(tmp_path):
    target = tmp_path / "s.json"
    target.write_text("{}")
    os.chmod(target, 0o640)
    writers.write_json({"a": 1}, target)
    assert stat.S_IMODE(os.stat(target).st_mode) == 0o640 and json.loads(target.read_text()) == {"a": 1}


@pytest.mark.refdata
def test_audit_with_records_for_few_of_the_observed_satellites_says_so(capsys):
    from conftest import refdata_file

    # delf0010.21o with the navigation file of another station (refdata 2021-001): the records
    # of most satellites start hours after the log's 52 minutes; 1028 of the 1244 GPS
    # dual-frequency observations (2056 pseudoranges) have no record within the maximum age.
    code, _, err = _run(capsys, "audit", refdata_file("2021-001/delf0010.21o"),
                        refdata_file("2021-001/cbw10010.21n.gz"))
    assert code == 2
    line = _one_line_error(err, "delf0010.21o", "no epoch could be solved for a position",
                           "2056 of 2488 pseudoranges of G", "32 satellites of G")
    assert "too few satellites above the mask" not in line


def test_audit_warns_when_many_pseudoranges_have_no_record_but_still_computes(tmp_path, capsys, caplog):
    lines = Path(NAV).read_text().splitlines()
    header = lines[:lines.index(next(x for x in lines if "END OF HEADER" in x)) + 1]
    body = lines[len(header):]
    blocks = [body[i:i + 8] for i in range(0, len(body), 8) if body[i][:3] in {f"G{n:02d}" for n in range(1, 13)}]
    nav = tmp_path / "HALF_MN.rnx"                    # GPS records of G01-G12 only
    nav.write_text("\n".join(header + [x for b in blocks for x in b]) + "\n")
    code, out, err = _run(capsys, "audit", OBS, nav, "--systems", "G", "--json")
    assert code == 0, err
    ledger = Ledger.from_dict(json.loads(out)["accounting"])
    missing = ledger.dropped("observations", "G")["no navigation record for this satellite"]
    assert missing > 0 and ledger.unbalanced() == []
    assert f"{missing} of {ledger.count('observations', 'G')} pseudoranges of G have no satellite state" \
        in caplog.text
