"""An invented low-cost receiver: one frequency, a wandering clock, weak signals, its own filter.

``gnssrel simulate --receiver low-cost`` writes the scenario's navigation file and precise
products as usual, and two invented single-frequency modules side by side on a roof (a correct
and a faulty firmware) instead of the geodetic receivers.  Every choice below is invented but
of the size such modules show:

* signals: GPS L1 C/A (C1C), Galileo E1 (C1C), BeiDou B1I (C2I), code, phase and C/N0 (S1C, S2I);
* receiver clock: milliseconds off, drifting ~1e-7 s/s, with one 1 ms step (the module keeps its
  clock within reach of system time by whole milliseconds); code and phase both follow it;
* C/N0 = 22 + 18 sin(el) dB-Hz + a per-satellite offset (sigma 2 dB) + noise (sigma 1 dB);
  code noise sigma = 0.5 m x 10^((40 - C/N0) / 20) (a delay-lock loop's jitter goes as
  1/sqrt(C/N0); 0.5 m at 40 dB-Hz for a 1-chip C/A correlator: common practice);
* multipath: A(el) sin(2 pi t / P + phi) with A = 3 m exp(-el / 12 deg), P 2-10 min per satellite;
  on phase one hundredth of it;
* gross outliers: :data:`N_OUTLIERS` code measurements off by 35-120 m (which ones: the manifest);
* fixes: the firmware of :mod:`gnssrel.simulate.firmware` (per-epoch least squares, its own
  treatment of the periodic term) on the code without the outliers (its own integrity check
  caught them), then an alpha-beta filter on position (time constant :data:`FILTER_TIME_S`),
  as receivers smooth what they report; the clock bias and drift from the same kind of filter
  on its clock estimate (restarted at its own clock step).

The truth of each receiver (clock, step, outliers, firmware mode) goes to scenario.json.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from gnssrel.constants import C_M_S
from gnssrel.geodesy import ecef_to_geodetic
from gnssrel.simulate.firmware import firmware_fixes
from gnssrel.simulate.observe import (
    ELEVATION_MASK_RAD,
    common_range_m,
    geometry,
    group_delay_s,
    ionosphere_l1_m,
    receiver_clock_s,
)
from gnssrel.simulate.propagation import L1_HZ
from gnssrel.simulate.scenario import FREQUENCY_HZ, LEAP_SECONDS, Receiver, Site
from gnssrel.simulate.write_clock_series import write_clock_series
from gnssrel.simulate.write_nmea import write_gga
from gnssrel.simulate.write_obs import write_observations

SIGNALS = {"G": ("C1C", "L1C", "S1C"), "E": ("C1C", "L1C", "S1C"), "C": ("C2I", "L2I", "S2I")}
"""One frequency per system: (code, phase, C/N0) RINEX 3 codes."""
CN0_DBHZ = (22.0, 18.0, 2.0, 1.0)
"""C/N0 = a + b sin(el) + per-satellite offset (sigma) + per-epoch noise (sigma), dB-Hz."""
CODE_SIGMA_40_DBHZ_M = 0.5
MULTIPATH_M = 3.0
MULTIPATH_SCALE_DEG = 12.0
MULTIPATH_PERIOD_S = (120.0, 600.0)
PHASE_NOISE_M = 0.003
N_OUTLIERS = 4
OUTLIER_M = (35.0, 120.0)
FILTER_TIME_S = 8.0
"""Time constant of the receiver's position and clock filters (alpha = 1 - exp(-dt / T))."""
DEFAULT_HOURS = 0.5
DEFAULT_INTERVAL_S = 1.0
ROOF = Site("KVHR", "Kelvarre harbour office roof, Skerrish Coast", -38.21862, -27.52617, 23.40, 17.85)


@dataclass(frozen=True)
class LowCostReceiver(Receiver):
    """A low-cost module: a :class:`gnssrel.simulate.scenario.Receiver` with its clock steps."""

    clock_steps_s: tuple = field(default=())   # ((seconds after the start, step s), ...)


def low_cost_receivers(scn, faulty_mode: str = "doubled") -> list[LowCostReceiver]:
    """The two modules of the roof: correct firmware (KVLA) and one that treats the periodic
    term per ``faulty_mode`` (KVLB); each steps its clock by 1 ms once in the log."""
    span = scn.hours * 3600.0
    return [
        LowCostReceiver("KVLA", ROOF, "TERNWAVE TN-1 NANO", "1.8.2", "TN1A00311", "TNP-PATCH",
                        clock_offset_s=-3.9e-3, clock_drift_s_per_s=-1.2e-7,
                        inter_system_bias_s={"G": 0.0, "E": 2.1e-9, "C": -14.8e-9},
                        periodic_term_mode="applied", clock_steps_s=((round(0.4 * span), 1.0e-3),)),
        LowCostReceiver("KVLB", ROOF, "TERNWAVE TN-1 NANO", "1.9.0-rc1", "TN1A00544", "TNP-PATCH",
                        clock_offset_s=2.2e-3, clock_drift_s_per_s=0.8e-7,
                        inter_system_bias_s={"G": 0.0, "E": -3.4e-9, "C": 11.2e-9},
                        periodic_term_mode=faulty_mode, clock_steps_s=((round(0.65 * span), -1.0e-3),)),
    ]


def simulate_low_cost(scn, rcv, rng: np.random.Generator) -> dict:
    """Single-frequency observables (n_t, n_sat) keyed by RINEX code, NaN below the mask, with
    the geometry, the visibility and the outliers put in (list of (epoch index, sv, metres))."""
    g = geometry(scn, rcv)
    letter = np.array([s[0] for s in scn.sv])
    n_t, n_sat = g["el"].shape
    visible = g["el"] >= ELEVATION_MASK_RAD
    common_m = common_range_m(scn, rcv, g, letter)
    freq = np.array([FREQUENCY_HZ[c][SIGNALS[c][0][1]] for c in letter])
    iono = ionosphere_l1_m(scn, g) * (L1_HZ / freq) ** 2
    el_deg = np.degrees(g["el"])
    a, b, sat_sigma, epoch_sigma = CN0_DBHZ
    cn0 = a + b * np.sin(g["el"]) + rng.normal(0, sat_sigma, n_sat) + rng.normal(0, epoch_sigma, (n_t, n_sat))
    cn0 = np.round(cn0, 1)
    sigma = CODE_SIGMA_40_DBHZ_M * 10 ** ((40.0 - cn0) / 20.0)
    t_s = (scn.epochs - scn.start).astype("timedelta64[ns]").astype(float)[:, None] / 1e9
    period = rng.uniform(*MULTIPATH_PERIOD_S, n_sat)
    multipath = MULTIPATH_M * np.exp(-el_deg / MULTIPATH_SCALE_DEG) \
        * np.sin(2 * np.pi * t_s / period + rng.uniform(0, 2 * np.pi, n_sat))
    code = common_m + C_M_S * group_delay_s(scn, letter, 0) + iono + multipath + sigma * rng.standard_normal((n_t, n_sat))
    outliers = []
    # An outlier on the only satellite of its system in an epoch is invisible to any per-epoch
    # residual test (that system's clock offset absorbs it): the invented outliers go on
    # satellites whose system has at least three satellites in view at that epoch.
    in_view = np.stack([np.sum(visible & (letter == c)[None, :], axis=1) for c in "GEC"], axis=1)
    company = in_view[:, np.array(["GEC".index(c) for c in letter])]      # (n_t, n_sat)
    candidates = np.argwhere(visible & (el_deg > 20.0) & (company >= 3))
    for k in rng.choice(len(candidates), size=min(N_OUTLIERS, len(candidates)), replace=False):
        i, j = candidates[k]
        error = float(rng.choice([-1.0, 1.0]) * rng.uniform(*OUTLIER_M))
        code[i, j] += error
        outliers.append((int(i), str(scn.sv[j]), round(error, 3)))
    ambiguity = rng.integers(-500_000, 500_000, n_sat)
    phase = (common_m - iono + multipath / 100 + PHASE_NOISE_M * rng.standard_normal((n_t, n_sat))) \
        / (C_M_S / freq) + ambiguity
    obs = {}
    for values, index in ((code, 0), (phase, 1), (cn0, 2)):
        for c in "GEC":
            arr = obs.setdefault(SIGNALS[c][index], np.full((n_t, n_sat), np.nan))
            m = visible & (letter == c)[None, :]
            arr[m] = values[m]
    return {"observables": obs, "geometry": g, "visible": visible, "outliers": outliers}


def alpha_beta(values: np.ndarray, dt_s: float, restart=None, rate_from_start: bool = False
               ) -> tuple[np.ndarray, np.ndarray]:
    """Alpha-beta filter along axis 0 of ``values`` (n_t, k): (filtered values, rates per second).
    alpha = 1 - exp(-dt / :data:`FILTER_TIME_S`), beta = alpha^2 / (2 - alpha) (Benedict-Bordner
    pairing; common practice).  NaN inputs: prediction only.  ``restart`` (n_t,) bool: take the
    measurement as it is there (keep the rate), as after a clock step.  ``rate_from_start``: the
    first rate is the first difference (a clock's drift); else 0 (a receiver at rest)."""
    alpha = 1.0 - np.exp(-dt_s / FILTER_TIME_S)
    beta = alpha**2 / (2.0 - alpha)
    x = np.full(values.shape, np.nan)
    v = np.zeros(values.shape)
    state, rate = None, np.zeros(values.shape[1])
    restart = np.zeros(values.shape[0], bool) if restart is None else restart
    started = not rate_from_start
    for i, z in enumerate(values):
        if state is None or restart[i]:
            if np.all(np.isfinite(z)):
                state = z.copy()
        elif not started and np.all(np.isfinite(z)):
            state, rate, started = z.copy(), (z - state) / dt_s, True
        else:
            predicted = state + rate * dt_s
            if np.all(np.isfinite(z)):
                r = z - predicted
                state, rate = predicted + alpha * r, rate + beta / dt_s * r
            else:
                state = predicted
        if state is not None:
            x[i], v[i] = state, rate
    return x, v


def firmware_outputs(scn, rcv, sim) -> dict:
    """The module's own fixes (filtered ECEF, n_used, HDOP) and clock series (bias ns, drift ns/s)."""
    clean = {k: v.copy() for k, v in sim["observables"].items()}
    index = {s: j for j, s in enumerate(scn.sv)}
    for i, sv, _ in sim["outliers"]:            # the firmware's own integrity check removed them
        clean[SIGNALS[sv[0]][0]][i, index[sv]] = np.nan
    fix = firmware_fixes(scn, rcv, {**sim, "observables": clean})
    position, _ = alpha_beta(fix["position_ecef_m"], scn.interval_s)
    since = (scn.epochs - scn.start).astype("timedelta64[s]").astype(float)
    restart = np.zeros(since.size, bool)
    for at, _ in rcv.clock_steps_s:
        k = np.searchsorted(since, at)
        restart[k:k + 1] = True
    bias_m, drift_m_s = alpha_beta(fix["system_clock_m"][:, :1], scn.interval_s, restart, rate_from_start=True)
    return {"position_ecef_m": position, "n_used": fix["n_used"], "hdop": fix["hdop"],
            "clock_bias_ns": bias_m[:, 0] / C_M_S * 1e9, "clock_drift_ns_per_s": drift_m_s[:, 0] / C_M_S * 1e9}


def file_names(rcv, observation_name: str) -> dict:
    return {f"{rcv.marker}:observations": observation_name, f"{rcv.marker}:fixes": f"{rcv.marker}_fixes.nmea",
            f"{rcv.marker}:receiver_clock": f"{rcv.marker}_receiver_clock.csv"}


def write_low_cost_receiver(out, scn, rcv, names: dict, header: dict, rng: np.random.Generator) -> dict:
    """Write one module's observation log, fixes and clock series; returns its manifest entry.
    ``header``: the observation header fields common to the scenario (program, run_by, date, ...)."""
    sim = simulate_low_cost(scn, rcv, rng)
    write_observations(out / names[f"{rcv.marker}:observations"], scn.epochs, list(scn.sv), sim["observables"],
                       {c: list(SIGNALS[c]) for c in "GEC"}, {
                           **header, "comments": [*header.get("comments", ()), f"Site: {rcv.site.place}",
                                                  "Single-frequency low-cost module (invented)"],
                           "marker": rcv.marker, "marker_number": f"{rcv.marker}-0001",
                           "receiver_serial": rcv.serial, "receiver_type": rcv.receiver_type,
                           "receiver_version": rcv.firmware, "antenna_serial": "TNP-" + rcv.serial[-4:],
                           "antenna_type": rcv.antenna_type, "position_ecef_m": rcv.site.position_ecef_m})
    own = firmware_outputs(scn, rcv, sim)
    lat, lon, h = ecef_to_geodetic(own["position_ecef_m"])
    write_gga(out / names[f"{rcv.marker}:fixes"], scn.epochs - np.timedelta64(LEAP_SECONDS, "s"),
              np.degrees(lat), np.degrees(lon), h, rcv.site.geoid_separation_m, own["n_used"], own["hdop"])
    write_clock_series(out / names[f"{rcv.marker}:receiver_clock"], scn.epochs, own["clock_bias_ns"],
                       own["clock_drift_ns_per_s"], comments=[
                           (f"Receiver clock of {rcv.marker} ({rcv.receiver_type}, firmware {rcv.firmware}), "
                            "INVENTED DEMO DATA"),
                           ("clock_bias_ns: receiver clock minus GPST, ns; clock_drift_ns_per_s: its rate, "
                            "both from the receiver's own clock filter")])
    true_clock_ns = receiver_clock_s(scn, rcv, scn.epochs) * 1e9
    err3d = np.linalg.norm(own["position_ecef_m"] - rcv.site.position_ecef_m, axis=1)
    mode = rcv.periodic_term_mode
    return {
        "marker": rcv.marker, "site": rcv.site.marker, "receiver_type": rcv.receiver_type,
        "firmware": rcv.firmware, "serial": rcv.serial, "antenna_type": rcv.antenna_type, "kind": "low-cost",
        "periodic_term": mode, "faulty": mode != "applied",
        "fault": None if mode == "applied" else {
            "term": "periodic", "mode": mode, "where": ["fixes", "receiver_clock"],
            "description": f"firmware's periodic term: {mode} (F e sqrtA sinE times "
                           f"{ {'omitted': 0, 'doubled': 2, 'reversed': -1}.get(mode, '?') }), "
                           "so its fixes and its clock estimate follow that hypothesis"},
        "expected": {"position_hypothesis": mode, "receiver_clock_hypothesis": mode,
                     "observations_relativity_k": 1.0},
        "signals": {c: SIGNALS[c][0] for c in "GEC"},
        "clock_offset_s": rcv.clock_offset_s, "clock_drift_s_per_s": rcv.clock_drift_s_per_s,
        "clock_steps": [{"time": str((scn.start + np.timedelta64(int(at), "s")).astype("datetime64[s]")),
                         "step_s": step} for at, step in rcv.clock_steps_s],
        "inter_system_bias_s": rcv.inter_system_bias_s,
        "outliers": [{"time": str(scn.epochs[i].astype("datetime64[s]")), "sv": sv, "error_m": e}
                     for i, sv, e in sim["outliers"]],
        "clock_bias_error_ns": {"median": float(np.median(own["clock_bias_ns"] - true_clock_ns))},
        "fix_error_3d_m": {"median": float(np.median(err3d)), "max": float(err3d.max())},
        "files": {k.split(":")[1]: names[k] for k in names if k.startswith(rcv.marker + ":")},
    }


MODELS = {
    "signals": "single frequency: GPS L1 C/A (C1C), Galileo E1 (C1C), BeiDou B1I (C2I); code, phase, C/N0",
    "cn0": "22 + 18 sin(el) dB-Hz + per-satellite offset (sigma 2 dB) + noise (sigma 1 dB)",
    "code_noise": "0.5 m x 10^((40 - C/N0)/20)",
    "multipath": "3 m exp(-el/12 deg) sin(2 pi t/P + phi), P 2-10 min per satellite",
    "receiver_clock": "milliseconds off, ~1e-7 s/s drift, one 1 ms step (clock_steps)",
    "outliers": f"{N_OUTLIERS} code measurements per receiver off by 35-120 m (outliers)",
    "fixes": "per-epoch least squares without the outliers, then an alpha-beta filter, time constant "
             f"{FILTER_TIME_S:g} s",
    "receiver_clock_series": "the firmware's clock estimate through the same filter, restarted at its step",
}
