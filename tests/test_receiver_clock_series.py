"""The receiver's own clock series: the reader (gnssrel's CSV layout, refused rows counted) and its
comparison with gnssrel's receiver clock per hypothesis (issue 13, ``--receiver-clock-bias``)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from gnssrel.accounting import Ledger
from gnssrel.clocks.receiver_series import (
    LEFT_OUT,
    NO_EPOCH,
    check_receiver_clock_series,
    compare_receiver_clock,
)
from gnssrel.errors import FileFormatError
from gnssrel.io.receiver_clock_series import ITEM, read_receiver_clock_series

HEADER = "time,time_scale,clock_bias_ns,clock_drift_ns_per_s\n"
C = 299792458.0


def _write(tmp_path, body, header=HEADER, name="clock.csv"):
    path = tmp_path / name
    path.write_text("# receiver clock, invented\n" + header + body)
    return path


def _ledger(df):
    ledger = Ledger.from_dict(df.attrs["accounting"])
    assert ledger.unbalanced() == []
    return ledger


def test_reads_the_series_and_converts_times_to_gpst(tmp_path):
    path = _write(tmp_path, "2025-06-11T10:00:00.000,GPST,-3899999.533,-117.9\n"
                            "2025-06-11T09:59:43,UTC,-3900117.451,-117.9\n"        # GPST 10:00:01 (18 s)
                            "2025-06-11T09:59:48.000,BDT,-3900235.251,\n"          # GPST 10:00:02 (14 s)
                            "2025-06-11T10:00:03,GST,-3900353.4,-118.0\n")
    df = read_receiver_clock_series(path)
    assert list(df["time"]) == [np.datetime64("2025-06-11T10:00:00") + np.timedelta64(k, "s") for k in range(4)]
    assert df["clock_bias_ns"].iloc[0] == -3899999.533 and np.isnan(df["clock_drift_ns_per_s"].iloc[2])
    assert list(df["time_scale"]) == ["GPST", "UTC", "BDT", "GST"] and list(df["line"]) == [3, 4, 5, 6]
    ledger = _ledger(df)
    assert ledger.count(ITEM, "-") == 4 == ledger.count(ITEM, "-", "used")


def test_drift_column_is_optional(tmp_path):
    path = _write(tmp_path, "2025-06-11T10:00:00,GPST,12.5\n", header="time,time_scale,clock_bias_ns\n")
    df = read_receiver_clock_series(path)
    assert df["clock_bias_ns"].iloc[0] == 12.5 and np.isnan(df["clock_drift_ns_per_s"].iloc[0])


@pytest.mark.parametrize("row, reason", [
    ("2025-06-11T10:00:09,GPST,-3_900_000.0,-1.0", "clock_bias_ns is not a plain number"),    # underscore
    ("2025-06-11T10:00:09,GPST,NaN,-1.0", "clock_bias_ns is not a plain number"),
    ("2025-06-11T10:00:09,GPST,-3900000,INF", "clock_drift_ns_per_s is not a plain number"),
    ("2025-06-11T10:00:09,GPST,2e9,-1.0", "clock_bias_ns beyond 1e+09"),                      # 2 s: no bias
    ("2025-06-11T10:00:09,GPST,-3900000,3e5", "clock_drift_ns_per_s beyond 100000"),
    ("2025-02-30T10:00:09,GPST,-3900000,-1.0", "time is not an ISO 8601 epoch (e.g. 2025-06-11T10:00:00)"),
    ("2025-06-11 10:00:09,GPST,-3900000,-1.0", "time is not an ISO 8601 epoch (e.g. 2025-06-11T10:00:00)"),
    ("2025-06-11T10:00:09,GLONASST,-3900000,-1.0", "unknown time scale (use one of GPST, UTC, GST, BDT)"),
    ("2025-06-11T10:00:09,GPST,-3900000", "not 4 columns as in the header"),
    ("2025-06-11T10:00:00,GPST,-3900001,-1.0", "the epoch appears twice (the first row is kept)"),
    ("2019-06-11T10:00:09,GPST,-3900000,-1.0", "time far from the series' other rows"),
])
def test_a_bad_row_costs_that_row_only_and_is_counted(tmp_path, row, reason):
    good = "".join(f"2025-06-11T10:00:{k:02d},GPST,{-3900000 - 118 * k},-118.0\n" for k in range(6))
    path = _write(tmp_path, good + row + "\n")
    df = read_receiver_clock_series(path)
    assert len(df) == 6
    ledger = _ledger(df)
    assert ledger.dropped(ITEM, "-") == {reason: 1}
    assert ledger.warnings and ledger.warnings[0].endswith(f"receiver clock series row refused: {reason}")
    assert ":9:" in ledger.warnings[0]                     # the file's line 9 (comment, header, 6 rows)


def test_unusable_files_are_refused_naming_the_file(tmp_path):
    with pytest.raises(FileFormatError, match="lacks column"):
        read_receiver_clock_series(_write(tmp_path, "2025-06-11T10:00:00,GPST,1\n", header="time,scale,bias\n"))
    with pytest.raises(FileFormatError, match="empty"):
        read_receiver_clock_series(_write(tmp_path, "", header=""))
    with pytest.raises(FileFormatError, match="no rows"):
        read_receiver_clock_series(_write(tmp_path, ""))
    with pytest.raises(FileFormatError, match="no usable row") as err:
        read_receiver_clock_series(_write(tmp_path, "2025-06-11T10:00:00,GPST,nan,1\n"))
    assert err.value.line == 3


def _positions(t, clock_s):
    return pd.DataFrame({"time": t, "x_m": 0.0, "y_m": 0.0, "z_m": 0.0, "clock_m": clock_s * C})


def _series(t, bias_ns):
    df = pd.DataFrame({"time": t, "time_scale": "GPST", "clock_bias_ns": bias_ns,
                       "clock_drift_ns_per_s": np.nan, "line": np.arange(t.size) + 2})
    ledger = Ledger()
    ledger.read(ITEM, "-", t.size)
    ledger.used(ITEM, "-", t.size)
    df.attrs["accounting"] = ledger.as_dict()
    return df


def test_the_series_follows_the_hypothesis_whose_clock_it_shares(tmp_path):
    # a receiver 4 ms off, drifting 1e-7, stepping 1 ms; gnssrel's clock per hypothesis differs by a few ns
    rng = np.random.default_rng(2)
    n = 600
    t = np.datetime64("2025-06-11T10:00", "ns") + np.arange(n) * np.timedelta64(1, "s")
    true_s = -3.9e-3 - 1e-7 * np.arange(n) + 1e-3 * (np.arange(n) >= 250)
    common_noise = rng.normal(0, 3e-9, n)               # gnssrel's clock noise, shared by the hypotheses
    shift_s = 6e-9 + 2e-9 * np.sin(np.arange(n) / 200)       # 'doubled' minus 'applied': slow
    hyp = {"applied": _positions(t, true_s + common_noise), "doubled": _positions(t, true_s + common_noise + shift_s)}
    bias = (true_s + shift_s) * 1e9 + rng.normal(0, 2.0, n)  # the receiver follows 'doubled'
    bias[[40, 41]] += 5000.0                                # two wild rows
    out = compare_receiver_clock(_series(t, bias), hyp)
    assert out["closest"] == "doubled" and out["decided"] is True
    assert out["margin_ns"] > 3 * out["margin_sigma_ns"] and out["margin_ns"] == pytest.approx(
        np.sqrt(np.mean((shift_s * 1e9) ** 2)), abs=1.0)         # sqrt(D): the RMS distance between them
    assert out["mean_difference_ns"]["doubled"] == pytest.approx(0.0, abs=1.0)
    assert out["n_outliers"] == 2 and out["verdict"].startswith("closest to 'doubled'")
    # the rows the comparison could not use are retired with a reason: the ledger still balances
    series = _series(t[:-10], bias[:-10])
    series = pd.concat([series, _series(t[-10:] + np.timedelta64(1, "h"), bias[-10:])], ignore_index=True)
    series.attrs["accounting"] = _series(t, bias).attrs["accounting"]
    block, ledger = check_receiver_clock_series(series, hyp)
    assert ledger.unbalanced() == []
    assert ledger.dropped(ITEM, "-") == {NO_EPOCH: 10, LEFT_OUT: 2}
    assert block["n_unmatched"] == 10


def test_too_few_epochs_or_too_close_hypotheses_stay_undetermined():
    t = np.datetime64("2025-06-11T10:00", "ns") + np.arange(60) * np.timedelta64(1, "s")
    clock = np.full(60, 1e-3)
    hyp = {"applied": _positions(t, clock), "omitted": _positions(t, clock + 0.2e-9)}
    out = compare_receiver_clock(_series(t, clock * 1e9 + np.random.default_rng(0).normal(0, 5, 60)), hyp)
    assert out["decided"] is False and out["verdict"].startswith("undetermined")
    late = _series(t + np.timedelta64(1, "D"), clock * 1e9)
    assert compare_receiver_clock(late, hyp)["verdict"].startswith("undetermined: 0 epochs")
