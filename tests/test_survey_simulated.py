"""Acceptance of `gnssrel survey` on the invented survey scenario (issue 15, "Invented scenario").

The scenario (`gnssrel simulate --survey`, gnssrel/simulate/survey.py) knows its station to 0.1 mm;
its precise clocks exclude the periodic and J2 terms, so a solution that applies every term (the
periodic one in its ICD form) must land on the truth, and switching a term off must move it by what
that term's range effect predicts over the log's geometry.

The predictions are derived here, not pasted: each term is evaluated on the scenario's true states
with the relativity stage's own formulas (gnssrel.relativity: periodic_icd_s, periodic_state_s,
j2_periodic_s on osculating elements, shapiro_m), and its range effect is projected by weighted
least squares onto the parameters of a float ionosphere-free phase solution (position; a receiver
clock per epoch; one ambiguity per arc; a zenith wet delay).  The estimator's own choices are not
known here, so the prediction is the envelope over plausible ones: uniform or sin^2(elevation)
weights; a constant, hourly or piecewise-linear (2-h nodes) wet delay; arcs that are whole passes
or arcs cut as a common-practice screen cuts them in the written log (geometry-free phase moving
> 4 cm between epochs, which the ionosphere does at low elevations; arcs < 20 min dropped).  It is
widened by 2 mm + 15 % (a first-order prediction of a float solution).  The periodic term's metres
are mostly absorbed by the float ambiguities, so its remainder depends on where the arcs are cut:
its envelope is wide, the others' are a few millimetres.

The command is called through its command line with the summary contract of the issue:
position {x_m, y_m, z_m, reference, east_m, north_m, up_m}, term_effects_mm {periodic, j2, shapiro,
periodic_state_form: {east, north, up}}, relativity_k_phase {G: {k, sigma}}.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from gnssrel.cli import JOBS
from gnssrel.constants import C_M_S, OMEGA_EARTH_IERS_RAD_S, SYSTEMS
from gnssrel.geodesy import ecef_to_geodetic, enu_rotation
from gnssrel.simulate import survey, truth
from gnssrel.simulate.scenario import FREQUENCY_HZ

pytestmark = [pytest.mark.skipif("survey" not in JOBS, reason="`gnssrel survey` (issue 15) does not exist yet"),
              pytest.mark.slow]   # a full-day log surveyed once (~10 s)

SEED, HOURS, SYSTEMS_USED = 20250611, 24.0, "G,E"
TERMS = ("periodic", "j2", "shapiro", "periodic_state_form")
EXTRA_TERMS = ("sagnac",)
"""Terms beyond the contract, checked when the summary gives them."""


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    from gnssrel.simulate.write_survey import write_survey

    out = tmp_path_factory.mktemp("survey_scenario")
    manifest = write_survey(out, seed=SEED, hours=HOURS)
    return out, manifest


@pytest.fixture(scope="module")
def summary(scenario, tmp_path_factory):
    from gnssrel.cli import main

    out, manifest = scenario
    path = {f["kind"]: out / f["path"] for f in manifest["files"]}
    target = tmp_path_factory.mktemp("survey_run") / "summary.json"
    argv = ["survey", str(path["observations"]), str(path["navigation"]), "--precise", str(path["sp3"]),
            str(path["clock"]), "--systems", SYSTEMS_USED, "--summary", str(target), "--quiet"]
    assert main(argv) in (0, None)
    return json.loads(target.read_text())


# ---------------------------------------------------------------- the prediction, derived here


def _terms_and_geometry(seed=SEED, hours=HOURS):
    """Range effects (m, (n_t, n_sat)) of leaving each term out of the model, and the geometry."""
    from gnssrel.orbits.frames import osculating_elements
    from gnssrel.relativity.clock_terms import j2_periodic_s, periodic_icd_s, periodic_state_s
    from gnssrel.relativity.signal_path import shapiro_m

    scn = survey.build_survey_scenario(seed, hours=hours)
    arp = survey.arp_receiver()
    g = survey.survey_geometry(scn, arp)
    t_tx = g["t_tx"]
    letter = np.array([s[0] for s in scn.sv])
    # True states at transmission (ECEF), velocity by a central difference over +-0.5 s.
    half = np.timedelta64(500, "ms")
    pos = truth.true_orbit(scn, t_tx)["position_ecef_m"]
    vel = truth.true_orbit(scn, t_tx + half)["position_ecef_m"] - truth.true_orbit(scn, t_tx - half)["position_ecef_m"]
    ref = scn.reference
    icd = np.stack([periodic_icd_s(ref["eccentricity"].to_numpy()[j], ref["sqrt_a_sqrt_m"].to_numpy()[j],
                                   g["eccentric_anomaly_rad"][:, j], letter[j]) for j in range(len(letter))], axis=1)
    state = periodic_state_s(pos, vel)
    omega = np.array([0.0, 0.0, OMEGA_EARTH_IERS_RAD_S])
    osc = osculating_elements(pos, vel + np.cross(omega, pos), SYSTEMS["G"].gm_m3_s2)
    j2 = j2_periodic_s(osc["semi_major_axis_m"], osc["inclination_rad"], osc["argument_of_latitude_rad"])
    x_arp = arp.site.position_ecef_m
    effects = {"periodic": -C_M_S * icd, "j2": -C_M_S * j2, "shapiro": shapiro_m(g["sat_rx_frame_m"], x_arp),
               "periodic_state_form": -C_M_S * (icd - state),
               # the Earth's rotation during the light time: the range to the satellite where it was
               # at transmission in the reception frame, minus the range to it in the transmission frame
               "sagnac": np.linalg.norm(g["sat_rx_frame_m"] - x_arp, axis=-1) - np.linalg.norm(pos - x_arp, axis=-1)}
    los = g["sat_rx_frame_m"] - x_arp
    los /= np.linalg.norm(los, axis=-1, keepdims=True)
    return scn, g, letter, los, effects


def _zwd_columns(epoch, wet, n_t, kind):
    """Zenith wet delay columns: one constant, hourly constants, or linear between 2-h nodes."""
    if kind == "constant":
        return wet[:, None]
    if kind == "hourly":
        block = epoch * 30 // 3600
        z = np.zeros((epoch.size, block.max() + 1))
        z[np.arange(epoch.size), block] = wet
        return z
    u = epoch * 30.0 / 7200.0
    j = np.floor(u).astype(int)
    z = np.zeros((epoch.size, j.max() + 2))
    z[np.arange(epoch.size), j] = wet * (1 - (u - j))
    z[np.arange(epoch.size), j + 1] += wet * (u - j)
    return z


def screened_arcs(obs_path, scn, min_epochs=40, jump_m=0.04) -> np.ndarray:
    """Arcs (n_t, n_sat; -1 unused) of GPS and Galileo as a common-practice screen cuts them from the
    written log: a new arc where the geometry-free phase moves by more than 4 cm between epochs,
    after a gap, or on a loss-of-lock flag; arcs shorter than 20 min dropped."""
    from gnssrel.io.rinex_obs import read_observations

    ds = read_observations(obs_path, systems="GE", with_flags=True)
    sv = [str(s) for s in ds["sv"].values]
    times = ds["time"].to_numpy()
    rows = np.searchsorted(scn.epochs, times)
    cols = [list(scn.sv).index(s) for s in sv]
    gf = np.full((len(scn.epochs), len(scn.sv)), np.nan)
    flag = np.zeros(gf.shape, bool)
    for k, s in enumerate(sv):
        second = "L2W" if s[0] == "G" else "L5Q"
        f1, f2 = (FREQUENCY_HZ[s[0]][b] for b in ("1", second[1]))
        gf[rows, cols[k]] = ds["L1C"].values[:, k] * C_M_S / f1 - ds[second].values[:, k] * C_M_S / f2
        flag[rows, cols[k]] = (np.nan_to_num(ds["L1Clli"].values[:, k]) > 0) | (np.nan_to_num(ds[second + "lli"].values[:, k]) > 0)
    seen = np.isfinite(gf)
    jump = np.zeros(seen.shape, bool)
    jump[1:] = ~(np.abs(np.diff(gf, axis=0)) <= jump_m) & seen[1:] & seen[:-1]
    start = seen & (~np.vstack([np.zeros((1, seen.shape[1]), bool), seen[:-1]]) | jump | flag)
    arcs = np.where(seen, np.cumsum(start, axis=0) - 1, -1)
    for j in range(arcs.shape[1]):
        ids, count = np.unique(arcs[:, j][arcs[:, j] >= 0], return_counts=True)
        for i in ids[count < min_epochs]:
            arcs[arcs[:, j] == i, j] = -1
    return arcs


def _centre(m, epoch, w):
    """The receiver clock per epoch, eliminated by weighted centring per epoch (Frisch-Waugh-Lovell)."""
    sw = np.bincount(epoch, w)
    means = np.stack([np.bincount(epoch, w * m[:, k]) for k in range(m.shape[1])], 1) / sw[:, None]
    return m - means[epoch]


def predicted_shifts_enu_mm(effects_m: dict, g, arc_sets, los) -> dict:
    """Envelope {term: (min, max)} per east/north/up, mm, of the coordinate change a float solution
    makes when the range effect ``effects_m[term]`` (n_t, n_sat) is left out of its model, over the
    arc sets ``arc_sets`` ((n_t, n_sat) arc numbers, -1 unused), weights and wet-delay models."""
    from gnssrel.simulate.niell import mapping

    lat, lon, _ = ecef_to_geodetic(survey.arp_receiver().site.position_ecef_m)
    rot = enu_rotation(lat, lon)
    names = list(effects_m)
    wet_all = mapping(g["el"], g["lat"], g["h"], 162.0)[1]
    out = []
    for arcs in arc_sets:
        rows = np.nonzero(arcs >= 0)
        epoch = rows[0]
        _, arc_col = np.unique(rows[1] * 100_000 + arcs[rows], return_inverse=True)
        ambiguity = np.zeros((epoch.size, arc_col.max() + 1))
        ambiguity[np.arange(epoch.size), arc_col] = 1.0
        partial = -(los[rows] @ rot.T)                       # d range / d (east, north, up)
        y = np.stack([effects_m[n][rows] for n in names], axis=1)
        for weight_kind in ("uniform", "sin2"):
            w = np.ones(epoch.size) if weight_kind == "uniform" else np.sin(g["el"][rows]) ** 2
            sq = np.sqrt(w)[:, None]
            for zwd in ("constant", "hourly", "2h-linear"):
                a = np.hstack([partial, ambiguity, _zwd_columns(epoch, wet_all[rows], len(g["el"]), zwd)])
                x, *_ = np.linalg.lstsq(_centre(a, epoch, w) * sq, _centre(y, epoch, w) * sq, rcond=None)
                out.append(x[:3].T * 1e3)                    # (n_terms, 3)
    out = np.array(out)
    return {n: (out[:, k].min(axis=0), out[:, k].max(axis=0)) for k, n in enumerate(names)}


@pytest.fixture(scope="module")
def predictions(scenario):
    out, manifest = scenario
    scn, g, letter, los, effects = _terms_and_geometry()
    whole = np.where(np.isin(letter, list(SYSTEMS_USED.replace(",", "")))[None, :],
                     survey.arcs_of(g["el"] >= np.radians(10.0)), -1)
    obs_path = next(out / f["path"] for f in manifest["files"] if f["kind"] == "observations")
    return predicted_shifts_enu_mm({n: effects[n] for n in TERMS + EXTRA_TERMS}, g,
                                   [whole, screened_arcs(obs_path, scn)], los)


# ---------------------------------------------------------------- the acceptance tests


def test_position_within_one_centimetre_of_the_truth(summary, scenario):
    _, manifest = scenario
    p = summary["position"]
    assert p["reference"] == "header"
    truth_m = np.array(manifest["survey"]["marker_ecef_m"])
    error = np.array([p["x_m"], p["y_m"], p["z_m"]]) - truth_m
    assert np.linalg.norm(error) < 0.01, f"3-D error {np.linalg.norm(error) * 1e3:.1f} mm"
    # east/north/up are the solution minus the header position (0.1 mm from the truth)
    header = np.array(manifest["survey"]["header_position_ecef_m"])
    lat, lon, _ = ecef_to_geodetic(header)
    enu = enu_rotation(lat, lon) @ (np.array([p["x_m"], p["y_m"], p["z_m"]]) - header)
    np.testing.assert_allclose([p["east_m"], p["north_m"], p["up_m"]], enu, atol=2e-4)


@pytest.mark.parametrize("term", TERMS + EXTRA_TERMS)
def test_switching_a_term_off_moves_the_point_as_its_size_predicts(summary, predictions, term):
    if term in EXTRA_TERMS and term not in summary["term_effects_mm"]:
        pytest.skip(f"the summary gives no {term} effect (beyond the contract)")
    low, high = predictions[term]
    got = summary["term_effects_mm"][term]
    measured = np.array([got["east"], got["north"], got["up"]])
    slack = 2.0 + 0.15 * np.maximum(np.abs(low), np.abs(high))
    assert np.all(measured >= low - slack) and np.all(measured <= high + slack), (
        f"{term}: measured E/N/U {measured.round(1)} mm, predicted {low.round(1)} .. {high.round(1)} mm")


def test_k_of_the_periodic_term_from_phase_is_one(summary):
    k = summary["relativity_k_phase"]["G"]
    assert k["sigma"] > 0
    # The truth has k = 1 exactly; the issue expects a few thousandths from phase.
    assert abs(k["k"] - 1.0) < max(3 * k["sigma"], 0.002) + 0.003


def test_igs_convention_products_need_the_state_form_and_no_j2_term(tmp_path):
    """Products of the "igs" convention (clocks exclude only -2 r.v/c^2, the J2 term stays in them,
    as an IGS analysis produces them): the truth is met by the state form without the J2 term, i.e.
    by the solution plus the effects of those two switches (the term effects are linear changes of
    one solution), and the other choice is visibly off (several cm on this geometry)."""
    from gnssrel.cli import main
    from gnssrel.simulate.write_survey import write_survey

    manifest = write_survey(tmp_path / "igs", seed=SEED, hours=HOURS, clock_convention="igs")
    path = {f["kind"]: tmp_path / "igs" / f["path"] for f in manifest["files"]}
    target = tmp_path / "summary.json"
    assert main(["survey", str(path["observations"]), str(path["navigation"]), "--precise", str(path["sp3"]),
                 str(path["clock"]), "--systems", SYSTEMS_USED, "--summary", str(target), "--quiet"]) in (0, None)
    s = json.loads(target.read_text())
    truth_m = np.array(manifest["survey"]["marker_ecef_m"])
    lat, lon, _ = ecef_to_geodetic(truth_m)
    p = s["position"]
    as_solved = enu_rotation(lat, lon) @ (np.array([p["x_m"], p["y_m"], p["z_m"]]) - truth_m) * 1e3
    e = s["term_effects_mm"]
    switched = as_solved + np.array([e["periodic_state_form"][k] + e["j2"][k] for k in ("east", "north", "up")])
    best, other = sorted((as_solved, switched), key=np.linalg.norm)
    assert np.linalg.norm(best) < 10.0 and np.linalg.norm(other) > 30.0, (as_solved.round(1), switched.round(1))
