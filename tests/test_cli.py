"""The command line's contract: subcommands, exit codes, one-line errors."""

import subprocess
import sys

from gnssrel.cli import main


def test_info_runs_and_lists_systems(capsys):
    assert main(["info"]) == 0
    out = capsys.readouterr().out
    for name in ("GPS", "Galileo", "BeiDou", "QZSS", "GLONASS"):
        assert name in out


def test_no_command_is_bad_input(capsys):
    assert main([]) == 2


def test_python_dash_m_entry_point():
    r = subprocess.run([sys.executable, "-m", "gnssrel", "--version"], capture_output=True, text=True)
    assert r.returncode == 0 and r.stdout.startswith("gnssrel ")
