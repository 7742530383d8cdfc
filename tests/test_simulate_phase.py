"""The survey scenario's carrier phase (gnssrel simulate --survey): what it carries, checked against
separately computed values.

* phase minus code is minus twice the ionosphere plus the ambiguity and wind-up (to the code noise),
  and the geometry-free phase carries minus the ionosphere to the phase noise (the first-order
  ionosphere advances phase and delays code by the same amount: common practice);
* the geometry-free combination jumps by exactly the cycle slips the manifest lists, and only there;
  the file's loss-of-lock digits are set on the flagged slips only (RINEX 3.04 5.7, bit 0);
* the wind-up equals an independent evaluation of the Wu et al. (1993) formula with the orbit
  stage's Sun and nominal attitude (gnssrel.orbits.antenna), up to whole cycles;
* the precise clock file excludes the periodic and J2 terms (the survey truth's convention);
* the header's ANTENNA: DELTA H/E/N is the manifest's ARP height and the ranges go to the ARP.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from gnssrel.constants import C_M_S
from gnssrel.simulate import survey, truth
from gnssrel.simulate.observe import group_delay_s
from gnssrel.simulate.propagation import L1_HZ
from gnssrel.simulate.scenario import FREQUENCY_HZ, SIGNALS

SEED, HOURS = 777, 4.0


@pytest.fixture(scope="module")
def sim():
    scn = survey.build_survey_scenario(SEED, hours=HOURS)
    return scn, survey.simulate_survey(scn, np.random.default_rng([SEED, 3]))


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    from gnssrel.simulate.write_survey import write_survey

    out = tmp_path_factory.mktemp("survey")
    manifest = write_survey(out, seed=SEED, hours=HOURS)
    return out, manifest


def _band(scn, band):
    letter = np.array([s[0] for s in scn.sv])
    freq = np.array([FREQUENCY_HZ[c][SIGNALS[c][band][0][1]] for c in letter])
    return letter, freq, C_M_S / freq


def _array(sim_out, kind, band, letter):
    """(n_t, n_sat) of code (0) or phase (1) of ``band``, each satellite under its system's code."""
    obs = sim_out["observables"]
    out = np.full(sim_out["visible"].shape, np.nan)
    for c in "GEC":
        m = letter == c
        out[:, m] = obs[SIGNALS[c][band][kind]][:, m]
    return out


def _ambiguity(sim_out, band, letter):
    out = np.full(sim_out["visible"].shape, np.nan)
    for c in "GEC":
        m = letter == c
        out[:, m] = sim_out["ambiguity_cycles"][SIGNALS[c][band][1]][:, m]
    return out


@pytest.mark.parametrize("band", [0, 1])
def test_phase_minus_code_is_twice_the_ionosphere_plus_the_ambiguity(sim, band):
    scn, out = sim
    letter, freq, lam = _band(scn, band)
    iono = out["ionosphere_l1_m"] * (L1_HZ / freq) ** 2
    phase_m = _array(out, 1, band, letter) * lam
    code_m = _array(out, 0, band, letter)
    expected = -2 * iono - C_M_S * group_delay_s(scn, letter, band) \
        + lam * (_ambiguity(out, band, letter) + out["windup_cycles"])
    residual = (phase_m - code_m - expected)[out["visible"]]
    assert residual.size > 1000
    # Code noise 0.3 m at zenith, 0.9 m at the horizon (survey.py): 5 sigma bound, and the mean of
    # thousands of values within 4 sigma / sqrt(n) (a missing 2I would leave metres).
    assert np.abs(residual).max() < 5 * 0.9
    assert abs(residual.mean()) < 4 * 0.9 / np.sqrt(residual.size)
    assert 0.25 < residual.std() < 0.9


def test_geometry_free_phase_carries_minus_the_ionosphere(sim):
    scn, out = sim
    letter, f1, lam1 = _band(scn, 0)
    _, f2, lam2 = _band(scn, 1)
    gf = _array(out, 1, 0, letter) * lam1 - _array(out, 1, 1, letter) * lam2
    amb = lam1 * (_ambiguity(out, 0, letter) + out["windup_cycles"]) \
        - lam2 * (_ambiguity(out, 1, letter) + out["windup_cycles"])
    iono_gf = out["ionosphere_l1_m"] * ((L1_HZ / f1) ** 2 - (L1_HZ / f2) ** 2)
    residual = (gf - amb + iono_gf)[out["visible"]]
    # phase noise 1.5-4.5 mm per signal (survey.PHASE_NOISE_M x3 at the horizon): 5 sigma of two
    assert np.abs(residual).max() < 5 * np.hypot(4.5e-3, 4.5e-3)
    assert residual.std() < 4e-3
    assert np.abs(iono_gf[out["visible"]]).max() > 0.5   # the ionosphere is there to be seen


def test_geometry_free_jumps_by_the_listed_slips_and_nowhere_else(sim):
    scn, out = sim
    assert len(out["slips"]) == len(survey.SLIPS)
    letter, _, lam1 = _band(scn, 0)
    _, _, lam2 = _band(scn, 1)
    gf = _array(out, 1, 0, letter) * lam1 - _array(out, 1, 1, letter) * lam2
    arcs = out["arcs"]
    step = np.diff(gf, axis=0)
    same_arc = (arcs[1:] == arcs[:-1]) & (arcs[1:] >= 0)
    sv = list(scn.sv)
    expected = np.zeros(step.shape)
    for slip in out["slips"]:
        j, i = sv.index(slip["sv"]), slip["epoch_index"]
        c = slip["sv"][0]
        d1, d2 = (slip["cycles"][SIGNALS[c][b][1]] for b in (0, 1))
        expected[i - 1, j] = lam1[j] * d1 - lam2[j] * d2
        # every listed slip is visible: in the geometry-free phase, or (12, 9 cycles on E1/E5a: 1 cm
        # there) in the Melbourne-Wuebbena wide lane, which moves by d1 - d2 wide-lane cycles
        assert abs(expected[i - 1, j]) > 0.1 or abs(d1 - d2) >= 2
    # Between epochs 30 s apart the ionosphere and wind-up move the geometry-free phase by < 1 cm;
    # the noise of a step is up to 2 x 4.5 mm (two signals, two epochs, near the horizon): 5 cm bound.
    np.testing.assert_allclose(step[same_arc], expected[same_arc], atol=0.05, rtol=0)
    assert np.std(step[same_arc] - expected[same_arc]) < 0.008   # 2 x (1.5-4.5 mm)


def test_loss_of_lock_flags_in_the_file_mark_the_flagged_slips_only(written):
    from gnssrel.io.rinex_obs import read_observations

    out, manifest = written
    obs_path = next(out / f["path"] for f in manifest["files"] if f["kind"] == "observations")
    ds = read_observations(obs_path, with_flags=True)
    assert ds.attrs["antenna_delta_hen_m"] == pytest.approx([survey.ARP_HEIGHT_M, 0.0, 0.0])
    np.testing.assert_allclose(ds.attrs["position"], manifest["survey"]["marker_ecef_m"], atol=1e-4)
    flagged = set()
    for code in ("L1C", "L2W", "L5Q"):
        lli = ds[code + "lli"].to_numpy()
        for i, j in zip(*np.nonzero(np.nan_to_num(lli) > 0)):
            flagged.add((str(ds["sv"].values[j]), str(ds["time"].values[i].astype("datetime64[s]"))))
    want = {(s["sv"], s["time"]) for s in manifest["survey"]["cycle_slips"] if s["loss_of_lock_flag"]}
    assert want and flagged == want
    assert any(not s["loss_of_lock_flag"] for s in manifest["survey"]["cycle_slips"])
    on_disk = json.loads((out / "scenario.json").read_text())
    assert on_disk["survey"]["cycle_slips"] == manifest["survey"]["cycle_slips"]


def _independent_windup(receiver_m, sat_m, t_gpst):
    """Wu et al. (1993) with gnssrel.orbits.antenna's Sun and attitude and geodesy's ENU axes."""
    from gnssrel.geodesy import ecef_to_geodetic, enu_rotation
    from gnssrel.orbits.antenna import body_axes, sun_position_ecef_m

    axes = body_axes(sat_m, sun_position_ecef_m(t_gpst))
    xs, ys = axes[..., 0, :], axes[..., 1, :]
    lat, lon, _ = ecef_to_geodetic(receiver_m)
    east, north, _up = enu_rotation(lat, lon)
    k = receiver_m - sat_m
    k /= np.linalg.norm(k, axis=-1, keepdims=True)
    d_s = xs - k * np.sum(k * xs, -1, keepdims=True) - np.cross(k, ys)
    d_r = north - k * np.sum(k * north, -1, keepdims=True) + np.cross(k, -east)
    cos = np.sum(d_s * d_r, -1) / np.linalg.norm(d_s, axis=-1) / np.linalg.norm(d_r, axis=-1)
    sign = np.sign(np.sum(k * np.cross(d_s, d_r), -1))
    return sign * np.arccos(np.clip(cos, -1, 1)) / (2 * np.pi)


def test_windup_matches_an_independent_evaluation(sim):
    _scn, out = sim
    g = out["geometry"]
    x_arp = out["receiver_arp"].site.position_ecef_m
    t = np.broadcast_to(g["t_rx_true"][:, None], g["el"].shape)
    other = _independent_windup(x_arp, g["sat_rx_frame_m"], t)
    vis = out["visible"]
    diff = (out["windup_cycles"] - other)[vis]
    frac = diff - np.round(diff)                       # whole cycles are the ambiguity's
    # The two Sun series differ by ~0.01 deg; away from orbit noon/midnight that is < 1e-4 cycle.
    assert np.quantile(np.abs(frac), 0.99) < 2e-3
    assert np.abs(frac).max() < 0.05
    seen = vis.any(axis=0)
    w = out["windup_cycles"][:, seen]
    assert np.nanmax(np.nanmax(w, axis=0) - np.nanmin(w, axis=0)) > 0.1                      # wind-up is really in the data


def test_precise_clocks_exclude_the_periodic_and_j2_terms(sim, written):
    from gnssrel.io.rinex_clock import read_rinex_clock

    scn, _out = sim
    folder, manifest = written
    clk_path = next(folder / f["path"] for f in manifest["files"] if f["kind"] == "clock")
    clk = read_rinex_clock(clk_path)
    t = clk["time"].to_numpy()[::40]
    sv = [str(s) for s in clk["sv"].values]
    values = clk.sel(time=t)[next(iter(clk.data_vars))].to_numpy()
    order = [list(scn.sv).index(s) for s in sv]
    g = {"t_tx": np.broadcast_to(t[:, None], (len(t), len(scn.sv))),
         "eccentric_anomaly_rad": truth.broadcast_orbit(scn, t)["eccentric_anomaly_rad"]}
    physical = survey.physical_clock_s(scn, g)
    periodic = truth.periodic_s(scn, g["eccentric_anomaly_rad"])
    j2 = survey.j2_clock_s(scn, g["t_tx"])
    assert np.abs(j2).max() > 5e-11                    # ~0.07 ns for GPS (Kouba 2004)
    datum = (values - (physical - periodic - j2)[:, order])
    # The product's datum is common to all satellites; 1e-12 s is the file's resolution.
    np.testing.assert_allclose(datum - datum[:, :1], 0.0, atol=2e-12)
    with_j2 = values - (physical - periodic)[:, order]
    assert np.abs(with_j2 - with_j2[:, :1]).max() > 5e-11


def test_simulate_survey_command_writes_a_reproducible_static_station(tmp_path):
    from gnssrel.cli import main

    first, second = tmp_path / "a", tmp_path / "b"
    for folder in (first, second):
        assert main(["simulate", "--survey", "--hours", "1", "--seed", "5", "--output", str(folder), "--quiet"]) in (0, None)
    manifest = json.loads((first / "scenario.json").read_text())
    kinds = sorted(f["kind"] for f in manifest["files"])
    assert kinds == ["clock", "manifest", "navigation", "observations", "sp3"]
    for f in manifest["files"]:
        assert (first / f["path"]).read_bytes() == (second / f["path"]).read_bytes(), f["path"]
    s = manifest["survey"]
    assert s["solid_earth_tide"] is True and s["antenna_delta_hen_m"] == [survey.ARP_HEIGHT_M, 0.0, 0.0]
    # the ARP is the marker raised along the ellipsoid normal by the antenna height
    assert np.linalg.norm(np.subtract(s["arp_ecef_m"], s["marker_ecef_m"])) == pytest.approx(survey.ARP_HEIGHT_M, abs=1e-9)
    assert manifest["products"]["precise_clock_convention"] == "excludes-periodic-and-j2"
    assert main(["simulate", "--survey", "--stations", "2", "--output", str(tmp_path / "c"), "--quiet"]) == 2


def test_tide_moves_the_ranges_and_no_tide_keeps_the_station_static():
    scn = survey.build_survey_scenario(SEED, hours=1.0)
    arp = survey.arp_receiver()
    moving, static = survey.survey_geometry(scn, arp), survey.survey_geometry(scn, arp, tide=False)
    assert not static["tide_ecef_m"].any()
    up = arp.site.position_ecef_m / np.linalg.norm(arp.site.position_ecef_m)
    # IERS 2010 eq. 7.5: the radial displacement reaches a few decimetres, never a metre (common knowledge)
    radial = moving["tide_ecef_m"] @ up
    assert 0.01 < np.abs(radial).max() < 0.5
    # the light time follows the displaced antenna: range change = -(tide . line of sight), to 1 mm
    los = static["sat_rx_frame_m"] - arp.site.position_ecef_m
    los /= np.linalg.norm(los, axis=-1, keepdims=True)
    change = C_M_S * (moving["tau_s"] - static["tau_s"])
    expected = -np.einsum("tsk,tk->ts", los, moving["tide_ecef_m"])
    np.testing.assert_allclose(change, expected, atol=1e-3)


def test_igs_convention_clocks_exclude_only_the_state_form(sim):
    from gnssrel.relativity.clock_terms import periodic_state_s

    scn, _out = sim
    t = scn.epochs[::20]
    e_anomaly = truth.broadcast_orbit(scn, t)["eccentric_anomaly_rad"]
    physical = truth.true_clock_s(scn, t, e_anomaly) + survey.j2_clock_s(scn, t)
    second = np.timedelta64(1, "s")
    r = truth.true_orbit(scn, t)["position_ecef_m"]
    v = (truth.true_orbit(scn, t + second)["position_ecef_m"] - truth.true_orbit(scn, t - second)["position_ecef_m"]) / 2
    datum = survey.igs_precise_clock_s(scn, t) - (physical - periodic_state_s(r, v))
    np.testing.assert_allclose(datum - datum[:, :1], 0.0, atol=1e-14)   # 3 micrometres of range
    # and they differ from the default products by the J2 term plus the ICD-minus-state difference
    gap = survey.igs_precise_clock_s(scn, t) - truth.precise_clock_s(scn, t)
    assert 5e-11 < np.abs(gap).max() < 5e-10
