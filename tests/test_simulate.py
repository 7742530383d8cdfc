"""The invented demo scenario: reproducible, re-read by the project's readers (and georinex),
and physically consistent (what the pseudoranges, fixes and clock tables contain)."""

from __future__ import annotations

import importlib.util
import json

import numpy as np
import pytest
from conftest import ONE_MILLIMETRE, ONE_NANOSECOND, ONE_PICOSECOND, SAMPLE_LOGS

from gnssrel.constants import C_M_S, OMEGA_EARTH_IERS_RAD_S
from gnssrel.simulate import truth
from gnssrel.simulate.generate import file_names, write_scenario
from gnssrel.simulate.propagation import rotate_z, shapiro_m, troposphere_m
from gnssrel.simulate.scenario import FREQUENCY_HZ, build_scenario
from gnssrel.simulate.write_nmea import checksum

HOURS, SEED = 1.0, 424242


def _has(module: str) -> bool:
    try:
        return importlib.util.find_spec(module) is not None
    except ModuleNotFoundError:
        return False


@pytest.fixture(scope="module")
def scenario_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("scenario")
    manifest = write_scenario(out, seed=SEED, hours=HOURS)
    scn = build_scenario(seed=SEED, hours=HOURS)
    return out, manifest, scn, file_names(scn)


def test_same_seed_gives_byte_identical_files(scenario_dir, tmp_path):
    out, manifest, _, _ = scenario_dir
    write_scenario(tmp_path, seed=SEED, hours=HOURS)
    for entry in manifest["files"]:
        assert (tmp_path / entry["path"]).read_bytes() == (out / entry["path"]).read_bytes(), entry["path"]
    other = tmp_path / "other"
    write_scenario(other, seed=SEED + 1, hours=HOURS)
    obs = next(e["path"] for e in manifest["files"] if e["kind"] == "observations")
    assert (other / obs).read_bytes() != (out / obs).read_bytes()


def test_manifest_names_the_faulty_receiver_and_lists_existing_files(scenario_dir):
    out, _manifest, _, _ = scenario_dir
    on_disk = json.loads((out / "scenario.json").read_text())
    assert on_disk["faulty_receivers"] == ["SLMB"] and on_disk["correct_receivers"] == ["KVRP"]
    fault = {r["marker"]: r["fault"] for r in on_disk["receivers"]}
    assert fault["KVRP"] is None and fault["SLMB"]["mode"] == "omitted"
    assert all((out / e["path"]).is_file() for e in on_disk["files"])
    assert on_disk["generator"]["seed"] == SEED and on_disk["generator"]["hours"] == HOURS


@pytest.mark.skipif(not _has("gnssrel.io.rinex_nav"), reason="navigation reader not present")
def test_navigation_file_reread_reproduces_the_broadcast_orbit(scenario_dir):
    from gnssrel.io.rinex_nav import read_navigation
    from gnssrel.simulate.kepler import kepler_positions

    out, _, scn, names = scenario_dir
    nav = read_navigation(out / names["navigation"])
    assert nav.header["ionosphere"]["GPSA"] == pytest.approx([1.2107e-08, 7.4506e-09, -5.9605e-08, -5.9605e-08])
    t = scn.epochs[::40]
    expected = truth.broadcast_orbit(scn, t)["position_ecef_m"]
    sv = list(scn.sv)
    for letter, table in nav.ephemerides.items():
        # Nearest record per satellite and epoch, as a user would pick it.
        for k, ti in enumerate(t):
            dt = np.abs((table["toe"].to_numpy() - ti).astype("int64"))
            best = table.assign(dt=dt).sort_values("dt").drop_duplicates("sv")
            el = {c: best[c].to_numpy() for c in best.columns}
            pos = kepler_positions(el, np.array([ti]))["position_ecef_m"][0]
            idx = [sv.index(s) for s in best["sv"]]
            # 13 significant digits in the file: below a millimetre (derived).
            np.testing.assert_allclose(pos, expected[k, idx], atol=ONE_MILLIMETRE, rtol=0)
        assert set(table["sv"]) == {s for s in sv if s[0] == letter}
    gps = nav.ephemerides["G"]
    assert (np.diff(gps[gps.sv == "G01"]["toc"].to_numpy()).astype("int64") == 7200 * 10**9).all()
    assert set(nav.ephemerides["E"]["nav_type"]) == {"FNAV"}


@pytest.mark.skipif(not _has("georinex"), reason="georinex not installed")
def test_georinex_reads_navigation_and_observations(scenario_dir):
    import warnings

    import georinex

    out, _, scn, names = scenario_dir
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        nav = georinex.load(out / names["navigation"], use="G")
        obs = georinex.load(out / names["KVRP:observations"])
    ref = scn.reference.set_index("sv")
    np.testing.assert_allclose(nav["sqrtA"].sel(sv="G01").dropna("time").values,
                               ref.loc["G01", "sqrt_a_sqrt_m"], rtol=1e-12)
    assert set(obs.data_vars) >= {"C1C", "L1C", "S1C", "C2W", "C5Q", "C2I", "C6I", "L6I"}
    np.testing.assert_allclose(obs.position, scn.receivers[0].site.position_ecef_m, atol=1e-4)
    assert obs.time.size == int(HOURS * 120)


@pytest.mark.skipif(not _has("gnssrel.io.sp3"), reason="SP3 reader not present")
def test_sp3_reread_matches_the_truth_and_differs_realistically_from_broadcast(scenario_dir):
    from gnssrel.io.sp3 import read_sp3

    out, _, scn, names = scenario_dir
    sp3 = read_sp3(out / names["sp3"])
    t = sp3.time.values
    assert t[0] <= scn.start - np.timedelta64(90, "m") and t[-1] >= scn.end + np.timedelta64(90, "m")
    ds = sp3.sel(sv=list(scn.sv))
    np.testing.assert_allclose(ds.position_ecef_m.values, truth.true_orbit(scn, t)["position_ecef_m"],
                               atol=ONE_MILLIMETRE)  # SP3 keeps 1 mm
    np.testing.assert_allclose(ds.clock_s.values, truth.precise_clock_s(scn, t), atol=ONE_PICOSECOND)
    # Broadcast vs precise: decimetres (common practice: broadcast orbits good to about a metre;
    # MSH2015 GPS SISRE 0.7 m, published) but not identical.
    diff = ds.position_ecef_m.values - truth.broadcast_orbit(scn, t)["position_ecef_m"]
    rms3d = np.sqrt(np.mean(np.sum(diff**2, axis=-1)))
    assert 0.1 < rms3d < 1.5


@pytest.mark.skipif(not _has("gnssrel.io.rinex_clock"), reason="RINEX clock reader not present")
def test_clock_file_reread_excludes_the_periodic_term(scenario_dir):
    from gnssrel.io.rinex_clock import read_rinex_clock

    out, _, scn, names = scenario_dir
    clk = read_rinex_clock(out / names["clock"])
    t = clk.time.values
    assert np.diff(t).astype("int64").max() == 30 * 10**9
    values = clk.clock_s.sel(sv=list(scn.sv)).values
    np.testing.assert_allclose(values, truth.precise_clock_s(scn, t), atol=ONE_PICOSECOND)
    # precise - broadcast polynomial after removing the per-epoch datum: sub-ns, with no
    # periodic term left in it (its largest amplitude here is about 100 ns; derived).
    resid = values - truth.clock_polynomial_s(scn, t)
    resid -= np.median(resid, axis=1, keepdims=True)
    assert np.std(resid, axis=0).max() < 1 * ONE_NANOSECOND


def _gps_ionosphere_free(observed_l1_m, observed_l2_m):
    gamma = (FREQUENCY_HZ["G"]["1"] / FREQUENCY_HZ["G"]["2"]) ** 2
    return (gamma * observed_l1_m - observed_l2_m) / (gamma - 1.0)


def test_pseudoranges_carry_sagnac_and_the_periodic_term_of_the_true_clock(scenario_dir):
    """Independent check on the written file: ionosphere-free GPS code minus an independently
    computed model leaves -c dtr, with dtr = -2 r.v/c^2 from finite differences of the true
    orbit (REFERENCE-CHECKS.md 1.3: equal to F e sqrtA sinE for a Kepler orbit; D)."""
    from gnssrel.simulate.observe import receiver_clock_s

    out, _, scn, names = scenario_dir
    rcv = scn.receivers[0]
    text = (out / names["KVRP:observations"]).read_text().splitlines()
    obs = _parse_gps_c1_c2(text)
    sv = list(scn.sv)
    x_r = rcv.site.position_ecef_m
    epochs = scn.epochs
    t_rx = epochs - np.round(receiver_clock_s(scn, rcv, epochs) * 1e9).astype("timedelta64[ns]")
    k_list, resid_list, sagnac_list = [], [], []
    for (i, s), (c1, c2) in obs.items():
        j = sv.index(s)
        tau = 0.075
        for _ in range(5):
            t_tx = np.array([t_rx[i] - np.timedelta64(int(tau * 1e9), "ns")])
            p = truth.true_orbit(scn, t_tx)["position_ecef_m"][0, j]
            sat = rotate_z(p, OMEGA_EARTH_IERS_RAD_S * tau)
            tau = np.linalg.norm(sat - x_r) / C_M_S
        h = np.timedelta64(500, "ms")
        pm, pp = (truth.true_orbit(scn, t_tx + d)["position_ecef_m"][0, j] for d in (-h, h))
        dtr = -2.0 * np.dot(p, pp - pm) / C_M_S**2            # -2 r.v / c^2 (ECEF; D)
        el = np.arcsin(np.dot(sat - x_r, x_r / np.linalg.norm(x_r)) / np.linalg.norm(sat - x_r))
        clock = truth.clock_polynomial_s(scn, t_tx)[0, j] + truth.clock_error_s(scn, t_tx)[0, j]
        model = C_M_S * tau + C_M_S * (receiver_clock_s(scn, rcv, epochs[i:i + 1])[0] - clock) \
            + troposphere_m(rcv.site.lat_deg, rcv.site.height_m, el) + shapiro_m(x_r, sat)
        k_list.append(-C_M_S * dtr)
        resid_list.append(_gps_ionosphere_free(c1, c2) - model)
        sagnac_list.append(np.linalg.norm(p - x_r) - np.linalg.norm(sat - x_r))
    a, r = np.array(k_list), np.array(resid_list)
    k = np.dot(a, r) / np.dot(a, a)
    assert k == pytest.approx(1.0, abs=0.03)
    assert np.std(r - a) < 1.5                       # ~0.3 m noise x 3 (iono-free) + elevation
    assert np.max(np.abs(sagnac_list)) > 5.0          # Sagnac tens of metres at low elevation (D)


def _parse_gps_c1_c2(lines):
    """(epoch index, sv) -> (C1C, C2W) read from the observation file's own columns."""
    out, epoch = {}, -1
    body = lines[lines.index(next(l for l in lines if "END OF HEADER" in l)) + 1:]
    for line in body:
        if line.startswith(">"):
            epoch += 1
        elif line.startswith("G") and epoch % 20 == 0:
            # GPS order C1C L1C S1C C2W L2W S2W: 16 columns per observable after A3.
            c1, c2 = line[3:17], line[3 + 48:17 + 48]
            if c1.strip() and c2.strip():
                out[(epoch, line[:3])] = (float(c1), float(c2))
    return out


def test_fixes_have_valid_checksums_and_show_the_firmware_fault(scenario_dir):
    out, manifest, scn, names = scenario_dir
    errors = {}
    for rcv in scn.receivers:
        lines = (out / names[f"{rcv.marker}:fixes"]).read_text().splitlines()
        gga = [l for l in lines if l[3:6] == "GGA"]
        assert len(gga) == int(HOURS * 120)
        for l in lines:
            body, cs = l[1:].split("*")
            assert cs == checksum(body)
        # UTC = GPST - 18 s (leap seconds in 2025; REFERENCE-CHECKS.md 1.6, M)
        assert gga[0].split(",")[1] == "095942.00"
        errors[rcv.marker] = next(r for r in manifest["receivers"] if r["marker"] == rcv.marker)["fix_error_3d_m"]
    # A correct single-point fix from 0.3 m code noise: a metre or two (common practice);
    # leaving out a periodic term of up to ~100 ns (30 m of range) moves the fix by tens of metres.
    assert errors["KVRP"]["median"] < 2.0
    assert errors["SLMB"]["median"] > 5.0


def test_receiver_clock_tables_apply_or_omit_the_periodic_term(scenario_dir):
    import pandas as pd

    out, _, scn, names = scenario_dir
    for rcv, expected_k in zip(scn.receivers, (1.0, 0.0)):
        df = pd.read_csv(out / names[f"{rcv.marker}:satellite_clocks"], comment="#")
        assert list(df.columns) == ["time", "time_scale", "sv", "clock_correction_s", "flags"]
        assert set(df.time_scale) == {"GPST"}
        # Against the broadcast polynomial at the epoch: what is left is k x periodic term,
        # up to the ~70 ms between epoch and transmission (af1 x 0.07 s < 1e-12 s; derived).
        t = pd.to_datetime(df.time).to_numpy().astype("datetime64[ns]")
        j = np.searchsorted(np.sort(scn.sv), df.sv)  # sv order of the scenario is not sorted
        order = np.argsort(scn.sv)
        cols = order[j]
        poly = truth.clock_polynomial_s(scn, t)[np.arange(len(t)), cols]
        E = truth.broadcast_orbit(scn, t)["eccentric_anomaly_rad"][np.arange(len(t)), cols]
        periodic = truth.periodic_s(scn, np.tile(E[:, None], (1, len(scn.sv))))[np.arange(len(t)), cols]
        left = df.clock_correction_s.to_numpy() - poly
        np.testing.assert_allclose(left, expected_k * periodic, atol=0.01 * ONE_NANOSECOND)


def test_committed_sample_logs_are_what_the_simulator_writes(tmp_path):
    manifest_path = SAMPLE_LOGS / "scenario.json"
    if not manifest_path.exists():
        pytest.skip("sample_logs/ not generated yet")
    committed = json.loads(manifest_path.read_text())
    gen = committed["generator"]
    manifest = write_scenario(tmp_path, seed=gen["seed"], hours=gen["hours"], interval_s=gen["interval_s"])
    for entry in manifest["files"]:
        if entry["kind"] == "manifest":
            continue  # carries the version number
        assert (tmp_path / entry["path"]).read_bytes() == (SAMPLE_LOGS / entry["path"]).read_bytes(), \
            f"sample_logs/{entry['path']} is stale: rerun `gnssrel simulate --output sample_logs`"
    size = sum(p.stat().st_size for p in SAMPLE_LOGS.iterdir())
    assert size < 3.2e6


def test_eccentricities_look_like_the_real_constellations():
    # issue 12: the demo's orbits must give the magnitudes a user meets on real data.  Ranges (from memory,
    # common knowledge of the constellations): GPS e up to ~0.02, Galileo 0.0002-0.001 (E14/E18 aside),
    # BeiDou MEO/IGSO 0.001-0.005.
    ref = build_scenario().reference.set_index("sv")
    e = ref["eccentricity"]
    gps, gal, bds = (e[e.index.str[0] == s] for s in "GEC")
    assert gps.max() == pytest.approx(0.02) and gps.idxmax() == "G15" and gps.min() >= 0.002
    assert gal.between(0.0002, 0.001).all() and bds.between(0.001, 0.005).all()
    # The largest periodic term: amplitude 2 sqrt(mu a) e / c^2 = -F e sqrt(A) (IS-GPS-200 20.3.3.3.3.1,
    # F = -2 sqrt(mu) / c^2 = -4.442807633e-10 s/m^0.5): 45.8 ns for G15, 13.7 m of range
    mu = 3.986005e14
    amplitude_s = 2 * np.sqrt(mu * ref.loc["G15", "sqrt_a_sqrt_m"] ** 2) * 0.02 / C_M_S ** 2
    assert amplitude_s == pytest.approx(45.8e-9, abs=0.1e-9)
    nav_path = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"
    from gnssrel.io.rinex_nav import read_navigation

    g15 = read_navigation(nav_path).ephemerides["G"].query("sv == 'G15'")
    assert g15["eccentricity"].iloc[0] == pytest.approx(0.02, abs=1e-9)
    assert 4.442807633e-10 * (g15["eccentricity"] * g15["sqrt_a_sqrt_m"]).iloc[0] == \
        pytest.approx(amplitude_s, rel=1e-6)
