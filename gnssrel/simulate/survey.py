"""The survey scenario: one static geodetic station whose carrier phase carries every term.

A permanent pillar (invented) logs dual-frequency code and phase for 6-24 h at 30 s, so that a
float precise-point solution converges to millimetres and each relativistic term's effect on the
coordinates can be seen against a truth known to 0.1 mm.  What its observations carry, per
satellite s and signal b (ranges in metres, phase Phi_b = lambda_b L_b):

    P_b   = R + c d_b + I_b + e_b
    Phi_b = R - I_b + lambda_b (N_b + w / (2 pi)) + eps_b
    R     = c tau + c (dt_rcv + isb - dt_sat) + T + S

* tau: light time from the satellite's true centre of mass at transmission to the antenna
  reference point (ARP) at reception, with the Earth's rotation (Sagnac) (propagation.light_time);
* dt_sat: the physical satellite clock = broadcast polynomial + smooth error + the periodic term
  in the form F e sqrt(A) sin E of the broadcast elements + the J2 term
  -(3/2) J2 (a_E^2/(a c^2)) sqrt(GM/a) sin^2 i sin 2u (Kouba 2004; u, i the broadcast orbit's
  corrected argument of latitude and inclination, GM, J2, a_E of IERS 2010).  The precise SP3/CLK
  written with it exclude both relativistic terms (truth.precise_clock_s; convention
  "excludes-periodic-and-j2", the default): as IGS products exclude the periodic term, the user
  adds it back, and here the user adds the J2 term too.  So a solution that applies the periodic
  term in its ICD form and the J2 term meets the truth exactly; the state form -2 r.v/c^2 differs
  from the ICD form on these orbits (the harmonic corrections of the broadcast elements) by up to
  a few hundredths of a nanosecond.  Convention "igs" (:func:`igs_precise_clock_s`) writes what an
  IGS analysis produces instead: it models only -2 r.v/c^2 (on its orbits), so its clocks keep the
  J2 term and the ICD-minus-state difference (Kouba 2004 found the J2 term absorbed in IGS clocks;
  from memory), and the user who meets the truth applies the state form and no J2 term;
* T: Saastamoinen zenith delays of a standard atmosphere with 60 % humidity (an estimator's
  a priori with 50 % is off by ~2 cm of zenith wet delay, which it must estimate), mapped with
  Niell (1996) (:mod:`gnssrel.simulate.niell`); constant over the log;
* S: Shapiro delay (IERS 2010 eq. 11.17, gamma = 1); I_b: Klobuchar on L1 scaled (f_L1/f_b)^2,
  code delayed, phase advanced; d_b: broadcast group delays as in :mod:`gnssrel.simulate.observe`;
* N_b: an integer ambiguity per continuous arc (drawn at random), changed by the cycle slips
  listed in the manifest (some flagged with the loss-of-lock bit, some not);
* w: phase wind-up (Wu et al. 1993, nominal yaw attitude; :mod:`gnssrel.simulate.windup`);
* e_b, eps_b: white noise, 0.3 m and 1.5 mm at the zenith, growing to 3x at the horizon.

The station moves with the solid-Earth tide (IERS 2010 eq. 7.5, step 1, nominal h2/l2, permanent
part kept: the marker coordinates are conventional tide free; :mod:`gnssrel.simulate.tides`), which
an estimator that models the tide removes; the light time is solved to the displaced ARP
(``tide=False``, ``gnssrel simulate --survey --no-tide``: a static station, for an estimator without it).
Not modelled: ocean loading, pole tide, receiver antenna phase-centre offsets and variations (the antenna's phase centre is its ARP),
satellite antenna offsets (the orbits are the phase centre), multipath.  The marker position is
the truth; the ARP is ``ARP_HEIGHT_M`` above it along the ellipsoid normal and the header's
ANTENNA: DELTA H/E/N says so.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from gnssrel.constants import A_EARTH_IERS_M, C_M_S, GM_EARTH_IERS_M3_S2, J2_IERS
from gnssrel.simulate import niell, tides, truth
from gnssrel.simulate.observe import (
    CODE_NOISE_M,
    ELEVATION_MASK_RAD,
    group_delay_s,
    ionosphere_l1_m,
    receiver_clock_s,
)
from gnssrel.simulate.propagation import L1_HZ, light_time, receiver_view, shapiro_m, zenith_delays_m
from gnssrel.simulate.scenario import FREQUENCY_HZ, SIGNALS, Receiver, Site, build_scenario
from gnssrel.simulate.windup import sun_ecef_m, windup_cycles

SURVEY_START_GPST = np.datetime64("2025-06-11T00:00:00", "ns")
SURVEY_HOURS = 24.0
SITE = Site("SKRW", "Skerrish Ridge pillar, Skerrish Coast", -38.137021, -27.415836, 63.4182, 17.70)
ARP_HEIGHT_M = 0.1835
RECEIVER = Receiver("SKRW", SITE, "TERNWAVE TW-830", "5.0.2", "TW8300112", "TWA-60CR",
                    clock_offset_s=-4.7e-8, clock_drift_s_per_s=2.0e-12,
                    inter_system_bias_s={"G": 0.0, "E": 2.3e-9, "C": -7.9e-9},
                    periodic_term_mode="applied")
RELATIVE_HUMIDITY = 0.6
PHASE_NOISE_M = 0.0015
MIN_SLIP_ARC_EPOCHS = 120
SLIPS = ((5, 0, True), (-2, 3, False), (0, 7, False), (12, 9, True))
"""(cycles on the first signal, cycles on the second, loss-of-lock flag written) of each slip."""


def build_survey_scenario(seed: int, hours: float = SURVEY_HOURS, interval_s: float = 30.0,
                          start=SURVEY_START_GPST):
    """The demo constellation and products around one static station (the survey pillar)."""
    scn = build_scenario(seed=seed, start=start, hours=hours, interval_s=interval_s)
    scn.sites, scn.receivers = [SITE], [RECEIVER]
    return scn


def arp_receiver(rcv: Receiver = RECEIVER) -> Receiver:
    """The receiver placed at its antenna reference point (ARP_HEIGHT_M above the marker)."""
    s = rcv.site
    return dataclasses.replace(rcv, site=dataclasses.replace(s, height_m=s.height_m + ARP_HEIGHT_M))


def survey_geometry(scn, arp: Receiver, tide: bool = True) -> dict:
    """Light-time geometry (as :func:`gnssrel.simulate.observe.geometry`) to the ARP displaced by the
    solid-Earth tide at each reception time (``tide=False``: a static ARP); adds ``tide_ecef_m`` (n_t, 3)."""
    x_r = arp.site.position_ecef_m
    t_rx_true = scn.epochs - np.round(receiver_clock_s(scn, arp, scn.epochs) * 1e9).astype("timedelta64[ns]")
    tide = tides.displacement_m(x_r, t_rx_true) if tide else np.zeros((len(t_rx_true), 3))
    t_tx, tau, sat = light_time(lambda t: truth.true_orbit(scn, t)["position_ecef_m"], (x_r + tide)[:, None, :],
                                t_rx_true)
    az, el, lat, lon, h = receiver_view(x_r, sat)   # directions: the tide turns them by < 1e-7 rad
    return {"t_rx_true": t_rx_true, "t_tx": t_tx, "tau_s": tau, "sat_rx_frame_m": sat,
            "eccentric_anomaly_rad": truth.true_orbit(scn, t_tx)["eccentric_anomaly_rad"],
            "az": az, "el": el, "lat": lat, "lon": lon, "h": h, "tide_ecef_m": tide}


def j2_clock_s(scn, t_tx) -> np.ndarray:
    """The J2 periodic clock term (n_t, n_sat), s, on the broadcast orbit at transmission."""
    orbit = truth.broadcast_orbit(scn, t_tx)
    a = scn.reference["sqrt_a_sqrt_m"].to_numpy() ** 2
    coefficient = -1.5 * J2_IERS * A_EARTH_IERS_M**2 / (a * C_M_S**2) * np.sqrt(GM_EARTH_IERS_M3_S2 / a)
    return coefficient * np.sin(orbit["inclination_rad"]) ** 2 * np.sin(2 * orbit["argument_of_latitude_rad"])


def state_periodic_s(scn, t) -> np.ndarray:
    """-2 r.v/c^2 (n_t, n_sat), s, of the true orbit at GPST times ``t`` (velocity by a central
    difference over +-0.5 s; r.v is the same with the Earth-fixed velocity)."""
    half = np.timedelta64(500, "ms")
    t = np.asarray(t, dtype="datetime64[ns]")
    r = truth.true_orbit(scn, t)["position_ecef_m"]
    v = truth.true_orbit(scn, t + half)["position_ecef_m"] - truth.true_orbit(scn, t - half)["position_ecef_m"]
    return -2.0 * np.einsum("...i,...i->...", r, v) / C_M_S**2


def igs_precise_clock_s(scn, t) -> np.ndarray:
    """Product clocks of the "igs" convention: the physical clock minus -2 r.v/c^2 only, on the
    products' datum (so the J2 term and the ICD-minus-state difference stay in them)."""
    e_anomaly = truth.broadcast_orbit(scn, t)["eccentric_anomaly_rad"]
    return truth.precise_clock_s(scn, t) + truth.periodic_s(scn, e_anomaly) + j2_clock_s(scn, t) \
        - state_periodic_s(scn, t)


CLOCK_CONVENTIONS = {
    "excludes-periodic-and-j2": (truth.precise_clock_s, (
        "CLOCKS EXCLUDE THE PERIODIC (ICD FORM) AND J2 RELATIVISTIC TERMS",
        "SATELLITE CLOCKS EXCLUDE THE PERIODIC (ICD FORM) AND J2 TERMS")),
    "igs": (igs_precise_clock_s, (
        "CLOCKS EXCLUDE ONLY -2 R.V/C^2 (AS AN IGS ANALYSIS MODELS IT)",
        "SATELLITE CLOCKS EXCLUDE ONLY -2 R.V/C^2 (IGS PRACTICE)")),
}
"""Product clock conventions of the survey scenario: (clock function, SP3 and clock-file comments)."""


def physical_clock_s(scn, g) -> np.ndarray:
    """The satellite clock the signals carry: true clock (periodic term in ICD form) + J2 term."""
    return truth.true_clock_s(scn, g["t_tx"], g["eccentric_anomaly_rad"]) + j2_clock_s(scn, g["t_tx"])


def day_of_year(t) -> np.ndarray:
    t = np.asarray(t, dtype="datetime64[ns]")
    year_start = t.astype("datetime64[Y]").astype("datetime64[ns]")
    return 1.0 + (t - year_start).astype("int64") / 86_400e9


def troposphere_m(g, t) -> np.ndarray:
    """Slant delay (n_t, n_sat), m: Saastamoinen zenith delays mapped with Niell."""
    zhd, zwd = zenith_delays_m(g["lat"], g["h"], RELATIVE_HUMIDITY)
    hydro, wet = niell.mapping(g["el"], g["lat"], g["h"], day_of_year(t)[:, None])
    return zhd * hydro + zwd * wet


def arcs_of(visible: np.ndarray) -> np.ndarray:
    """Arc number (n_t, n_sat) of each observed epoch, counting per satellite from 0; -1 elsewhere."""
    rising = visible & ~np.vstack([np.zeros((1, visible.shape[1]), bool), visible[:-1]])
    return np.where(visible, np.cumsum(rising, axis=0) - 1, -1)


def _choose_slips(arcs: np.ndarray, sv, times, rng) -> list[dict]:
    """Slips in the middle of long arcs, one per arc, on distinct satellites."""
    candidates = []
    for j in range(arcs.shape[1]):
        for arc in np.unique(arcs[:, j][arcs[:, j] >= 0]):
            rows = np.flatnonzero(arcs[:, j] == arc)
            if len(rows) >= MIN_SLIP_ARC_EPOCHS and sv[j][0] in "GE":
                candidates.append((j, rows))
    picks = rng.permutation(len(candidates))
    out, used = [], set()
    for k in picks:
        j, rows = candidates[k]
        if j in used or len(out) == len(SLIPS):
            continue
        used.add(j)
        d1, d2, flagged = SLIPS[len(out)]
        i = int(rows[len(rows) // 3 + rng.integers(0, len(rows) // 3)])
        out.append({"sv": str(sv[j]), "epoch_index": i, "time": str(times[i].astype("datetime64[s]")),
                    "cycles": {SIGNALS[sv[j][0]][0][1]: d1, SIGNALS[sv[j][0]][1][1]: d2},
                    "loss_of_lock_flag": flagged, "column": j})
    return sorted(out, key=lambda s: (s["epoch_index"], s["sv"]))


def simulate_survey(scn, rng: np.random.Generator, rcv: Receiver = RECEIVER, tide: bool = True) -> dict:
    """Observables (n_t, n_sat) keyed by RINEX code (NaN below the mask), their loss-of-lock flags,
    and every component the observations were built from (for the manifest and the tests)."""
    arp = arp_receiver(rcv)
    g = survey_geometry(scn, arp, tide)
    sv = scn.sv
    letter = np.array([s[0] for s in sv])
    visible = g["el"] >= ELEVATION_MASK_RAD
    arcs = arcs_of(visible)
    x_arp = arp.site.position_ecef_m
    dt_sat = physical_clock_s(scn, g)
    isb = np.array([rcv.inter_system_bias_s[c] for c in letter])
    rcv_clock = receiver_clock_s(scn, rcv, scn.epochs)[:, None]
    common = C_M_S * g["tau_s"] + C_M_S * (rcv_clock + isb - dt_sat) + troposphere_m(g, scn.epochs) \
        + shapiro_m(x_arp, g["sat_rx_frame_m"])
    iono_l1 = ionosphere_l1_m(scn, g)
    windup = windup_cycles(x_arp, g["lat"], g["lon"], g["sat_rx_frame_m"], sun_ecef_m(g["t_rx_true"])[:, None, :],
                           arcs)
    slips = _choose_slips(arcs, sv, scn.epochs, rng)
    growth = 1.0 + 2.0 * np.exp(-np.degrees(g["el"]) / 15.0)
    snr = 33.0 + 18.0 * np.sin(g["el"])
    obs, lli, ambiguity = {}, {}, {}
    for band in (0, 1):
        freq = np.array([FREQUENCY_HZ[c][SIGNALS[c][band][0][1]] for c in letter])
        wavelength = C_M_S / freq
        iono = iono_l1 * (L1_HZ / freq) ** 2
        n_cycles = np.zeros(common.shape)
        for j in range(len(sv)):
            arc_ids = np.unique(arcs[:, j][arcs[:, j] >= 0])
            for arc in arc_ids:
                n_cycles[arcs[:, j] == arc, j] = rng.integers(-200_000, 200_000)
        flags = np.zeros(common.shape, int)
        for s in slips:
            j, i = s["column"], s["epoch_index"]
            same_arc = arcs[:, j] == arcs[i, j]
            same_arc[:i] = False
            n_cycles[same_arc, j] += s["cycles"][SIGNALS[sv[j][0]][band][1]]
            flags[i, j] = 1 if s["loss_of_lock_flag"] else 0
        code = common + C_M_S * group_delay_s(scn, letter, band) + iono \
            + CODE_NOISE_M * growth * rng.standard_normal(common.shape)
        phase = (common - iono + PHASE_NOISE_M * growth * rng.standard_normal(common.shape)) / wavelength \
            + n_cycles + windup
        strength = np.round((snr - 4.0 * band + rng.normal(0, 0.8, snr.shape)) * 4) / 4
        for c in "GEC":
            m = visible & (letter == c)[None, :]
            for kind, values in zip((0, 1, 2), (code, phase, strength)):
                arr = obs.setdefault(SIGNALS[c][band][kind], np.full(common.shape, np.nan))
                arr[m] = values[m]
            lli.setdefault(SIGNALS[c][band][1], np.zeros(common.shape, int))[m] = flags[m]
            ambiguity.setdefault(SIGNALS[c][band][1], np.full(common.shape, np.nan))[m] = n_cycles[m]
    return {"observables": obs, "lli": lli, "geometry": g, "visible": visible, "arcs": arcs,
            "ambiguity_cycles": ambiguity, "windup_cycles": windup, "ionosphere_l1_m": iono_l1,
            "slips": [{k: v for k, v in s.items() if k != "column"} for s in slips],
            "receiver_arp": arp}
