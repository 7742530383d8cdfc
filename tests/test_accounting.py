"""The ledger behind the promise "nothing dropped without a count" (gnssrel/accounting.py)."""

import json

import pytest
from hypothesis import given
from hypothesis import strategies as st

from gnssrel.accounting import MAX_WARNINGS, Ledger


def test_counts_balance_and_survive_a_json_round_trip():
    ledger = Ledger()
    ledger.read("navigation_records", "G", 10)
    ledger.used("navigation_records", "G", 7)
    ledger.drop("navigation_records", "G", "damaged", 2)
    ledger.drop("navigation_records", "G", "refused: eccentricity out of range")
    ledger.warn("garbled number", "brdc.rnx", 42)
    assert ledger.unbalanced() == []
    data = json.loads(json.dumps(ledger.as_dict()))
    again = Ledger.from_dict(data)
    assert again.as_dict() == ledger.as_dict()
    assert data["navigation_records"]["G"] == {"read": 10, "used": 7, "damaged": 2,
                                               "refused: eccentricity out of range": 1}
    assert data["warnings"] == ["brdc.rnx:42: garbled number"]


def test_a_drop_without_its_read_is_reported_as_unbalanced():
    ledger = Ledger()
    ledger.read("observations", "E", 5)
    ledger.used("observations", "E", 5)
    ledger.drop("observations", "E", "below the elevation mask", 1)
    problems = ledger.unbalanced()
    assert len(problems) == 1 and "observations E" in problems[0] and "read 5" in problems[0]


def test_retire_moves_used_records_to_a_reason_keeping_the_balance():
    ledger = Ledger()
    ledger.read("navigation_records", "E", 4)
    ledger.used("navigation_records", "E", 4)
    ledger.retire("navigation_records", "E", "outside the time window", 3)
    assert ledger.count("navigation_records", "E", "used") == 1
    assert ledger.dropped("navigation_records") == {"outside the time window": 3}
    assert ledger.unbalanced() == []


def test_read_and_used_are_not_reasons():
    ledger = Ledger()
    with pytest.raises(ValueError):
        ledger.drop("epochs", "-", "used")
    with pytest.raises(ValueError):
        ledger.retire("epochs", "-", "read")


def test_merge_adds_counts_and_keeps_warnings_bounded():
    a, b = Ledger(), Ledger()
    for k in range(MAX_WARNINGS):
        a.warn(f"w{k}", "a.rnx", k + 1)
    a.read("epochs", "-", 3)
    a.used("epochs", "-", 3)
    b.read("epochs", "-", 2)
    b.drop("epochs", "-", "damaged", 2)
    b.warn("one more", "b.rnx", 9)
    a.merge(b.as_dict())
    assert a.count("epochs", "-") == 5 and a.count("epochs", "-", "damaged") == 2
    assert len(a.warnings) == MAX_WARNINGS and a.warnings_dropped == 1
    assert a.as_dict()["warnings_dropped"] == 1


def test_terminal_lines_name_item_system_and_every_reason():
    ledger = Ledger()
    ledger.read("observations", "C", 100)
    ledger.used("observations", "C", 90)
    ledger.drop("observations", "C", "no satellite state", 6)
    ledger.drop("observations", "C", "below the elevation mask", 4)
    (line,) = ledger.text_lines()
    assert line == ("observations C: 90 used of 100 read; dropped: 6 no satellite state, "
                    "4 below the elevation mask")


@given(st.lists(st.tuples(st.sampled_from("GECJR"), st.integers(0, 50), st.integers(0, 50)),
                max_size=20))
def test_any_sequence_of_reads_and_drops_balances(events):
    ledger = Ledger()
    for system, used, dropped in events:
        ledger.read("observations", system, used + dropped)
        ledger.used("observations", system, used)
        ledger.drop("observations", system, "outlier", dropped)
    assert ledger.unbalanced() == []
    total = sum(u + d for _, u, d in events)
    assert ledger.count("observations") == total
