"""Observables at a receiver, built from the truth: what its RINEX observation file holds.

Code (m), per signal s:
    P_s = c tau + c (dt_rcv + b_sys - dt_sat) + c d_s + I_s + T + S + noise
Phase (cycles):
    L_s = (c tau + c (dt_rcv + b_sys - dt_sat) - I_s + T + S) / lambda_s + N_s + noise
with tau the light time including Earth rotation (Sagnac), dt_sat the TRUE satellite clock at
transmission (periodic term included), d_s the group delay of signal s as the broadcast
message defines it (IS-GPS-200 20.3.3.3.3.2: L1 +TGD, L2 +gamma TGD; Galileo OS SIS ICD
5.1.5: E1 +BGD(E1,E5a), E5a +(f1/f5a)^2 BGD; BDS-SIS-ICD-B1I 5.2.4.10: B1I +TGD1, B3I 0),
I_s = Klobuchar L1 delay (f_L1/f_s)^2, T the troposphere and S the Shapiro delay.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import C_M_S
from gnssrel.simulate import tides, truth
from gnssrel.simulate.propagation import (
    L1_HZ,
    klobuchar_l1_s,
    light_time,
    receiver_view,
    shapiro_m,
    troposphere_m,
)
from gnssrel.simulate.scenario import FREQUENCY_HZ, KLOBUCHAR_ALPHA, KLOBUCHAR_BETA, SIGNALS
from gnssrel.timescales import seconds_between, to_week_seconds

ELEVATION_MASK_RAD = np.radians(10.0)
CODE_NOISE_M = 0.3
PHASE_NOISE_M = 0.002


def receiver_clock_s(scn, rcv, t_gpst) -> np.ndarray:
    """Receiver clock offset (s) at GPST times: offset + drift since the scenario start, plus the
    receiver's clock steps (``clock_steps_s``: (seconds after the start, step s) pairs; none for
    the geodetic receivers; a low-cost one resets by 1 ms, :mod:`gnssrel.simulate.lowcost`)."""
    since = seconds_between(t_gpst, scn.start)
    steps = sum(step * (since >= at) for at, step in getattr(rcv, "clock_steps_s", ()))
    return rcv.clock_offset_s + rcv.clock_drift_s_per_s * since + steps


def group_delay_s(scn, letter_per_sat: np.ndarray, band_index: int) -> np.ndarray:
    """Code group delay of the first (0) or second (1) observed signal per satellite, s."""
    c = scn.clock
    out = np.zeros(len(letter_per_sat))
    for letter, (f1, f2) in (("G", ("1", "2")), ("E", ("1", "5")), ("C", ("2", "6"))):
        m = letter_per_sat == letter
        ratio = (FREQUENCY_HZ[letter][f1] / FREQUENCY_HZ[letter][f2]) ** 2
        if letter == "G":
            d = c["tgd_s"].to_numpy() * (1.0 if band_index == 0 else ratio)
        elif letter == "E":
            d = c["bgd_e5a_e1_s"].to_numpy() * (1.0 if band_index == 0 else ratio)
        else:
            d = c["tgd1_b1_b3_s"].to_numpy() * (1.0 if band_index == 0 else 0.0)
        out[m] = d[m]
    return out


def geometry(scn, rcv, position_of=truth.true_orbit):
    """Light-time geometry of every satellite at every epoch of a receiver.

    The antenna moves with the solid-Earth tide (:func:`gnssrel.simulate.tides.displacement_m`,
    up to ~0.3 m) about the site's conventional (tide-free) coordinates, as a real one does; the
    directions are taken from the site (the tide turns them by < 1e-7 rad).

    Returns a dict of (n_t, n_sat) arrays: t_tx, tau_s, az, el, plus ``sat_rx_frame_m``
    (n_t, n_sat, 3) and the eccentric anomaly at transmission.
    """
    x_r = rcv.site.position_ecef_m
    t_rx_true = scn.epochs - np.round(receiver_clock_s(scn, rcv, scn.epochs) * 1e9).astype("timedelta64[ns]")
    antenna = (x_r + tides.displacement_m(x_r, t_rx_true))[:, None, :]
    t_tx, tau, sat = light_time(lambda t: position_of(scn, t)["position_ecef_m"], antenna, t_rx_true)
    E = position_of(scn, t_tx)["eccentric_anomaly_rad"]
    az, el, lat, lon, h = receiver_view(x_r, sat)
    return {"t_rx_true": t_rx_true, "t_tx": t_tx, "tau_s": tau, "sat_rx_frame_m": sat,
            "eccentric_anomaly_rad": E, "az": az, "el": el, "lat": lat, "lon": lon, "h": h}


def ionosphere_l1_m(scn, g) -> np.ndarray:
    """Klobuchar slant delay on L1 for the geometry ``g``, m."""
    _, sow = to_week_seconds(g["t_rx_true"], "GPST")
    return C_M_S * klobuchar_l1_s(g["lat"], g["lon"], g["az"], g["el"], sow[:, None],
                                  KLOBUCHAR_ALPHA, KLOBUCHAR_BETA)


def common_range_m(scn, rcv, g, letter) -> np.ndarray:
    """The part of code and phase every signal shares (n_t, n_sat), m: light time, receiver clock
    and inter-system bias minus the true satellite clock, troposphere, Shapiro."""
    dt_sat = truth.true_clock_s(scn, g["t_tx"], g["eccentric_anomaly_rad"])
    isb = np.array([rcv.inter_system_bias_s[c] for c in letter])
    clock_m = C_M_S * (receiver_clock_s(scn, rcv, scn.epochs)[:, None] + isb - dt_sat)
    return C_M_S * g["tau_s"] + clock_m + troposphere_m(g["lat"], g["h"], g["el"]) \
        + shapiro_m(rcv.site.position_ecef_m, g["sat_rx_frame_m"])


def simulate_observables(scn, rcv, rng: np.random.Generator) -> dict:
    """Observable arrays (n_t, n_sat), NaN below the elevation mask, keyed by RINEX code."""
    g = geometry(scn, rcv)
    sv = scn.sv
    letter = np.array([s[0] for s in sv])
    visible = g["el"] >= ELEVATION_MASK_RAD
    common_m = common_range_m(scn, rcv, g, letter)
    iono_l1_m = ionosphere_l1_m(scn, g)
    el_deg = np.degrees(g["el"])
    code_sigma = CODE_NOISE_M * (1.0 + 2.0 * np.exp(-el_deg / 15.0))
    snr = 31.0 + 19.0 * np.sin(g["el"])
    obs = {}
    for band in (0, 1):
        freq = np.array([FREQUENCY_HZ[c][SIGNALS[c][band][0][1]] for c in letter])
        wavelength = C_M_S / freq
        iono = iono_l1_m * (L1_HZ / freq) ** 2
        code = common_m + C_M_S * group_delay_s(scn, letter, band) + iono \
            + code_sigma * rng.standard_normal(common_m.shape)
        ambiguity = rng.integers(-500_000, 500_000, len(sv))
        phase = (common_m - iono + PHASE_NOISE_M * rng.standard_normal(common_m.shape)) / wavelength \
            + ambiguity
        strength = np.round((snr - 4.0 * band + rng.normal(0, 0.8, snr.shape)) * 4) / 4
        for code_name, values in zip((0, 1, 2), (code, phase, strength)):
            for c in "GEC":
                key = SIGNALS[c][band][code_name]
                arr = obs.setdefault(key, np.full(common_m.shape, np.nan))
                m = visible & (letter == c)[None, :]
                arr[m] = values[m]
    return {"observables": obs, "geometry": g, "visible": visible}
