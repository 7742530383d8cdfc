"""Receiver-independent part of every observation: the code used, transmit time,
satellite position and clock at transmit time.

Transmit time (common practice; IS-GPS-200 20.3.3.3.3.1 for the clock): a code
pseudorange is by definition c (t_rx - t_tx^sv) with t_rx the receiver's time tag
and t_tx^sv the satellite clock reading at transmission, so

    t_tx^sv = t_rx - P / c,     t_tx = t_tx^sv - dt_sv(t_tx),

iterated twice for dt_sv (the clock polynomial plus the periodic term).  This is
exact whatever the receiver clock error, and needs no receiver position; the
light-time iteration that does need the receiver position (Earth rotation
during the flight) is in :mod:`gnssrel.audit.corrections`.

The result is a dict of 1-D arrays over observations (``n``): ``epoch`` (index
into the observation times), ``time`` (datetime64 GPST receive tag), ``sv``,
``system``, ``pseudorange_m`` (ionosphere-free where a pair exists),
``code`` (e.g. ``C1C+C2W``), ``frequency_hz`` (NaN for a combination),
``transmit_offset_s`` (t_tx - time, seconds), ``satellite_ecef_m`` ``(n, 3)``
in the Earth-fixed frame of the transmit time, ``clock_poly_s``, ``periodic_s``,
``j2_s``, ``group_delay_m``, ``ephemeris_row``.
"""

from __future__ import annotations

import logging

import numpy as np

from gnssrel.audit import ionosphere, satellites
from gnssrel.constants import C_M_S
from gnssrel.errors import NoDataError

log = logging.getLogger(__name__)

# Plausible code pseudoranges in metres for a receiver on or near the ground (derived from
# the orbit radii: GPS 26 560 km, Galileo 29 600 km, BeiDou MEO 27 900 km and GEO/IGSO 42 160 km,
# QZSS 39 000-45 300 km; minus the Earth radius at zenith, plus the horizon geometry, plus a +-1 ms
# receiver clock margin of 300 km).  Values outside are gross errors, dropped before any fit.
PLAUSIBLE_RANGE_M = {"G": (1.9e7, 2.7e7), "E": (2.2e7, 3.0e7), "C": (1.9e7, 4.3e7), "J": (3.0e7, 4.6e7)}

KEPLERIAN_SYSTEMS = "GECJ"
"""Systems whose broadcast orbits this module evaluates (GLONASS needs numerical integration)."""


def _empty_like_fields():
    return {k: [] for k in ("epoch", "sv", "system", "pseudorange_m", "code", "frequency_hz")}


def select_pseudoranges(obs_ds, systems=None) -> dict[str, np.ndarray]:
    """Choose, per system, the code pair or single code (``ionosphere.choose_codes``) and
    return the flat arrays ``epoch``, ``sv``, ``system``, ``pseudorange_m``, ``code``,
    ``frequency_hz`` of every (epoch, satellite) with a usable pseudorange."""
    sv_all = np.asarray(obs_ds["sv"].values).astype(str)
    variables = set(obs_ds.data_vars)
    parts = _empty_like_fields()
    wanted = set(systems) if systems else set(KEPLERIAN_SYSTEMS)
    for system in sorted({s[0] for s in sv_all} & wanted & set(KEPLERIAN_SYSTEMS)):
        cols = np.flatnonzero(np.char.startswith(sv_all, system))
        codes = ionosphere.choose_codes(system, variables)
        if codes is None:
            log.warning("no usable code observable for system %s; skipped", system)
            continue
        arrays = [np.asarray(obs_ds[c].values, dtype=float)[:, cols] for c in codes]
        if len(codes) == 2:
            f1, f2 = (ionosphere.frequency_hz(system, c) for c in codes)
            p = ionosphere.ionosphere_free(arrays[0], arrays[1], f1, f2)
            freq = np.nan
        else:
            p = arrays[0]
            freq = ionosphere.frequency_hz(system, codes[0])
        lo, hi = PLAUSIBLE_RANGE_M[system]
        p = np.where((p > lo) & (p < hi), p, np.nan)        # gross errors and empty fields
        ep, col = np.nonzero(np.isfinite(p))
        parts["epoch"].append(ep)
        parts["sv"].append(sv_all[cols][col])
        parts["system"].append(np.full(ep.size, system))
        parts["pseudorange_m"].append(p[ep, col])
        parts["code"].append(np.full(ep.size, "+".join(codes)))
        parts["frequency_hz"].append(np.full(ep.size, freq))
    if not parts["epoch"]:
        raise NoDataError("no pseudoranges of a supported system (GPS, Galileo, BeiDou, QZSS) "
                          "in the observation data")
    out = {k: np.concatenate(v) for k, v in parts.items()}
    order = np.lexsort((out["sv"], out["epoch"]))
    return {k: v[order] for k, v in out.items()}


def prepare_observations(obs_ds, nav, systems=None, include_unhealthy: bool = False) -> dict:
    """Flat per-observation arrays with transmit time, satellite state and clock terms
    from the broadcast records of ``nav`` (a ``NavigationData``)."""
    obs = select_pseudoranges(obs_ds, systems)
    times = np.asarray(obs_ds["time"].values, dtype="datetime64[ns]")
    obs["time"] = times[obs["epoch"]]
    n = obs["epoch"].size
    obs["transmit_offset_s"] = np.full(n, np.nan)
    obs["satellite_ecef_m"] = np.full((n, 3), np.nan)
    obs["ephemeris_row"] = np.full(n, -1, dtype=np.int64)
    for name in ("clock_poly_s", "periodic_s", "j2_s", "group_delay_m", "eccentric_anomaly_rad"):
        obs[name] = np.full(n, np.nan)
    for system in np.unique(obs["system"]):
        eph = nav.ephemerides.get(system) if hasattr(nav.ephemerides, "get") else None
        idx = np.flatnonzero(obs["system"] == system)
        if eph is None or len(eph) == 0:
            log.warning("no broadcast records for system %s in the navigation data", system)
            continue
        sv, t = obs["sv"][idx], obs["time"][idx]
        rows = satellites.select_records(eph, sv, t, include_unhealthy=include_unhealthy)
        rec = satellites.record_arrays(eph, rows)
        offset = -obs["pseudorange_m"][idx] / C_M_S          # t_tx^sv - t_rx
        dt_sv = np.zeros(idx.size)
        for _ in range(3):                                   # t_tx = t_tx^sv - dt_sv(t_tx)
            pos, ecc, u, inc = satellites.kepler_position(rec, t, system, sv, offset - dt_sv)
            periodic = satellites.periodic_term_s(rec, ecc, system)
            poly = satellites.clock_polynomial_s(rec, t, offset - dt_sv)
            dt_sv = poly + periodic
        codes = tuple(obs["code"][idx[0]].split("+"))
        obs["transmit_offset_s"][idx] = offset - dt_sv
        obs["satellite_ecef_m"][idx] = pos
        obs["ephemeris_row"][idx] = rows
        obs["clock_poly_s"][idx] = poly
        obs["periodic_s"][idx] = periodic
        obs["eccentric_anomaly_rad"][idx] = ecc
        obs["j2_s"][idx] = satellites.j2_clock_term_s(rec, u, inc, system)
        obs["group_delay_m"][idx] = np.where(rows >= 0, ionosphere.group_delay_m(
            system, codes, eph.iloc[np.where(rows >= 0, rows, 0)]), np.nan)
    return obs
