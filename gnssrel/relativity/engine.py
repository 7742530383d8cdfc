"""The relativity stage: clock terms on a state history, and their per-satellite summary.

:func:`relativity_terms` takes a state Dataset (DEVELOPERS.md contract: ECEF
``position_ecef_m``/``velocity_ecef_m_per_s`` on (time, sv, axis), GPST times)
and adds, on the (time, sv) grid:

=============================  =====================================================
``periodic_icd_s``             F e sqrt(A) sin E, F of the satellite's system (rules.py)
``periodic_state_s``           -2 r.v / c^2 from the state
``periodic_diff_s``            periodic_icd_s - periodic_state_s
``j2_periodic_s``              the J2 term missing from -2 r.v/c^2 (clock_terms.j2_periodic_s)
``rate_velocity``              -v^2/(2c^2), v inertial (potential.py)
``rate_gravity``               L_G - U/c^2, U with J2
``rate_total``                 their sum: dtau/dTT - 1 (positive: satellite clock fast)
``proper_time_offset_s``       tau - TT accumulated over coordinate time, restarting
                               at zero at the start of each gap-free run of the
                               satellite (NaN outside runs of MIN_RUN_EPOCHS or more)
``periodic_eccentricity``,     the elements behind the closed forms: broadcast
``periodic_semi_major_axis_m`` values where the states carry them, else osculating
``user_applies_periodic`` (sv) from rules.py
=============================  =====================================================

Elements: broadcast states carry ``eccentricity``, ``sqrt_a_sqrt_m``,
``eccentric_anomaly_rad`` (and ``inclination_rad``, ``argument_of_latitude_rad``);
where they are absent or NaN (precise states, GLONASS) osculating elements of the
state are used, with which F e sqrt(A) sin E equals -2 r.v/c^2 identically.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from gnssrel.constants import ALL_SYSTEM_ORDER, C_M_S, GM_EARTH_IERS_M3_S2, SECONDS_PER_DAY
from gnssrel.relativity import rules
from gnssrel.relativity.clock_terms import (
    j2_amplitude_s,
    j2_periodic_s,
    osculating_elements,
    periodic_icd_s,
    periodic_state_s,
    rate_terms,
)
from gnssrel.relativity.potential import eci_velocity
from gnssrel.relativity.proper_time import accumulate_runs, decompose_runs, run_labels
from gnssrel.timescales import seconds_between

__all__ = ["TERM_VARIABLES", "relativity_summary", "relativity_terms"]

TERM_VARIABLES = ("periodic_icd_s", "periodic_state_s", "periodic_diff_s", "j2_periodic_s",
                  "rate_velocity", "rate_gravity", "rate_total", "proper_time_offset_s")
US_PER_DAY = SECONDS_PER_DAY * 1e6
MIN_RUN_EPOCHS = 5


def _element(states, name, fallback):
    if name in states:
        given = states[name].values.astype(float)
        return np.where(np.isfinite(given), given, fallback)
    return fallback


def relativity_terms(states: xr.Dataset) -> xr.Dataset:
    """``states`` with the relativity variables added (see module docstring); input not modified."""
    pos = states["position_ecef_m"].transpose("time", "sv", "axis").values.astype(float)
    vel = states["velocity_ecef_m_per_s"].transpose("time", "sv", "axis").values.astype(float)
    svs = [str(s) for s in states["sv"].values]
    t_s = seconds_between(states["time"].values, states["time"].values[0])
    valid = np.isfinite(pos).all(axis=-1) & np.isfinite(vel).all(axis=-1)

    gm_sv = rules.per_satellite(svs, "gm_m3_s2")
    f_sv = rules.per_satellite(svs, "f_s_sqrt_m")
    with np.errstate(invalid="ignore", divide="ignore"):
        osc = osculating_elements(pos, eci_velocity(pos, vel), gm_sv[None, :])
        e = _element(states, "eccentricity", osc["eccentricity"])
        sqrt_a = _element(states, "sqrt_a_sqrt_m", np.sqrt(osc["semi_major_axis_m"]))
        big_e = _element(states, "eccentric_anomaly_rad", osc["eccentric_anomaly_rad"])
        incl = _element(states, "inclination_rad", osc["inclination_rad"])
        u = _element(states, "argument_of_latitude_rad", osc["argument_of_latitude_rad"])
        from_broadcast = np.isfinite(states["eccentricity"].values.astype(float)) \
            if "eccentricity" in states else np.zeros(valid.shape, dtype=bool)
        icd = periodic_icd_s(e, sqrt_a, big_e, f_s_sqrt_m=f_sv)       # IS-GPS-200 20.3.3.3.3.1
        state = periodic_state_s(pos, vel)
        j2 = j2_periodic_s(sqrt_a**2, incl, u)                        # Kouba 2004, derived here
        rates = rate_terms(pos, vel, frame="ecef")                    # IERS 2010 ch. 10
    offset = accumulate_runs(t_s, rates["rate_total"], valid, MIN_RUN_EPOCHS)

    dims = ("time", "sv")
    out = states.copy()
    new = {"periodic_icd_s": icd, "periodic_state_s": state, "periodic_diff_s": icd - state,
           "j2_periodic_s": j2, **rates, "proper_time_offset_s": offset,
           "periodic_eccentricity": e, "periodic_semi_major_axis_m": sqrt_a**2,
           "periodic_inclination_rad": incl}
    for name, value in new.items():
        out[name] = (dims, np.where(valid, value, np.nan))
    out["elements_from_broadcast"] = (dims, from_broadcast & valid)
    out["user_applies_periodic"] = ("sv", rules.per_satellite(svs, "user_applies_periodic"))
    out.attrs["relativity_rate_reference"] = "TT (clock on the geoid); positive = satellite clock fast"
    return out


def _secular_rates(t_s, col, labels):
    """Secular (mean) rates of one satellite from the proper-time integral of each part.

    Each part's periodic content is -r.v/c^2 (half the state form) for a Kepler
    orbit (d(r.v)/dt = GM/r - GM/a = v^2/2 - its mean = U - its mean); removing it
    before the line fit makes short or non-whole-orbit runs give the orbit-mean
    rate.  Runs are integrated separately and fitted with one shared rate.
    """
    half_periodic = 0.5 * col["periodic_state_s"]
    valid = labels >= 0
    out = {}
    for part in ("rate_velocity", "rate_gravity"):
        offset = accumulate_runs(t_s, col[part][:, None], valid[:, None], MIN_RUN_EPOCHS)[:, 0]
        out[part] = decompose_runs(t_s, offset - half_periodic, labels)["rate"]
    return out


def _max_abs_ns(x):
    x = np.asarray(x, dtype=float)
    return float(np.nanmax(np.abs(x)) * 1e9) if np.isfinite(x).any() else np.nan


def relativity_summary(ds: xr.Dataset) -> dict:
    """Per-satellite and per-system figures of a :func:`relativity_terms` result (the keys of the ``relativity`` command's summary, README).

    Rates are secular: the slope of the proper-time integral after removing the
    state-form periodic term, so they equal the orbit mean of ``rate_*``.
    ``integral_vs_closed_form_max_ns`` (``..._with_j2_max_ns``) is the largest
    residual of a fit of one rate and a constant per gap-free run to
    (proper-time integral - F e sqrt(A) sin E [- j2 term]);
    ``integral_vs_state_form_with_j2_max_ns`` the same with -2 r.v/c^2 + j2 term.
    On broadcast states, whose e, sqrt(A), E behave like mean elements, the
    specification form alone is the closer one; on integrated orbits (GLONASS,
    precise) the state form plus the J2 term (tests/test_proper_time_integral.py).
    """
    t_s = seconds_between(ds["time"].values, ds["time"].values[0])
    names = ("rate_velocity", "rate_gravity", "periodic_state_s", "periodic_icd_s", "periodic_diff_s",
             "j2_periodic_s", "rate_total", "proper_time_offset_s", "periodic_eccentricity",
             "periodic_semi_major_axis_m", "periodic_inclination_rad")
    arrays = {n: ds[n].transpose("time", "sv").values for n in names}
    broadcast_elements = ds["elements_from_broadcast"].transpose("time", "sv").values \
        if "elements_from_broadcast" in ds else np.ones(arrays["rate_total"].shape, dtype=bool)
    satellites = {}
    for k, sv in enumerate(str(s) for s in ds["sv"].values):
        col = {n: a[:, k] for n, a in arrays.items()}
        if not np.isfinite(col["rate_total"]).any():
            continue
        rule = rules.rule_for(sv)
        ecc = float(np.nanmedian(col["periodic_eccentricity"]))
        a = float(np.nanmedian(col["periodic_semi_major_axis_m"]))
        incl = float(np.nanmedian(col["periodic_inclination_rad"]))
        labels = run_labels(np.isfinite(col["rate_total"]), MIN_RUN_EPOCHS)
        if labels.max() < 0:
            continue
        secular = _secular_rates(t_s, col, labels)
        total = secular["rate_velocity"] + secular["rate_gravity"]
        entry = {
            "eccentricity": ecc, "semi_major_axis_m": a,
            "periodic_amplitude_ns": abs(rule.f_s_sqrt_m) * ecc * np.sqrt(a) * 1e9,
            "periodic_max_abs_ns": _max_abs_ns(col["periodic_icd_s"]),
            # Only where the specification form used broadcast elements: with osculating
            # ones (GLONASS, epochs without a record) it equals the state form by construction.
            "icd_vs_state_max_diff_ns": _max_abs_ns(col["periodic_diff_s"][broadcast_elements[:, k]])
            if broadcast_elements[:, k].any() else None,
            "periodic_elements": "broadcast" if broadcast_elements[:, k].all() or
            broadcast_elements[:, k][np.isfinite(col["rate_total"])].all() else
            ("osculating" if not broadcast_elements[:, k].any() else "broadcast where available, else osculating"),
            "j2_amplitude_ns": float(j2_amplitude_s(a, incl)) * 1e9,
            "rate_velocity": secular["rate_velocity"], "rate_gravity": secular["rate_gravity"],
            "rate_total": total,
            "us_per_day_velocity": secular["rate_velocity"] * US_PER_DAY,
            "us_per_day_gravity": secular["rate_gravity"] * US_PER_DAY,
            "us_per_day_total": total * US_PER_DAY,
            "rate_residual_vs_nominal": (total - rule.nominal_rate) if rule.nominal_rate is not None
            else None,
            "user_applies_periodic": rule.user_applies_periodic,
            "integral_hours": float((labels >= 0).sum() * np.median(np.diff(t_s))) / 3600.0
            if t_s.size > 1 else 0.0,
            "integral_runs": int(labels.max() + 1),
        }
        off, icd, j2 = col["proper_time_offset_s"], col["periodic_icd_s"], col["j2_periodic_s"]
        for key, closed in (("integral_vs_closed_form_max_ns", icd),
                            ("integral_vs_closed_form_with_j2_max_ns", icd + j2),
                            ("integral_vs_state_form_with_j2_max_ns", col["periodic_state_s"] + j2)):
            entry[key] = _max_abs_ns(decompose_runs(t_s, off - closed, labels)["periodic_s"])
        satellites[sv] = entry
    by_system = {}
    for letter in sorted({sv[0] for sv in satellites}, key=lambda s: (ALL_SYSTEM_ORDER + s).index(s)):
        totals = np.array([v["rate_total"] for s, v in satellites.items() if s[0] == letter])
        by_system[letter] = {"median_rate_total": float(np.nanmedian(totals)),
                             "median_us_per_day_total": float(np.nanmedian(totals)) * US_PER_DAY,
                             "satellites": int(totals.size)}
    return {"satellites": satellites, "by_system": by_system,
            "constants": {"c_m_per_s": C_M_S, "gm_rate_m3_s2": GM_EARTH_IERS_M3_S2,
                          "rate_reference": "TT; positive = satellite clock fast"}}
