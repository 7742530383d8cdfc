"""Check a receiver's own satellite-clock table against the broadcast clocks it should follow.

A receiver computes, from the same broadcast ephemerides, the correction
Delta t_sv it subtracts from each satellite's transmit time.  With the broadcast
polynomial P and the periodic term dtr on the same epochs, fit per system

    X - P = a[s] + b[s] t + k dtr + lag ddtr/dt + w crossover_error + noise

(no per-epoch datum: the receiver and gnssrel use the same system time), and
compare k with what the system's rule asks of a user (:data:`EXPECTED_K`):
1 for GPS, Galileo, BeiDou, QZSS (the user adds the periodic term,
IS-GPS-200 20.3.3.3.3.1), 0 for GLONASS (already inside tau_n, gamma_n).
The other coefficients test the fault signatures of :data:`FAULT_SIGNATURES`.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from gnssrel.clocks.broadcast import POLYNOMIAL_HOLDS_PERIODIC
from gnssrel.clocks.compare import periodic_term_s
from gnssrel.clocks.convention import CANDIDATES, N_SIGMA, fit_convention
from gnssrel.constants import C_M_S, GALILEO, GPS, SYSTEM_ORDER, SYSTEMS
from gnssrel.errors import NoDataError
from gnssrel.orbits.broadcast import broadcast_states
from gnssrel.orbits.frames import inertial_velocity
from gnssrel.systems import system_model
from gnssrel.timescales import SECONDS_PER_WEEK, SYSTEM_TIME_SCALE, seconds_between, to_week_seconds

EXPECTED_K = {letter: (0.0 if holds else 1.0) for letter, holds in POLYNOMIAL_HOLDS_PERIODIC.items()}
"""k a correct receiver shows: it adds the periodic term unless the polynomial already holds it."""

SIGNAL_PATH_LAG_S = 0.07
"""Typical signal travel time, s (about 20 000 km / c for a MEO satellite; common practice)."""

F_RATIO_GPS_GALILEO = math.sqrt(GPS.gm_m3_s2 / GALILEO.gm_m3_s2)
"""F with GPS mu over F with the Galileo/BeiDou mu: 1 + 7.3e-8 (derived, REFERENCE-CHECKS 2)."""

FAULT_SIGNATURES = {
    "periodic_term_missing": "k near 0 in GPS, Galileo, BeiDou or QZSS: the receiver left out "
                             "F e sqrt(A) sin E; its corrections then err by up to 2 |F| e sqrt(A) "
                             "(about 46 ns for e = 0.01, several hundred ns for E14/E18).",
    "periodic_term_reversed": "k near -1: the periodic term applied with the wrong sign; the error is "
                              "twice the term.",
    "periodic_term_doubled": "k near 2: the term applied twice (e.g. once in the clock and once as a "
                             "separate range correction).",
    "periodic_term_on_glonass": "k near 1 for GLONASS, whose rule says none: the term was added to "
                                "-tau_n + gamma_n (t - t_b), which already holds it; about 2 ns "
                                "(e ~ 0.001), visible only with a long table of many satellites.",
    "wrong_f_or_mu": "k slightly off 1. Using the GPS mu for Galileo/BeiDou (or the reverse) changes F "
                     "by 7.3e-8 of itself: about 3e-15 s on a 45 ns term, far below any clock "
                     "table's resolution, so undetectable and harmless. The fit detects only gross "
                     "errors of F, larger than 3 sigma of k (a few per cent with a day of data).",
    "eccentric_anomaly_at_reception": "E computed at reception instead of transmission time (about "
                                      "0.07 s later) leaves a residual lag * d(dtr)/dt with lag ~ 0.07 s: "
                                      "at most about 0.3 ps for GPS (d(dtr)/dt <= 3.4e-12 for e = 0.01). "
                                      "Detectable only in a table printed to sub-picosecond resolution; "
                                      "the fitted lag and its sigma say whether this table could show it.",
    "missing_week_crossover": "t - t_oc not folded into +-302 400 s: at a week boundary the correction "
                              "of every satellite whose ephemeris has t_oc in the old week jumps by "
                              "-a_f1 x 604 800 s (microseconds for a_f1 ~ 1e-11), until the next "
                              "ephemeris; the fitted weight of the predicted jump is 1 then, 0 when "
                              "correct, and 'not testable' when no epoch straddles a week boundary.",
}
"""What each fault looks like in a receiver's satellite-clock table (for the report)."""


def periodic_rate_s_per_s(states, systems_of_sv) -> np.ndarray:
    """d(dtr)/dt (time, sv) from the broadcast state: -2 (v_i^2 - GM/r)/c^2.

    d(-2 r.v/c^2)/dt = -2 (v.v + r.a)/c^2 in an inertial frame with a = -GM r/r^3
    (point mass; J2 changes this by ~1e-3 of itself); v_i = v_ecef + omega x r.
    """
    r = states["position_ecef_m"].values
    v = states["velocity_ecef_m_per_s"].values
    out = np.full(r.shape[:2], np.nan)
    for letter in np.unique(systems_of_sv):
        cols = systems_of_sv == letter
        const = SYSTEMS[letter]
        rr, vv = r[:, cols, :], v[:, cols, :]
        vi = inertial_velocity(rr, vv, const.omega_earth_rad_s)
        out[:, cols] = -2.0 * ((vi * vi).sum(-1) - const.gm_m3_s2 / np.linalg.norm(rr, axis=-1)) / C_M_S**2
    return out


def crossover_error_s(nav, states, times, sv) -> np.ndarray:
    """The error (time, sv) a receiver without the week crossover would make (0 where none).

    IS-GPS-200 20.3.3.3.3.1: t - t_oc is folded into +-302 400 s.  A receiver that takes
    seconds of week without the fold is off by Delta = 604 800 s x (week(t) - week(t_oc)),
    so its polynomial errs by -a_f1 Delta + a_f2 ((dt - Delta)^2 - dt^2).
    """
    out = np.zeros((len(times), len(sv)))
    rows_all = states["ephemeris_row"].values
    for letter in np.unique([s[0] for s in sv]):
        if not system_model(letter).clock_week_fold or letter not in nav.ephemerides:
            continue
        cols = np.array([s[0] == letter for s in sv])
        table = nav.ephemerides[letter]
        rows = rows_all[:, cols].astype(np.int64)
        ok = rows >= 0
        scale = SYSTEM_TIME_SCALE[letter]
        toc = np.full(rows.shape, np.datetime64("NaT"), dtype="datetime64[ns]")
        toc[ok] = table["toc"].to_numpy().astype("datetime64[ns]")[rows[ok]]
        t = np.broadcast_to(np.asarray(times).astype("datetime64[ns]")[:, None], rows.shape)
        week_t, _ = to_week_seconds(np.where(ok, t, t), scale)
        week_toc, _ = to_week_seconds(np.where(ok, toc, t), scale)
        delta = SECONDS_PER_WEEK * (week_t - week_toc).astype(np.float64)
        dt = np.where(ok, seconds_between(t, np.where(ok, toc, t)), 0.0)
        a1 = np.zeros(rows.shape)
        a2 = np.zeros(rows.shape)
        a1[ok] = table["clock_drift_s_per_s"].to_numpy(np.float64)[rows[ok]]
        a2[ok] = table["clock_drift_rate_s_per_s2"].to_numpy(np.float64)[rows[ok]]
        err = -a1 * delta + a2 * ((dt - delta) ** 2 - dt ** 2)
        out[:, cols] = np.where(ok & (delta != 0), err, 0.0)
    return out


def _status(letter, fit, expected):
    if fit.convention == "undetermined":
        return "undetermined: too little data for a verdict"
    if fit.convention == {v: k for k, v in CANDIDATES.items()}[expected]:
        return "as specified"
    model = system_model(letter)
    if model.polynomial_holds_periodic and fit.convention == "includes-periodic":
        return f"fault: periodic term applied to {model.name}"
    return {"excludes-periodic": "fault: periodic term missing",
            "reversed-periodic": "fault: periodic term reversed",
            "doubled-periodic": "fault: periodic term doubled",
            "includes-periodic": "fault: periodic term added where the rule says none"}[fit.convention]


def check_receiver_clocks(receiver_table: pd.DataFrame, nav, states=None, systems=None):
    """Fit the receiver's clock table (``read_receiver_clocks``) against the broadcast clocks.

    Returns (per-row DataFrame with the residuals, summary dict {"by_system": ...,
    "fault_signatures": FAULT_SIGNATURES}).  Raises NoDataError when nothing overlaps.
    """
    df = receiver_table
    if systems:
        df = df[df["sv"].str[0].isin(list(systems))]
    if df.empty:
        raise NoDataError("the receiver clock table has no row of the requested systems")
    times = np.unique(df["time"].to_numpy().astype("datetime64[ns]"))
    sv = np.unique(df["sv"].to_numpy().astype(str))
    ti = np.searchsorted(times, df["time"].to_numpy().astype("datetime64[ns]"))
    si = np.searchsorted(sv, df["sv"].to_numpy().astype(str))
    x = np.full((len(times), len(sv)), np.nan)
    x[ti, si] = df["clock_correction_s"].to_numpy(np.float64)
    if states is None:
        states = broadcast_states(nav, times, systems=sorted({s[0] for s in sv}))
    states_sv = np.asarray(states["sv"].values).astype(str)
    common = np.intersect1d(sv, states_sv)
    if common.size == 0:
        raise NoDataError("no satellite of the receiver clock table is in the navigation data")
    cols = np.searchsorted(sv, common)
    x, sv = x[:, cols], common
    states = states.sel(sv=sv, time=times)
    sys_of = np.array([s[0] for s in sv])
    poly = states["clock_poly_s"].values
    dtr, forms = periodic_term_s(states, sys_of)
    resid = x - poly
    if not np.isfinite(resid + dtr).any():
        raise NoDataError(f"no broadcast clock is valid at the receiver table's epochs "
                          f"({str(times[0])[:19]} .. {str(times[-1])[:19]} GPST): same day as the navigation data?")
    rate = periodic_rate_s_per_s(states, sys_of)
    crossover = crossover_error_s(nav, states, times, sv)
    t_s = seconds_between(times, times[0])
    by_system = {}
    for letter in [s for s in SYSTEM_ORDER if s in set(sys_of)]:
        c = sys_of == letter
        testable = bool(np.any(crossover[:, c] != 0))
        extra = [rate[:, c]] + ([crossover[:, c]] if testable else [])
        fit = fit_convention(resid[:, c], dtr[:, c], t_s, epoch_datum=False, extra_regressors=extra)
        expected = EXPECTED_K.get(letter, 1.0)
        coef = fit.coefficients if fit.coefficients.size else np.full(1 + len(extra), np.nan)
        sig = fit.coefficient_sigmas if fit.coefficient_sigmas.size else np.full(1 + len(extra), np.nan)
        entry = {"n_sat": fit.n_sat, "n_obs": fit.n_obs, "convention_k": fit.k, "convention_k_sigma": fit.k_sigma,
                 "convention": fit.convention, "expected_k": expected, "status": _status(letter, fit, expected),
                 "rms_residual_ns": fit.rms_residual_s * 1e9, "periodic_term_form": forms.get(letter, ""),
                 "f_relative_error": fit.k / expected - 1.0 if expected else None,
                 "f_relative_error_detectable_above": N_SIGMA * fit.k_sigma if expected else None,
                 "f_mu_swap_relative_size": F_RATIO_GPS_GALILEO - 1.0,
                 "lag_s": float(coef[1]), "lag_sigma_s": float(sig[1]),
                 "lag_at_reception_detectable": bool(np.isfinite(sig[1]) and N_SIGMA * sig[1] < SIGNAL_PATH_LAG_S)}
        if testable:
            entry["week_crossover_weight"] = float(coef[2])
            entry["week_crossover_weight_sigma"] = float(sig[2])
            entry["week_crossover"] = ("missing" if abs(coef[2] - 1) < 0.5 else
                                       "applied" if abs(coef[2]) < 0.5 else "unclear")
        else:
            entry["week_crossover"] = "not testable (no epoch straddles a week boundary)"
        by_system[letter] = entry
    good = np.isfinite(resid)
    tt, ss = np.nonzero(good)
    rows = pd.DataFrame({"time": times[tt], "sv": sv[ss], "clock_correction_s": x[good],
                         "broadcast_polynomial_s": poly[good], "periodic_s": dtr[good],
                         "minus_polynomial_ns": resid[good] * 1e9})
    return rows, {"by_system": by_system, "fault_signatures": dict(FAULT_SIGNATURES),
                  "expected_k": {k: v for k, v in EXPECTED_K.items() if k in by_system}}
