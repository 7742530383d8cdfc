"""GPS/QZSS CNAV health: one bit per carrier, judged for the carriers a use needs (issue 14).

IS-GPS-200 30.3.3.1.1.2: Message Type 10 bits 52-54 are the L1, L2 and L5 signal health
(1 = bad or unavailable).  In the RINEX 4 field they are one number, L1 the most significant bit
and L5 the least (RINEX 4.00 Table A32 note, from memory; BRD400DLR 2023-071 confirms the order:
every CNAV record holds 1, the Block IIR-M satellites, which have no L5 signal, included).
The orbits, relativity, clocks and the dual-frequency audit use the L1/L2 pair the broadcast
clock refers to (IS-GPS-200 20.3.3.3.3.2), so an L5-only flag must not make a record unhealthy.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from conftest import refdata_file
from test_rinex4_messages import G_CNAV, HEADER4

from gnssrel.io.rinex_nav import read_navigation
from gnssrel.orbits.broadcast import broadcast_states
from gnssrel.orbits.selection import STATUS_OK, STATUS_UNHEALTHY, healthy_records

L1, L2, L5 = 0b100, 0b010, 0b001          # the RINEX field's bits (module text)


def _table(kinds, health, letter="G"):
    toe = np.full(len(kinds), np.datetime64("2023-03-12T02:00", "ns"))
    return pd.DataFrame({"sv": [f"{letter}01"] * len(kinds), "toe": toe, "toc": toe,
                         "nav_type": kinds, "health": np.asarray(health, float)})


def test_each_carrier_bit_counts_only_for_a_use_of_that_carrier():
    health = [0, L5, L2, L1, L1 | L5, L2 | L5]
    table = _table(["CNAV"] * len(health), health)
    assert healthy_records(table, "G").tolist() == [True, True, False, False, False, False]
    assert healthy_records(table, "G", ("L1", "L5")).tolist() == [True, False, True, False, False, False]
    assert healthy_records(table, "G", ("L1",)).tolist() == [True, True, True, False, False, True]
    assert healthy_records(_table(["CNAV"] * 2, [0, L5], "J"), "J").tolist() == [True, True]


def test_other_record_types_and_unreadable_words_stay_strict():
    # LNAV's 6-bit word and BeiDou's flag: any non-zero value is unhealthy; a CNAV word that is
    # not a whole non-negative number is not guessed at.
    assert healthy_records(_table(["LNAV", "LNAV"], [0, 1]), "G").tolist() == [True, False]
    assert healthy_records(_table(["CNAV"] * 3, [np.nan, -1, 0.5]), "G").tolist() == [False] * 3
    assert healthy_records(_table(["CNV1", "CNV1"], [0, 1], "C"), "C").tolist() == [True, False]


def test_an_l5_flag_leaves_a_cnav_record_in_service(tmp_path):
    # The record's health field (BROADCAST ORBIT - 6, second field) is 1 = L5 unavailable.
    path = tmp_path / "cnav.rnx"
    path.write_text(HEADER4 + G_CNAV)
    at_toe = np.array(["2018-07-29T01:30"], dtype="datetime64[ns]")
    states = broadcast_states(read_navigation(path), at_toe, "G")
    assert states["status"].values.tolist() == [[STATUS_OK]]
    path.write_text(HEADER4 + G_CNAV.replace("-1.000000000000e+00 1.000000000000e+00",
                                             "-1.000000000000e+00 2.000000000000e+00"))   # L2 bad
    states = broadcast_states(read_navigation(path), at_toe, "G")
    assert states["status"].values.tolist() == [[STATUS_UNHEALTHY]]
    assert np.isnan(states["position_ecef_m"].values).all()


@pytest.mark.refdata
def test_brd400dlr_cnav_records_serve_without_include_unhealthy():
    nav = read_navigation(refdata_file("2023-071/BRD400DLR_S_20230710000_01D_MN.rnx.gz"))
    g = nav.ephemerides["G"]
    cnav = g[g["nav_type"] == "CNAV"]
    assert len(cnav) == 334 and set(cnav["health"]) == {1.0}
    # Block IIR-M (no L5 signal; constellation of 2023, from memory) among the CNAV satellites
    assert {"G05", "G07", "G12", "G15", "G17", "G29", "G31"} <= set(cnav["sv"])
    assert healthy_records(cnav, "G").all()
    assert not healthy_records(cnav, "G", ("L1", "L5")).any()
