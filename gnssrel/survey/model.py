"""The carrier-phase observation model, each relativistic term switchable.

For one ionosphere-free observation of satellite s (metres):

    P   = rho + c dt_r - c (dt_s + k dt_per + dt_J2) + S + T0 + m_w(el) ZWD
    Phi = P-model + N_arc + w c / (f1 + f2)                       (code biases and noise aside)

* rho: geometric range from the satellite's centre of mass at transmit time (precise orbit,
  :func:`gnssrel.audit.satellites.precise_at_transmit`; no satellite antenna offset unless the
  caller moved the orbits with ``--antex``) to the antenna reference point of the receiver, moved
  by the solid Earth tide (:mod:`gnssrel.survey.tides`), with the Earth's rotation during the
  flight (Sagnac, :func:`gnssrel.audit.corrections.line_of_sight`); ``sagnac`` off: without it.
* dt_s: the product's clock (RINEX clock or SP3).  dt_per: the periodic term, ``spec`` form
  F e sqrt(A) sin E with the broadcast elements of NAV at the transmit time
  (:func:`gnssrel.audit.satellites.broadcast_at_transmit`; -2 r.v/c^2 where a satellite has no
  record, counted), ``state`` form -2 r.v/c^2 with the precise state, or ``omitted``.  k = 1.
  ``clock_convention`` "excludes" (IGS convention: the user adds the periodic term) or
  "includes" (the clock holds it: the user adds nothing).
* dt_J2: the J2 periodic term (Kouba 2004, :func:`gnssrel.relativity.clock_terms.j2_periodic_s`).
* S: the Shapiro delay (IERS Conventions 2010 eq. 11.17).
* T0: Saastamoinen zenith delays of a standard atmosphere with Niell mapping (the code path's
  a-priori, :mod:`gnssrel.audit.troposphere`); ZWD: the estimated wet correction.
* w: the phase wind-up in cycles (:mod:`gnssrel.survey.windup`), continuous per satellite.
"""

from __future__ import annotations

import numpy as np

from gnssrel import geodesy
from gnssrel.audit import troposphere
from gnssrel.audit.corrections import line_of_sight
from gnssrel.audit.satellites import broadcast_at_transmit, precise_at_transmit
from gnssrel.constants import C_M_S
from gnssrel.survey import tides, windup
from gnssrel.timescales import seconds_between

FULL_TERMS = {"periodic": "spec", "j2": True, "shapiro": True, "sagnac": True, "clock_convention": "excludes"}
"""Every term applied: the reference solution of the term effects."""
PERIODIC_CHOICES = ("spec", "state", "omitted")
NO_BROADCAST = "no broadcast record: periodic term in the state form"


def arp_offset_ecef_m(reference_ecef_m, delta_hen_m) -> np.ndarray:
    """ECEF vector from the marker to the antenna reference point (RINEX ANTENNA: DELTA H/E/N)."""
    h, e, n = (float(v) for v in delta_hen_m)
    lat, lon, _ = geodesy.ecef_to_geodetic(np.asarray(reference_ecef_m, float))
    return np.array([e, n, h]) @ geodesy.enu_rotation(lat, lon)


def satellite_terms(obs: dict, nav, precise: dict) -> dict:
    """Add the satellite state and clock terms at transmit time to the flat observation dict
    (keys ``satellite_ecef_m``, ``clock_m``, ``periodic_spec_m``, ``periodic_state_m``, ``j2_m``,
    ``spec_from_state`` bool); one call per system."""
    n = obs["sv"].size
    pos, vel = np.full((n, 3), np.nan), np.full((n, 3), np.nan)
    keys = ("clock_m", "periodic_spec_m", "periodic_state_m", "j2_m")
    out = {k: np.full(n, np.nan) for k in keys}
    fallback = np.zeros(n, bool)
    for system in np.unique(obs["system"]):
        idx = np.flatnonzero(obs["system"] == system)
        st = precise_at_transmit(precise["orbits"], precise["clocks"], system, obs["sv"][idx],
                                 obs["time"][idx], obs["code_if_m"][idx])
        pos[idx], vel[idx] = st["position_ecef_m"], st["velocity_ecef_m_per_s"]
        out["clock_m"][idx] = C_M_S * st["satellite_clock_s"]
        out["periodic_state_m"][idx] = C_M_S * st["periodic_s"]
        out["j2_m"][idx] = C_M_S * st["j2_s"]
        spec = np.full(idx.size, np.nan)
        table = getattr(nav, "ephemerides", {}).get(system) if nav is not None else None
        if table is not None and len(table):
            bc = broadcast_at_transmit(table, system, obs["sv"][idx], obs["time"][idx], obs["code_if_m"][idx])
            spec = np.where(bc["status"] == 0, C_M_S * bc["periodic_s"], np.nan)
        fallback[idx] = ~np.isfinite(spec)
        out["periodic_spec_m"][idx] = np.where(np.isfinite(spec), spec, out["periodic_state_m"][idx])
    obs.update(out, satellite_ecef_m=pos, satellite_velocity_ecef_m_per_s=vel, spec_from_state=fallback)
    return obs


def geometry(obs: dict, arp_ecef_m, with_tide: bool = True) -> dict:
    """Receiver-side terms at the antenna reference point ``arp_ecef_m`` (3,): ``range_m`` (with
    the Earth's rotation), ``sagnac_m``, ``shapiro_m``, ``elevation_rad``, ``unit_los``,
    ``troposphere_m`` (a priori), ``wet_mapping``, ``windup_m``, ``tide_ecef_m``."""
    t = obs["time"]
    epochs, inverse = np.unique(t, return_inverse=True)
    tide = tides.solid_tide_m(arp_ecef_m, epochs)[inverse] if with_tide else np.zeros((t.size, 3))
    rx = np.asarray(arp_ecef_m, float)[None, :] + tide
    los = line_of_sight(obs, rx, sagnac=True)
    lat, _, h = geodesy.ecef_to_geodetic(np.asarray(arp_ecef_m, float))
    doy = seconds_between(t, t.astype("datetime64[Y]")) / 86_400.0 + 1.0
    tropo = troposphere.slant_delay_m(los["elevation_rad"], lat, h, doy)
    wet = troposphere.niell_mapping(los["elevation_rad"], lat, h, doy)[1]
    w = windup.windup_cycles(t, obs["satellite_ecef_m"], np.asarray(arp_ecef_m, float))
    grid = np.full((epochs.size, obs["sv_index"].max() + 1), np.nan)
    grid[inverse, obs["sv_index"]] = w
    w = windup.continuous(grid)[inverse, obs["sv_index"]]
    return {"range_m": los["range_m"], "sagnac_m": los["sagnac_m"], "shapiro_m": los["shapiro_m"],
            "elevation_rad": los["elevation_rad"], "azimuth_rad": los["azimuth_rad"], "unit_los": los["unit_los"],
            "troposphere_m": tropo, "wet_mapping": wet, "windup_m": w * C_M_S / (obs["f1"] + obs["f2"]),
            "tide_ecef_m": tide}


def periodic_m(obs: dict, terms: dict) -> np.ndarray:
    """The periodic term the user adds under ``terms`` (metres, per observation)."""
    if terms.get("clock_convention", "excludes") == "includes" or terms["periodic"] == "omitted":
        return np.zeros(obs["sv"].size)
    if terms["periodic"] == "state":
        return obs["periodic_state_m"]
    return obs["periodic_spec_m"]


def observed_minus_computed(obs: dict, geo: dict, terms: dict | None = None) -> tuple[np.ndarray, np.ndarray]:
    """(code, phase) observed minus computed, metres, without receiver clock, ZWD and ambiguity."""
    t = dict(FULL_TERMS)
    t.update(terms or {})
    rng = geo["range_m"] if t["sagnac"] else geo["range_m"] - geo["sagnac_m"]
    computed = (rng - obs["clock_m"] - periodic_m(obs, t) - (obs["j2_m"] if t["j2"] else 0.0)
                + (geo["shapiro_m"] if t["shapiro"] else 0.0) + geo["troposphere_m"])
    return obs["code_if_m"] - computed, obs["phase_if_m"] - computed - geo["windup_m"]
