"""The two named record-selection rules, "post" and "receiver" (gnssrel.orbits.selection), on minimal
ephemeris tables built here: no valid observation left without a record.

Limits checked are the ones stated beside SYSTEM_LIMITS (measured on MOJN 2020-177 broadcast vs GRG
final; BeiDou from the BDS ICD's 1-h update interval, from memory).
"""

from __future__ import annotations

import numpy as np
import pytest
from ephemeris_tables import ephemeris_table

from gnssrel.orbits.broadcast import broadcast_states
from gnssrel.orbits.selection import (
    RULE_NAMES,
    STATUS_NO_EPHEMERIS,
    STATUS_NOT_TRANSMITTED,
    STATUS_OK,
    select_ephemerides,
    status_codes,
)

T0 = np.datetime64("2020-06-25T00:00", "ns")


def _at(seconds):
    return T0 + np.asarray(np.round(np.asarray(seconds, dtype=float) * 1e9), dtype="int64").astype("timedelta64[ns]")


def _h(hours):
    return _at(np.asarray(hours, dtype=float) * 3600)


_table = ephemeris_table


def _beidou_hour_change():
    # MOJN 2020-177: BeiDou toe on the BDT hour = hh:00:14 GPST (BDT = GPST - 14 s); the new record
    # is received at hh:00:32 GPST, so at hh:00:30 the old record is 1 h 00 min 16 s old.
    return _table([
        {"sv": "C06", "toe": _at(14), "toc": _at(14), "transmission_time": _at(32), "health": 0},
        {"sv": "C06", "toe": _at(3600 + 14), "toc": _at(3600 + 14), "transmission_time": _at(3600 + 32),
         "health": 0},
    ])


def test_beidou_is_valid_at_hh_00_30_under_both_rules():
    times = _at([3600 + 30, 3600 + 32])
    rows, status = select_ephemerides(_beidou_hour_change(), ["C06"], times, "C")
    assert rows[:, 0].tolist() == [1, 1] and status[:, 0].tolist() == [STATUS_OK] * 2   # nearest: 16 s
    rows, status = select_ephemerides(_beidou_hour_change(), ["C06"], times, "C", rule="receiver")
    # receiver: the old record (1 h 00 min 16 s, within 2 h after toe) until the new one is received
    assert rows[:, 0].tolist() == [0, 1] and status[:, 0].tolist() == [STATUS_OK] * 2


def test_not_yet_transmitted_record_serves_post_but_not_receiver():
    # Galileo: a record is received ~12 min after its toe (MOJN 2020-177); alone in the table
    table = _table([{"sv": "E10", "toe": _h(1.5), "toc": _h(1.5), "transmission_time": _h(1.5) + np.timedelta64(895, "s"),
                     "nav_type": "INAV", "health": 0, "accuracy_m": 3.12}])
    times = _at([1.5 * 3600 + 30, 1.5 * 3600 + 895])
    rows, status = select_ephemerides(table, ["E10"], times, "E", rule="post")
    assert rows[:, 0].tolist() == [0, 0] and status[:, 0].tolist() == [STATUS_OK] * 2
    rows, status = select_ephemerides(table, ["E10"], times, "E", rule="receiver")
    assert rows[:, 0].tolist() == [-1, 0]
    assert status[:, 0].tolist() == [STATUS_NOT_TRANSMITTED, STATUS_OK]


def test_tie_goes_to_the_newer_record():
    # two records equally near (toe 1 h before and 1 h after t) -> the later toe
    table = _table([
        {"sv": "G01", "toe": _h(0), "toc": _h(0), "transmission_time": _h(-2), "health": 0, "fit_interval_h": 4.0},
        {"sv": "G01", "toe": _h(2), "toc": _h(2), "transmission_time": _h(0), "health": 0, "fit_interval_h": 4.0},
    ])
    for rule in RULE_NAMES:
        rows, _ = select_ephemerides(table, ["G01"], _h([1.0]), "G", rule=rule)
        assert rows[0, 0] == 1, rule
    # a re-upload with the same toe: the later transmission wins, whatever the table order
    upload = _table([
        {"sv": "G02", "toe": _h(2), "toc": _h(2), "transmission_time": _h(0.5), "health": 0, "fit_interval_h": 4.0},
        {"sv": "G02", "toe": _h(2), "toc": _h(2), "transmission_time": _h(0), "health": 0, "fit_interval_h": 4.0},
    ])
    rows, _ = select_ephemerides(upload, ["G02"], _h([1.0]), "G")
    assert upload.loc[rows[0, 0], "transmission_time"] == _h(0.5)
    # Galileo: nearness in units of the limit on its side (3 h after toe, 30 min before): a record
    # 30 min old and one 5 min ahead are equally near -> the newer; 29 min old beats 5 min ahead
    gal = _table([{"sv": "E10", "toe": _h(toe), "toc": _h(toe), "transmission_time": _h(toe + 0.2),
                   "nav_type": "INAV", "health": 0, "accuracy_m": 3.12} for toe in (0.5, 1.0 + 5 / 60)])
    rows, _ = select_ephemerides(gal, ["E10"], _h([1.0, 1.0 - 1 / 60]), "E")
    assert rows[:, 0].tolist() == [1, 0]
    # GLONASS (no transmission time): equally near t_b -> the later t_b
    glo = _table([{"sv": "R01", "toc": _h(0.5), "health": 0}, {"sv": "R01", "toc": _h(1.0), "health": 0}])
    rows, _ = select_ephemerides(glo, ["R01"], _h([0.75]), "R")
    assert rows[0, 0] == 1


@pytest.mark.parametrize("system, after_s, before_s", [
    ("G", 7200, 7200),          # half the 4-h fit interval (IS-GPS-200 20.3.3.4.3.1)
    ("E", 3 * 3600, 1800),      # measured: flat for 3 h after toe, growing before it
    ("C", 7200, 3600),          # BDS ICD 1-h update interval (from memory): 2 h after, 1 h before
    ("R", 1200, 1200),          # measured; GLONASS ICD 2008 A.3.1.2 nominal 15 min
])
def test_maximum_age_per_system_is_enforced(system, after_s, before_s):
    ref = "toc" if system == "R" else "toe"
    row = {"sv": f"{system}05", ref: _h(5), "toc": _h(5), "health": 0}
    if system != "R":
        row.update(toe=_h(5), transmission_time=_h(5) - np.timedelta64(3, "h"))
    if system == "G":
        row["fit_interval_h"] = 4.0
    if system == "E":
        row.update(nav_type="INAV", accuracy_m=3.12)
    t_ref = 5 * 3600
    times = _at([t_ref - before_s - 1, t_ref - before_s, t_ref + after_s, t_ref + after_s + 1])
    for rule in RULE_NAMES:
        rows, status = select_ephemerides(_table([row]), [f"{system}05"], times, system, rule=rule)
        assert rows[:, 0].tolist() == [-1, 0, 0, -1], rule
        assert status[:, 0].tolist() == [STATUS_NO_EPHEMERIS, STATUS_OK, STATUS_OK, STATUS_NO_EPHEMERIS]


def test_status_codes_name_the_limits_and_the_rule_is_kept():
    post, receiver = status_codes("post", "GECR"), status_codes("receiver", "GECR")
    assert post[1].startswith("no record within the maximum age (") and "Galileo 3 h after toe" in post[1]
    assert "BeiDou 2 h after toe, 1 h before" in post[1] and "GLONASS within 20 min" in post[1]
    assert receiver[4] == "ephemeris not yet transmitted" and "receiver rule only" in post[4]
    assert {post[2], post[3], post[5]} == {"unhealthy", "excluded by rule", "satellite not in navigation data"}
    with pytest.raises(ValueError, match="post, receiver"):
        select_ephemerides(_beidou_hour_change(), ["C06"], _at([0]), "C", rule="firmware")


def test_broadcast_states_take_the_rule_and_record_it():
    table = _beidou_hour_change()
    cols = {"clock_bias_s": 0.0, "clock_drift_s_per_s": 0.0, "clock_drift_rate_s_per_s2": 0.0, "week": 759,
            "crs_m": 0.0, "delta_n_rad_per_s": 0.0, "mean_anomaly_rad": 0.0, "cuc_rad": 0.0,
            "eccentricity": 0.001, "cus_rad": 0.0, "sqrt_a_sqrt_m": 5282.6, "cic_rad": 0.0, "omega0_rad": 0.0,
            "cis_rad": 0.0, "inclination_rad": 0.96, "crc_m": 0.0, "perigee_argument_rad": 0.0,
            "omega_dot_rad_per_s": 0.0, "idot_rad_per_s": 0.0, "is_geo": False, "nav_type": "D1"}
    table = table.assign(**cols)
    times = _at([3600 + 30])
    post = broadcast_states({"C": table}, times)
    receiver = broadcast_states({"C": table}, times, rule="receiver")
    assert post.attrs["selection_rule"] == "post" and receiver.attrs["selection_rule"] == "receiver"
    assert int(post["ephemeris_row"].values[0, 0]) == 1 and int(receiver["ephemeris_row"].values[0, 0]) == 0
    assert post["status"].attrs["status_codes"] == status_codes("post", "C")


def test_rule_option_reaches_the_summary_and_bad_names_exit_2(capsys):
    import json

    from conftest import SAMPLE_LOGS

    from gnssrel.cli import main

    nav = str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx")          # the invented demo world
    for rule in RULE_NAMES:
        assert main(["orbits", nav, "--step", "900", "--rule", rule, "--json"]) == 0
        assert json.loads(capsys.readouterr().out)["selection_rule"] == rule
    assert main(["orbits", nav, "--step", "900", "--json"]) == 0                 # default: post
    assert json.loads(capsys.readouterr().out)["selection_rule"] == "post"
    with pytest.raises(SystemExit) as exc:
        main(["orbits", nav, "--rule", "firmware"])
    assert exc.value.code == 2 and "--rule" in capsys.readouterr().err
