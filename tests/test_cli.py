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
    r = subprocess.run([sys.executable, "-m", "gnssrel", "--version"], capture_output=True, text=True, check=False)
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


# Issue 12, command line: -q/-v in both places, --systems by name, --fail-on-fault, labelled warnings, help texts.

import logging

from conftest import SAMPLE_LOGS

from gnssrel.cli import EXIT_FAULT_FOUND, _LabelledFormatter, parse
from gnssrel.errors import GnssrelInputError
from gnssrel.jobs.common import parse_systems

DEMO_NAV = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"


@pytest.mark.parametrize("argv, quiet, verbose", [
    (["-q", "info"], True, 0), (["info", "-q"], True, 0), (["info"], False, 0),
    (["-v", "info"], False, 1), (["-v", "info", "-v"], False, 2), (["--quiet", "-v", "info"], True, 1)])
def test_quiet_and_verbose_before_or_after_the_command(argv, quiet, verbose):
    # before: `gnssrel -q info` was refused ("unrecognized arguments")
    args = parse(argv)
    assert (args.quiet, args.verbose, args.command) == (quiet, verbose, "info")


def test_quiet_before_the_command_silences_its_output(capsys):
    assert main(["-q", "relativity", str(DEMO_NAV), "--start", "2025-06-11T10:00", "--end", "2025-06-11T10:10"]) == 0
    assert capsys.readouterr().out == ""


@pytest.mark.parametrize("text, letters", [("gps,galileo", "GE"), ("GPS, Galileo", "GE"), ("ge", "GE"),
                                           ("G,E", "GE"), ("beidou glonass", "CR"), ("QZSS,gps,G", "JG"),
                                           ("gE,bEiDoU", "GEC")])
def test_systems_by_full_name_or_letters(text, letters):
    assert parse_systems(text) == letters


@pytest.mark.parametrize("text, named", [("GX", "unknown letters X in 'GX'"), ("gps,galilei", "unknown system 'galilei'"),
                                         (",", "no system given")])
def test_unknown_system_names_the_valid_letters_and_names(text, named):
    with pytest.raises(GnssrelInputError) as err:
        parse_systems(text)
    message = str(err.value)
    assert named in message and "GECJR" in message
    assert "GPS, Galileo, BeiDou, QZSS, GLONASS" in message


def test_warnings_are_labelled_on_the_terminal():
    # the reader's "header TIME OF LAST OBS ..." disagreement was printed as "gnssrel: <path>: header ..."
    record = logging.LogRecord("gnssrel.jobs.audit", logging.WARNING, __file__, 1, "%s: %s",
                               ("log.rnx", "header TIME OF LAST OBS is ..."), None)
    assert _LabelledFormatter("%(message)s").format(record) == "gnssrel: warning: log.rnx: header TIME OF LAST OBS is ..."
    record.levelno = logging.INFO
    assert _LabelledFormatter("%(message)s").format(record) == "gnssrel: log.rnx: header TIME OF LAST OBS is ..."


def test_time_of_last_obs_mismatch_is_logged_as_a_warning(tmp_path, caplog):
    lines = (SAMPLE_LOGS / "SLMB00ZZZ_R_20251621000_03H_30S_MO.rnx").read_text().splitlines(keepends=True)
    i = next(n for n, line in enumerate(lines) if "TIME OF LAST OBS" in line)
    lines[i] = lines[i].replace("   30.0000000", "   59.0000000")
    obs = tmp_path / "SLMB00ZZZ_R_20251621000_03H_30S_MO.rnx"
    obs.write_text("".join(lines))
    with caplog.at_level(logging.WARNING):
        assert main(["audit", "-q", str(obs), str(DEMO_NAV), "--start", "2025-06-11T12:50", "--end",
                     "2025-06-11T12:59:30"]) == 0
    hits = [r for r in caplog.records if "TIME OF LAST OBS" in r.getMessage()]
    assert hits and all(r.levelno == logging.WARNING for r in hits)


def test_fail_on_fault_gives_its_exit_status_when_the_fixes_follow_a_wrong_hypothesis():
    # SLMB of the demo omits the periodic term in its fixes (scenario.json); before: exit 0 with or without a flag
    argv = ["audit", "-q", str(SAMPLE_LOGS / "SLMB00ZZZ_R_20251621000_03H_30S_MO.rnx"), str(DEMO_NAV),
            "--receiver-fixes", str(SAMPLE_LOGS / "SLMB_fixes.nmea"), "--start", "2025-06-11T10:00",
            "--end", "2025-06-11T11:00"]
    assert main(argv + ["--fail-on-fault"]) == EXIT_FAULT_FOUND == 4
    assert main(argv) == 0


def test_firmware_at_fault_only_for_a_decided_wrong_hypothesis():
    from gnssrel.pipeline.verdicts import firmware_at_fault

    def fixes(closest, margin):
        return {"receiver_fixes": {"closest": closest, "margin_m": margin}}

    assert firmware_at_fault(fixes("omitted", 6.5)) is True
    assert firmware_at_fault(fixes("applied", 6.5)) is False
    assert firmware_at_fault(fixes("omitted", 0.1)) is False          # too close to call
    assert firmware_at_fault({"relativity_k": {}}) is False            # nothing to judge by
    clock = {"by_system": {"G": {"convention": "excludes-periodic", "status": "fault: periodic term missing",
                                 "convention_k": 0.0, "convention_k_sigma": 1e-4}}}
    assert firmware_at_fault(None, clock) is True


def test_help_documents_exit_statuses_and_the_receiver_file_formats():
    parser = build_parser()
    for code in ("0 ok", "1 internal error", "2 bad input", "3 campaign", "4 with --fail-on-fault"):
        assert code in parser.epilog
    options = _options(parser)
    for command in ("audit", "report", "campaign"):
        assert "exit with status 4" in options[command]["--fail-on-fault"]
    for command in ("audit", "report", "clocks"):
        text = options[command]["--receiver-clocks"]
        assert "gnssrel.io" not in text          # before: "see gnssrel.io.receiver_clocks"
        for column in ("time ", "time_scale", "sv ", "clock_correction_s", "seconds", "GPST"):
            assert column in text, (command, column)
    assert "gnssrel.io" not in options["audit"]["--receiver-fixes"]
    assert "x_m,y_m,z_m" in options["audit"]["--receiver-fixes"]


def test_relativity_table_says_its_rates_are_medians(capsys):
    assert main(["relativity", str(DEMO_NAV), "--start", "2025-06-11T10:00", "--end", "2025-06-11T10:10"]) == 0
    out = capsys.readouterr().out
    assert "median rate vs TT (s/s)" in out and "median rate (µs/day)" in out
