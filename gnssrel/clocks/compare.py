"""Precise minus broadcast satellite clocks, per satellite and epoch, and their statistics.

For every epoch of the precise product (optionally windowed and decimated) and
every satellite in both inputs:

    broadcast_reference = P - [dtr if the polynomial holds the periodic term]
    residual            = precise - broadcast_reference - datum

P is the broadcast clock polynomial (:mod:`gnssrel.clocks.broadcast`), dtr the
periodic relativistic term (F e sqrt(A) sin E from the broadcast elements for
G/E/C/J, -2 r.v/c^2 from the broadcast state for GLONASS, whose polynomial already
holds it), and the datum the per-epoch common offset (:mod:`gnssrel.clocks.datum`).
The reference clock on the broadcast side thus "excludes" the periodic term in
every system, as IGS-style precise clocks do (REFERENCE-CHECKS 4.1 and 11).

The convention fit (:mod:`gnssrel.clocks.convention`) is run per system on
``precise - broadcast_reference``; for GLONASS the fit against the raw polynomial
is reported too (``convention_k_as_broadcast``; expected -1).
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd

from gnssrel.clocks.broadcast import POLYNOMIAL_HOLDS_PERIODIC, PRECISE_CLOCK_REFERENCE, clock_reference
from gnssrel.clocks.convention import CANDIDATES, VERDICT_RULE, fit_convention, fit_convention_per_satellite
from gnssrel.clocks.datum import DATUM_METHOD, DATUM_SHARED_WITH, datum_by_system
from gnssrel.constants import SYSTEM_ORDER
from gnssrel.errors import NoDataError
from gnssrel.orbits.broadcast import broadcast_states
from gnssrel.relativity.clock_terms import PERIODIC_FORMS
from gnssrel.relativity.clock_terms import periodic_term_s as clock_periodic_term_s
from gnssrel.timescales import NS_PER_S, seconds_between

NS = 1e9
MIN_EPOCH_COVERAGE = 0.25
"""Refuse the comparison when fewer than this fraction of the precise epochs have a broadcast
clock: the files are then most likely of different days (only the fit-interval edge overlaps)."""


def select_epochs(times, start=None, end=None, step_s: float | None = None) -> np.ndarray:
    """Boolean mask of ``times`` inside [start, end] and on a ``step_s`` grid of the GPST day."""
    t = np.asarray(times).astype("datetime64[ns]")
    keep = np.ones(t.shape, dtype=bool)
    if start is not None:
        keep &= t >= np.datetime64(start, "ns")
    if end is not None:
        keep &= t <= np.datetime64(end, "ns")
    if step_s:
        step_ns = round(step_s * NS_PER_S)
        keep &= (t.astype("int64") % step_ns) == 0
    return keep


def periodic_term_s(states, systems_of_sv: np.ndarray) -> tuple[np.ndarray, dict]:
    """The periodic relativistic term (time, sv) from broadcast states, and the form used per system.

    Per system, :func:`gnssrel.relativity.clock_terms.periodic_term_s` decides the form:
    F e sqrt(A) sin E (IS-GPS-200 20.3.3.3.3.1 and the other ICDs) from the broadcast
    elements where the system has them; -2 r.v/c^2 (REFERENCE-CHECKS 1.3) elsewhere (GLONASS).
    """
    out = np.full(states["clock_poly_s"].shape, np.nan)
    forms = {}
    for letter in np.unique(systems_of_sv):
        cols = systems_of_sv == letter
        elements = [states[n].values[:, cols] if n in states else None
                    for n in ("eccentricity", "sqrt_a_sqrt_m", "eccentric_anomaly_rad")]
        out[:, cols], form = clock_periodic_term_s(letter, states["position_ecef_m"].values[:, cols, :],
                                                   states["velocity_ecef_m_per_s"].values[:, cols, :], *elements)
        forms[letter] = PERIODIC_FORMS[form]
    return out, forms


def compare_clocks(nav, precise_clock_ds, systems=None, start=None, end=None, step_s: float | None = None,
                   datum_method: str = "robust", states=None, precise_source: str = "precise clocks",
                   include_unhealthy: bool = False):
    """Compare precise and broadcast clocks.

    Parameters
    ----------
    nav : NavigationData (``gnssrel.read_navigation``); used for the broadcast states.
    precise_clock_ds : Dataset with ``clock_s`` (time, sv), from ``read_sp3`` or ``read_rinex_clock``.
    systems : system letters to compare (default: all present in both).
    start, end : GPST datetime64 window; step_s : keep only epochs on this grid (decimation).
    datum_method : "robust" (default) or "epoch-median" (the naive per-epoch median).
    states : broadcast states on the selected epochs (computed from ``nav`` when None).
    include_unhealthy : also compare satellites whose broadcast records are marked unhealthy
        (e.g. the eccentric Galileo E14/E18, which pin k best).

    Returns
    -------
    (table, summary): a long DataFrame, one row per satellite and epoch with a residual,
    and the summary dict (module docstring; keys ``by_system`` and ``satellites``).
    Raises NoDataError when nothing overlaps.
    """
    clock = precise_clock_ds["clock_s"]
    wanted = set(systems.upper() if isinstance(systems, str) else systems) if systems else None
    sv_all = np.asarray(clock["sv"].values).astype(str)
    keep_sv = np.array([s[0] in SYSTEM_ORDER and (wanted is None or s[0] in wanted) for s in sv_all])
    keep_t = select_epochs(clock["time"].values, start, end, step_s)
    if not keep_t.any():
        raise NoDataError(f"no epoch of the {precise_source} lies in the requested window/step")
    clock = clock.isel(time=np.flatnonzero(keep_t), sv=np.flatnonzero(keep_sv))
    # Duplicate keys (two products merged by hand, a repeated line): the readers refuse and count
    # them; a Dataset built elsewhere keeps its first time and satellite label (no ambiguous .sel).
    first_t = np.sort(np.unique(clock["time"].values, return_index=True)[1])
    first_s = np.sort(np.unique(np.asarray(clock["sv"].values).astype(str), return_index=True)[1])
    clock = clock.isel(time=first_t, sv=first_s)
    has_data = np.isfinite(clock.values).any(axis=0)
    clock = clock.isel(sv=np.flatnonzero(has_data))
    if clock.sizes["sv"] == 0:
        raise NoDataError(f"the {precise_source} hold no clock of the requested systems "
                          f"({''.join(sorted(wanted)) if wanted else 'any'})")
    times = clock["time"].values
    if states is None:
        letters = sorted({s[0] for s in clock["sv"].values.astype(str)})
        states = broadcast_states(nav, times, systems=letters, include_unhealthy=include_unhealthy)
    common = np.intersect1d(clock["sv"].values.astype(str), np.asarray(states["sv"].values).astype(str))
    if common.size == 0:
        raise NoDataError(f"no satellite is in both the navigation data and the {precise_source}")
    clock = clock.sel(sv=common)
    states = states.sel(sv=common, time=times)
    sv = common
    sys_of = np.array([s[0] for s in sv])
    precise = clock.values.astype(np.float64)
    poly = states["clock_poly_s"].values.astype(np.float64)
    if not np.isfinite(poly).any():
        t0, t1 = str(times[0])[:19], str(times[-1])[:19]
        raise NoDataError(f"no broadcast clock is valid at any epoch of the {precise_source} "
                          f"({t0} .. {t1} GPST): are the navigation and clock files of the same day?")
    dtr, forms = periodic_term_s(states, sys_of)
    holds = np.array([POLYNOMIAL_HOLDS_PERIODIC.get(s, False) for s in sys_of])
    reference = np.where(holds[None, :], poly - dtr, poly)
    raw = precise - reference
    raw[~np.isfinite(dtr)] = np.nan
    if not np.isfinite(raw).any():
        raise NoDataError(f"the {precise_source} and the broadcast clocks share no satellite and epoch")
    covered = int(np.count_nonzero(np.isfinite(raw).any(axis=1)))
    if covered < MIN_EPOCH_COVERAGE * len(times):
        t0, t1 = str(times[0])[:16], str(times[-1])[:16]
        raise NoDataError(f"only {covered} of {len(times)} epochs of the {precise_source} ({t0} .. {t1} GPST) "
                          f"have a valid broadcast clock: is it of another day than the navigation data? "
                          f"(narrow --start/--end to the shared hours to compare them anyway)")
    # 1. Convention fit of each system with its own datum (the LS projection needs no datum).
    present = [s for s in SYSTEM_ORDER if s in set(sys_of)]
    shared_from = {s: DATUM_SHARED_WITH[s] for s in present
                   if s in DATUM_SHARED_WITH and DATUM_SHARED_WITH[s] in present}
    t_s = seconds_between(times, times[0])
    fits = {s: fit_convention(raw[:, sys_of == s], dtr[:, sys_of == s], t_s)
            for s in present if s not in shared_from}
    # 2. The datum is a time-scale offset only: take it from raw - c dtr, c the verdict's k
    #    (0 when undetermined), so that a product holding the term does not bend the datum.
    c_sys = {s: CANDIDATES.get(f.convention, 0.0) for s, f in fits.items()}
    c_col = np.array([c_sys.get(s, 0.0) for s in sys_of])
    datum, datum_info = datum_by_system(raw - c_col[None, :] * dtr, sys_of, method=datum_method)
    resid = raw - datum
    # 3. Systems on another system's datum (QZSS on GPS) are fitted without an epoch datum.
    for s in shared_from:
        fits[s] = fit_convention(resid[:, sys_of == s], dtr[:, sys_of == s], t_s, epoch_datum=False)
    k_sat, k_sat_sigma = fit_convention_per_satellite(resid, dtr, t_s)

    satellites = {}
    with np.errstate(invalid="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        n = np.sum(np.isfinite(resid), axis=0)
        mean = np.nanmean(np.where(n[None, :] > 0, resid, 0.0), axis=0)
        std = np.sqrt(np.nanmean((resid - mean[None, :]) ** 2, axis=0))
        rms = np.sqrt(np.nanmean(resid ** 2, axis=0))
    for j, name in enumerate(sv):
        if n[j] == 0:
            continue
        satellites[name] = {"n": int(n[j]), "mean_ns": mean[j] * NS, "std_ns": std[j] * NS,
                            "rms_ns": rms[j] * NS, "convention_k": float(k_sat[j]),
                            "convention_k_sigma": float(k_sat_sigma[j])}
    by_system = {}
    for letter in [s for s in SYSTEM_ORDER if s in set(sys_of)]:
        cols = (sys_of == letter) & (n > 0)
        if not cols.any():
            continue
        shared = letter in shared_from
        fit = fits[letter]
        entry = {"n_sat": int(cols.sum()), "n_obs": int(n[cols].sum()),
                 "median_std_ns": float(np.median(std[cols]) * NS), "max_std_ns": float(np.max(std[cols]) * NS),
                 "median_rms_ns": float(np.median(rms[cols]) * NS),
                 "convention_k": fit.k, "convention_k_sigma": fit.k_sigma,
                 "convention": fit.convention, "convention_k_sigma_formal": fit.k_sigma_formal,
                 "sigma_method": fit.sigma_method,
                 "broadcast_clock_refers_to": clock_reference(letter),
                 "precise_clock_refers_to": PRECISE_CLOCK_REFERENCE.get(letter, "unknown"),
                 "polynomial_holds_periodic": bool(POLYNOMIAL_HOLDS_PERIODIC.get(letter, False)),
                 "periodic_term_form": forms.get(letter, ""),
                 "datum_from": datum_info[letter]["datum_from"]}
        if POLYNOMIAL_HOLDS_PERIODIC.get(letter, False):
            raw_fit = fit_convention((precise - poly)[:, cols], dtr[:, cols], t_s, epoch_datum=not shared)
            entry["convention_k_as_broadcast"] = raw_fit.k
            entry["convention_k_as_broadcast_sigma"] = raw_fit.k_sigma
            entry["convention_as_broadcast"] = raw_fit.convention
        by_system[letter] = entry

    good = np.isfinite(resid)
    ti, si = np.nonzero(good)
    table = pd.DataFrame({
        "time": times[ti], "sv": sv[si], "system": sys_of[si],
        "precise_clock_s": precise[good], "broadcast_polynomial_s": poly[good],
        "periodic_s": dtr[good], "broadcast_reference_s": reference[good],
        "datum_s": datum[good], "residual_ns": resid[good] * NS})
    summary = {"by_system": by_system, "satellites": satellites,
               "precise_source": precise_source,
               "datum_method": DATUM_METHOD if datum_method == "robust" else "plain per-epoch median",
               "datum_shared_with": {k: v for k, v in DATUM_SHARED_WITH.items() if k in by_system},
               "verdict_rule": VERDICT_RULE,
               "n_epochs": len(times), "first_epoch_gpst": times[0], "last_epoch_gpst": times[-1],
               "residual_definition": "precise - (broadcast polynomial - periodic term where the "
                                      "polynomial holds it) - per-epoch datum; mean removed for std"}
    return table, summary
