"""What each invented receiver's firmware computes: its satellite clocks and position fixes.

The firmware uses the broadcast orbit and clock (from the navigation file), the broadcast
group delay of its single-frequency signal, the Klobuchar ionosphere, the same troposphere
model and Sagnac; Shapiro (about 2 cm) is ignored as receivers usually do.  The periodic
relativistic term is applied per ``Receiver.periodic_term_mode``: "applied" (as
IS-GPS-200 20.3.3.3.3.1 says), "omitted" (the fault of the scenario's second receiver).
Fixes come from an iterated weighted least-squares solution per epoch with one clock per
system (x, y, z, b_G, b_E, b_C), all epochs at once.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import C_M_S, OMEGA_EARTH_IERS_RAD_S
from gnssrel.geodesy import ecef_to_geodetic, enu_rotation
from gnssrel.simulate import truth
from gnssrel.simulate.observe import group_delay_s, ionosphere_l1_m
from gnssrel.simulate.propagation import L1_HZ, rotate_z, troposphere_m
from gnssrel.simulate.scenario import FREQUENCY_HZ, SIGNALS

PERIODIC_FACTOR = {"applied": 1.0, "omitted": 0.0, "reversed": -1.0, "doubled": 2.0}
SYSTEM_COLUMNS = "GEC"
GAUSS_NEWTON_STEPS = 6


def firmware_clock_s(scn, rcv, g) -> np.ndarray:
    """Satellite clock corrections the firmware applies (n_t, n_sat), s, without group delay."""
    k = PERIODIC_FACTOR[rcv.periodic_term_mode]
    return truth.clock_polynomial_s(scn, g["t_tx"]) + k * truth.periodic_s(scn, g["eccentric_anomaly_rad"])


def firmware_fixes(scn, rcv, sim) -> dict:
    """Per-epoch position fixes from the first-frequency code, as the firmware computes them.

    Returns ``position_ecef_m`` (n_t, 3), ``n_used`` (n_t,), ``hdop`` (n_t,),
    ``clock_correction_s`` (n_t, n_sat).
    """
    g, visible = sim["geometry"], sim["visible"]
    sv = scn.sv
    letter = np.array([s[0] for s in sv])
    code = np.full(g["el"].shape, np.nan)
    for c in SYSTEM_COLUMNS:
        m = letter == c
        code[:, m] = sim["observables"][SIGNALS[c][0][0]][:, m]
    # Broadcast satellite positions at transmission, in the reception frame (Sagnac).
    sat_bc = rotate_z(truth.broadcast_orbit(scn, g["t_tx"])["position_ecef_m"],
                      OMEGA_EARTH_IERS_RAD_S * g["tau_s"])
    dts = firmware_clock_s(scn, rcv, g)
    freq = np.array([FREQUENCY_HZ[c][SIGNALS[c][0][0][1]] for c in letter])
    corrected = code + C_M_S * dts - C_M_S * group_delay_s(scn, letter, 0) \
        - ionosphere_l1_m(scn, g) * (L1_HZ / freq) ** 2 - troposphere_m(g["lat"], g["h"], g["el"])
    use = visible & np.isfinite(corrected)
    weight = np.where(use, np.sin(g["el"]) ** 2, 0.0)
    corrected = np.where(use, corrected, 0.0)
    system_design = (letter[:, None] == np.array(list(SYSTEM_COLUMNS))[None, :]).astype(float)
    n_t = code.shape[0]
    x = np.tile(rcv.site.position_ecef_m + np.array([800.0, -600.0, 400.0]), (n_t, 1))
    b = np.zeros((n_t, 3))
    for _ in range(GAUSS_NEWTON_STEPS):
        los = sat_bc - x[:, None, :]
        rng_m = np.linalg.norm(los, axis=-1)
        unit = los / rng_m[..., None]
        predicted = rng_m + b @ system_design.T
        design = np.concatenate([-unit, np.broadcast_to(system_design, unit.shape)], axis=-1)
        normal = np.einsum("tsi,ts,tsj->tij", design, weight, design)
        missing = np.concatenate([np.zeros((n_t, 3)), (weight @ system_design) == 0], axis=1)
        normal += np.eye(6)[None] * (missing[:, :, None] * 1.0)   # pin absent systems' clocks
        rhs = np.einsum("tsi,ts,ts->ti", design, weight, corrected - predicted)
        step = np.linalg.solve(normal, rhs[..., None])[..., 0]
        x, b = x + step[:, :3], b + step[:, 3:]
    lat, lon, _ = ecef_to_geodetic(rcv.site.position_ecef_m)
    rot = enu_rotation(lat, lon)
    unweighted = np.einsum("tsi,ts,tsj->tij", design, use.astype(float), design) \
        + np.eye(6)[None] * (missing[:, :, None] * 1.0)
    q = np.linalg.inv(unweighted)[:, :3, :3]
    q_enu = rot @ q @ rot.T
    hdop = np.sqrt(q_enu[:, 0, 0] + q_enu[:, 1, 1])
    return {"position_ecef_m": x, "system_clock_m": b, "n_used": use.sum(axis=1), "hdop": hdop,
            "clock_correction_s": np.where(use, dts, np.nan)}
