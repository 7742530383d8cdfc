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


# The shared option builders (gnssrel/jobs/common.py) and formatters (gnssrel/text.py): every command reads the same.

import argparse

import numpy as np
import pytest

from gnssrel.cli import build_parser
from gnssrel.text import fmt, fmt_k, fmt_sigma, fmt_span, text_table


def _options(parser):
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return {name: {o: a.help for a in p._actions for o in a.option_strings} for name, p in sub.choices.items()}


def test_shared_options_have_the_same_help_in_every_command():
    options = _options(build_parser())
    for option in ("--systems", "--start", "--end", "--json", "--summary", "--include-unhealthy"):
        helps = {cmd: o[option] for cmd, o in options.items() if option in o}
        if option == "--json":     # wording names what is printed; the option itself is everywhere
            assert set(helps) == set(options)
            continue
        assert len(set(helps.values())) == 1, (option, helps)
    assert {"--systems", "--start", "--end", "--json", "--summary", "--output"} <= set(options["audit"])


@pytest.mark.parametrize("sigma, text", [(0.0934, "0.093"), (2.791e-06, "< 0.001"), (0.0, "< 0.001"),
                                         (float("nan"), "-"), (None, "-")])
def test_sigma_never_prints_as_zero(sigma, text):
    assert fmt_sigma(sigma) == text


def test_fitted_factor_text_has_no_negative_zero_and_no_nan():
    assert fmt_k(-3.4e-07, 5.9e-07) == "0.000 (σ < 0.001)"
    assert fmt_k(1.0951, 0.0934) == "1.095 ± 0.093"
    assert fmt_k(0.0, float("nan")) == "0.000 (σ -)"
    assert fmt(-0.0001, ".3f") == "0.000" and fmt(-0.002, ".3f") == "-0.002"


def test_span_and_times_print_to_the_second_with_the_scale():
    t0, t1 = np.datetime64("2020-06-25T06:00:00", "ns"), np.datetime64("2020-06-25T08:00:00", "ns")
    assert fmt_span(t0, t1) == "2020-06-25 06:00:00 to 08:00:00 GPST"
    assert ".000000000" not in fmt_span(t0, t1 + np.timedelta64(1, "D"))


def test_text_table_aligns_numbers_right_and_words_left():
    lines = text_table(("system", "k", "status"),
                              [("G GPS", "1.095", "consistent"), ("E Galileo", "-1.701", "undetermined")]).splitlines()
    assert lines[1].index("1.095") + 5 == lines[2].index("-1.701") + 6          # right edges line up
    assert lines[1].index("consistent") == lines[2].index("undetermined")      # left edges line up
