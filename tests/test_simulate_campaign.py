"""`gnssrel simulate --stations N --days D`: the invented campaign (issue 11's invented test data).

Checked: same seed, same bytes; campaign.csv lists every file and each exists; each log reads
and covers its day; each day's navigation and precise files cover its logs; about half the
receivers faulty, the fault recorded; and `gnssrel audit` of one faulty and one correct
station-day finds what scenario.json says (as tests/test_demo.py does for the demo).
"""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest

import gnssrel
from gnssrel.cli import main
from gnssrel.simulate.campaign import MAX_STATIONS, campaign_receivers, write_campaign

SEED, STATIONS, DAYS, HOURS = 424243, 3, 2, 1.0
COLUMNS = ["station", "day", "obs", "nav", "precise", "fixes", "clocks"]


@pytest.fixture(scope="module")
def campaign(tmp_path_factory):
    out = tmp_path_factory.mktemp("campaign")
    manifest = write_campaign(out, STATIONS, DAYS, seed=SEED, hours=HOURS)
    with open(out / "campaign.csv", newline="") as f:
        rows = list(csv.DictReader(f))
    return out, manifest, rows


def _files(folder):
    return {p.relative_to(folder).as_posix() for p in folder.rglob("*") if p.is_file()}


def test_same_seed_gives_byte_identical_campaigns(campaign, tmp_path):
    out, _, _ = campaign
    write_campaign(tmp_path / "again", STATIONS, DAYS, seed=SEED, hours=HOURS)
    assert _files(tmp_path / "again") == _files(out)
    for name in _files(out):
        assert (tmp_path / "again" / name).read_bytes() == (out / name).read_bytes(), name
    write_campaign(tmp_path / "other", 1, 1, seed=SEED + 1, hours=HOURS)
    obs = "2025-162/KVRP00ZZZ_R_20251621000_01H_30S_MO.rnx"
    assert (tmp_path / "other" / obs).read_bytes() != (out / obs).read_bytes()


def test_a_station_day_does_not_depend_on_the_campaign_size(campaign, tmp_path):
    """Each station-day has its own noise generator (seed, day, station): a smaller campaign
    holds the same bytes for the station-days it shares."""
    out, _, _ = campaign
    write_campaign(tmp_path, 2, 1, seed=SEED, hours=HOURS)
    shared = _files(tmp_path) - {"campaign.csv", "scenario.json"}
    assert len(shared) == 3 + 2 * 3            # nav, SP3, CLK; obs, fixes, clocks of KVRP and SLMB
    for name in shared:
        assert (tmp_path / name).read_bytes() == (out / name).read_bytes(), name


def test_manifest_lists_every_file_and_each_exists(campaign):
    out, manifest, rows = campaign
    assert (out / "campaign.csv").read_text().splitlines()[0] == ",".join(COLUMNS)
    assert len(rows) == STATIONS * DAYS
    assert {(r["station"], r["day"]) for r in rows} == {
        (f"{m}00ZZZ", d) for m in ("KVRP", "SLMB", "TWHL") for d in ("2025-06-11", "2025-06-12")}
    listed = {p for r in rows for c in COLUMNS[2:] for p in r[c].split(";")}
    assert all((out / p).is_file() for p in listed)
    assert listed | {"campaign.csv", "scenario.json"} == _files(out)
    assert {f["path"] for f in manifest["files"]} == _files(out)
    assert json.loads((out / "scenario.json").read_text())["files"] == manifest["files"]
    for r in rows:   # RINEX long names: station, year, day of year; precise = SP3 then clock
        doy = (np.datetime64(r["day"]) - np.datetime64("2025-01-01")).astype(int) + 1
        assert r["obs"] == f"2025-{doy:03d}/{r['station']}_R_2025{doy:03d}1000_01H_30S_MO.rnx"
        sp3, clk = r["precise"].split(";")
        assert sp3.endswith("_ORB.SP3") and clk.endswith("_CLK.CLK")


def test_each_log_reads_and_covers_its_day(campaign):
    out, manifest, rows = campaign
    for r in rows:
        ds = gnssrel.read_observations(out / r["obs"])
        t = ds.time.values
        day = np.datetime64(r["day"], "ns")
        # 10:00-10:59:30 GPST of that day, every 30 s (the campaign's 1 h logs)
        assert t[0] == day + np.timedelta64(10, "h") and len(t) == HOURS * 120
        assert (np.diff(t) == np.timedelta64(30, "s")).all()
        assert ds.attrs["marker_name"] == r["station"][:4]
        assert ds.attrs["accounting"]["epochs"]["-"] == {"read": 120, "used": 120}
        assert ds.sizes["sv"] >= 12                  # three systems above a 10-degree mask
        truth = next(s for s in manifest["sites"] if s["marker"] == r["station"][:4])
        np.testing.assert_allclose(ds.attrs["position"], truth["position_ecef_m"], atol=1e-3)


def test_navigation_and_precise_files_cover_each_day(campaign):
    out, manifest, rows = campaign
    satellites = {c: set(v["satellites"]) for c, v in manifest["systems"].items()}
    for r in {r["day"]: r for r in rows}.values():
        first = np.datetime64(r["day"], "ns") + np.timedelta64(10, "h")
        last = first + np.timedelta64(3570, "s")
        nav = gnssrel.read_navigation(out / r["nav"])
        for c, table in nav.ephemerides.items():
            assert set(table.sv) == satellites[c]
            # a record at or before the first epoch and one at or after the last, per satellite
            toc = table.groupby("sv")["toc"]
            assert (toc.min() <= first).all() and (toc.max() >= last).all(), c
        sp3_path, clk_path = r["precise"].split(";")
        sp3 = gnssrel.read_sp3(out / sp3_path)
        assert sp3.time.values[0] <= first - np.timedelta64(90, "m")
        assert sp3.time.values[-1] >= last + np.timedelta64(90, "m")
        clk = gnssrel.read_rinex_clock(out / clk_path)
        assert clk.time.values[0] <= first and clk.time.values[-1] >= last


def test_days_continue_one_orbit(campaign):
    """One reference orbit for the whole campaign: day 2's navigation records continue day 1's
    (same elements re-expressed), so a satellite's sqrt(A) and eccentricity do not change."""
    out, _, rows = campaign
    navs = [gnssrel.read_navigation(out / r["nav"]) for r in {r["day"]: r for r in rows}.values()]
    g1, g2 = (n.ephemerides["G"].set_index(["sv", "toc"]) for n in navs)
    assert g1.index.intersection(g2.index).empty
    for col in ("sqrt_a_sqrt_m", "eccentricity"):
        a = g1.groupby("sv")[col].first()
        np.testing.assert_allclose(g2.groupby("sv")[col].first()[a.index], a, rtol=1e-12)
    # Day 2's broadcast clocks agree with day 2's precise clocks, once the product's datum (common
    # to all satellites) is removed, to the truth's smooth ~0.5 ns error (sample_logs/README.md):
    # the clock polynomial keeps its one reference epoch on day 1.  Re-referenced to day 2 they
    # would differ by af1 x 1 day (~0.5 us; derived).
    row = next(r for r in rows if r["day"] == "2025-06-12")
    clk = gnssrel.read_rinex_clock(out / row["precise"].split(";")[1])
    t = clk.time.values[0]
    g = navs[1].ephemerides["G"]
    g = g[g.toc <= t].groupby("sv").last()
    broadcast = g.clock_bias_s + g.clock_drift_s_per_s * (t - g.toc.to_numpy()).astype("int64") / 1e9
    precise = clk.clock_s.sel(time=t, sv=list(g.index)).values
    diff = broadcast.to_numpy() - precise
    assert np.abs(diff - np.median(diff)).max() < 2e-9


def test_about_half_the_receivers_are_faulty_and_the_fault_is_recorded(campaign):
    out, _, _ = campaign
    for n in range(1, MAX_STATIONS + 1):
        modes = [r.periodic_term_mode for r in campaign_receivers(SEED, n)]
        assert modes.count("omitted") == n // 2 and modes.count("applied") == n - n // 2
    truth = json.loads((out / "scenario.json").read_text())
    assert truth["faulty_receivers"] == ["SLMB"] and truth["correct_receivers"] == ["KVRP", "TWHL"]
    assert truth["generator"]["stations"] == STATIONS and truth["generator"]["days"] == DAYS
    for r in truth["receivers"]:
        if r["faulty"]:
            assert r["fault"]["mode"] == "omitted" and r["firmware"] == "4.3.0-beta"
            assert r["expected"]["position_hypothesis"] == "omitted"
        else:
            assert r["fault"] is None and r["firmware"] == "4.2.1"
    # The firmware's own fixes: under a metre (median) when correct; leaving out periodic terms of up to
    # c F e sqrt(A) = 13.7 m (GPS e <= 0.02, IS-GPS-200 20.3.3.3.3.1) moves them by metres (derived; here
    # 4.9-7.5 m over 1 h): 2.5 m, three times a correct receiver's median, separates the two
    for sd in truth["station_days"]:
        assert (sd["fix_error_3d_m"]["median"] > 2.5) is sd["faulty"], sd


@pytest.mark.parametrize("marker", ["SLMB", "TWHL"])
def test_audit_of_a_station_day_finds_the_recorded_firmware(campaign, marker, tmp_path, capsys):
    out, manifest, rows = campaign
    row = next(r for r in rows if r["station"] == f"{marker}00ZZZ" and r["day"] == "2025-06-12")
    truth = next(r for r in manifest["receivers"] if r["marker"] == marker)
    summary_path = tmp_path / "summary.json"
    assert main(["audit", str(out / row["obs"]), str(out / row["nav"]), "--systems", "GE",
                 "--receiver-fixes", str(out / row["fixes"]), "--receiver-clocks", str(out / row["clocks"]),
                 "--summary", str(summary_path), "-q"]) == 0
    assert capsys.readouterr().err == ""
    found = json.loads(summary_path.read_text())
    expected = truth["expected"]
    assert found["receiver_fixes"]["closest"] == expected["position_hypothesis"]
    assert found["receiver_fixes"]["margin_m"] > 2.0     # metres: a decision, not a coin toss
    assert found["receiver_clocks"]["by_system"]["G"]["convention"] == expected["clock_convention"]
    k = found["relativity_k"]["G"]
    # the raw pseudoranges carry the true clocks for every receiver (sample_logs/README.md)
    assert abs(k["k"] - expected["observations_relativity_k"]) < max(3 * k["sigma"], 0.05), k


def test_command_line_writes_a_campaign_and_refuses_bad_sizes(tmp_path, capsys):
    assert main(["simulate", "--output", str(tmp_path / "c"), "--stations", "2", "--seed", str(SEED)]) == 0
    printed = capsys.readouterr().out
    assert "2 stations x 1 days = 2 station-days" in printed and "faulty firmware (periodic term omitted): SLMB" \
        in printed
    assert (tmp_path / "c" / "campaign.csv").read_text().count("\n") == 3
    for bad in (["--stations", "0"], ["--stations", str(MAX_STATIONS + 1)], ["--days", "0"],
                ["--days", "2", "--hours", "25"]):
        assert main(["simulate", "--output", str(tmp_path / "bad"), *bad]) == 2
        err = capsys.readouterr().err.strip()
        assert len(err.splitlines()) == 1 and err.startswith("gnssrel simulate: error:"), err
        assert not (tmp_path / "bad").exists()
