"""A fixed, fast subset of the hostile-input campaign (DEVELOPERS.md, "Hostile inputs").

Damaged copies of the invented demo data (tests/hostile: seeds cut from
sample_logs/, RINEX 2.11 texts derived from them) go through orbits,
relativity, clocks and audit.  Every case must end as the command line
promises (README, "Usage"): exit 0, or exit 2 with one line naming the file;
never a crash (exit 1, traceback), a hang (30 s) or an output left behind.
The subset is the first cases of seed 7 that give every mutation three cases,
each on another kind of input where it can (about 70); the full campaign is
``python -m tests.hostile --cases 2000 --seed 1``.
"""

from __future__ import annotations

import pytest
from hostile import campaign, runner

SEED = 7


@pytest.fixture(scope="module")
def ctx(tmp_path_factory):
    runner.preload()
    return campaign.make_context(tmp_path_factory.mktemp("hostile"))


def _indices():
    return campaign.subset(campaign.make_context(None), SEED, per_mutation=3)


@pytest.mark.parametrize("index", _indices())
def test_damaged_input_is_refused_or_read(ctx, index):
    case = campaign.make_case(ctx, SEED, index)
    record = campaign.run_one(ctx, case, baselines={})
    assert record["class"] in ("ok", "refused"), (
        f"{record['class']} ({record['reason']}) on {case.scenario}, {case.role} damaged by "
        f"{case.mutation}: {case.mutated.what}\n  {record['message'] or record['stderr_tail'][-300:]}\n"
        f"  replay: python -m tests.hostile --replay {case.id}")
    assert "part_file" not in record["flags"] and "output_left" not in record["flags"]


@pytest.mark.parametrize("scenario", list(campaign.SCENARIOS))
def test_clean_seeds_run_without_a_word(ctx, scenario, tmp_path):
    """The undamaged seeds are valid input: exit 0, nothing on stderr, both outputs written.
    (Otherwise every damaged case of the scenario would prove nothing.)"""
    argv = campaign.argv_for(ctx, scenario, tmp_path)
    (tmp_path / "out").mkdir()
    res = runner.run_case(argv, tmp_path, tmp_path / "out")
    assert res.exit == 0 and res.stderr.strip() == "", res.stderr[-500:]
    assert sorted(res.left_files)[-2:] == ["summary.json", "table.csv"]
