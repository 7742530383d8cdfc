"""Satellite position and clock at each observation's own transmit time.

The audit needs every satellite at the transmit time of each observation, which
differs per observation, so it evaluates the shared orbit and clock stages on
flat arrays ``(n,)`` (positions ``(n, 3)``) instead of on a fixed grid:

* broadcast record: :func:`gnssrel.orbits.selection.select_ephemerides` under the
  named rule (``"post"`` by default, or ``"receiver"``: only records already
  transmitted; the limits per system as data: maximum age, health),
  chosen at the receive time tag (the transmit time is 0.07-0.13 s earlier,
  which cannot change the choice except at a record's very edge);
* broadcast orbit: the system's orbit model (:func:`gnssrel.orbits.models.orbit_model`:
  Keplerian elements for G, E, C, J, the GLONASS state vector for R);
* broadcast clock polynomial: :func:`gnssrel.orbits.models.broadcast_clock_s`;
* precise orbit: :func:`gnssrel.orbits.precise.precise_states`, one satellite
  at a time at its own transmit times; precise clock from the SP3 or a RINEX
  clock file via :func:`gnssrel.orbits.interpolation.interpolate_clock`;
* periodic term: :func:`gnssrel.relativity.clock_terms.periodic_term_s` decides the
  form (F e sqrt(A) sin E from the broadcast elements, IS-GPS-200 20.3.3.3.3.1, where
  the system's records carry elements, else -2 r.v / c^2: GLONASS); precise states:
  :func:`~gnssrel.relativity.clock_terms.periodic_state_s`; J2 term:
  :func:`~gnssrel.relativity.clock_terms.j2_periodic_s`.

Whether the clock of the source already holds the periodic term is a rule of the
system model (``polynomial_holds_periodic`` of :data:`gnssrel.systems.SYSTEM_MODELS`:
GLONASS broadcast yes, the others no); precise clocks exclude it for every system (IGS convention,
refdata README; the demo products likewise).

Transmit time (common practice; IS-GPS-200 20.3.3.3.3.1 for the clock): a code
pseudorange is c (t_rx - t_tx^sv), t_rx the receiver's time tag and t_tx^sv the
satellite clock reading at transmission, so t_tx = t_rx - P/c - dt_sv(t_tx),
iterated for dt_sv (the satellite's full clock, periodic term included).  This
needs no receiver position and holds whatever the receiver clock error.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import C_M_S, SYSTEMS
from gnssrel.orbits.frames import inertial_velocity, osculating_elements
from gnssrel.orbits.interpolation import interpolate_clock
from gnssrel.orbits.models import broadcast_clock_s, orbit_model
from gnssrel.orbits.precise import precise_states
from gnssrel.orbits.selection import DEFAULT_RULE, select_ephemerides, take_rows
from gnssrel.orbits.status import STATUS_OK, STATUS_OUTSIDE
from gnssrel.relativity.clock_terms import j2_periodic_s, periodic_state_s, periodic_term_s
from gnssrel.systems import system_model

TRANSMIT_ITERATIONS = 3
"""dt_sv is below 1 ms, so each step shrinks the error by a factor ~1e-3: 3 are plenty."""



def offset_times(t_gpst, offset_s) -> np.ndarray:
    """``t_gpst + offset_s`` as datetime64[ns] (offset rounded to 1 ns: 4 um of satellite motion);
    NaN offsets give NaT."""
    offset = np.asarray(offset_s, dtype=float)
    ns = np.where(np.isfinite(offset), np.round(offset * 1e9), 0.0).astype("int64")
    out = np.asarray(t_gpst).astype("datetime64[ns]") + ns.astype("timedelta64[ns]")
    return np.where(np.isfinite(offset), out, np.datetime64("NaT"))


def choose_records(table, system: str, sv, t_gpst, include_unhealthy: bool = False,
                   rule: str = DEFAULT_RULE):
    """(row, status) per observation from :func:`select_ephemerides` (under ``rule``) on the
    grid of the observations' distinct times and satellites; ``sv``, ``t_gpst``: ``(n,)``."""
    names, sv_idx = np.unique(np.asarray(sv), return_inverse=True)
    epochs, t_idx = np.unique(np.asarray(t_gpst).astype("datetime64[ns]"), return_inverse=True)
    rows, status = select_ephemerides(table, list(names), epochs, system, include_unhealthy, rule=rule)
    return rows[t_idx.ravel(), sv_idx.ravel()], status[t_idx.ravel(), sv_idx.ravel()]


def _j2_term_s(radius_or_a_m, inclination_rad, argument_of_latitude_rad, system):
    const = SYSTEMS[system]
    return j2_periodic_s(radius_or_a_m, inclination_rad, argument_of_latitude_rad,
                         gm=const.gm_m3_s2, j2=const.j2, a_earth=const.ellipsoid_a_m)


def transmit_states(state_at, t_rx, pseudorange_m) -> dict:
    """Iterate t_tx = t_rx - P/c - dt_sv(t_tx).  ``state_at(t_gpst)`` returns a dict with
    ``clock_total_s`` (the satellite's full clock offset) among its arrays.  The result is
    the last dict plus ``transmit_offset_s`` (t_tx - t_rx, float seconds)."""
    offset = -np.asarray(pseudorange_m, float) / C_M_S
    dt_sv = np.zeros(offset.shape)
    for _ in range(TRANSMIT_ITERATIONS):
        state = state_at(offset_times(t_rx, offset - dt_sv))
        dt_sv = state["clock_total_s"]
    state["transmit_offset_s"] = offset - dt_sv
    return state


def broadcast_at_transmit(table, system: str, sv, t_rx, pseudorange_m, include_unhealthy: bool = False,
                          rule: str = DEFAULT_RULE) -> dict:
    """Broadcast state and clock of each observation at its transmit time.

    Returns ``(n,)`` arrays (vectors ``(n, 3)``): ``position_ecef_m`` (Earth-fixed frame of
    the transmit time), ``velocity_ecef_m_per_s``, ``satellite_clock_s`` (the polynomial),
    ``periodic_s``, ``periodic_in_clock`` (bool: the polynomial holds it), ``j2_s``,
    ``clock_total_s``, ``transmit_offset_s``, ``ephemeris_row``, ``status``
    (:data:`gnssrel.orbits.selection.STATUS_CODES`).  ``rule``: the record-selection rule.
    """
    rows, status = choose_records(table, system, sv, t_rx, include_unhealthy, rule)
    model, orbit = system_model(system), orbit_model(system)
    holds = model.polynomial_holds_periodic
    wanted = orbit.columns + tuple(c for c in orbit.optional_columns if c in table)
    rec = {c: take_rows(table, c, rows) for c in wanted}

    def state_at(t):
        st = orbit.evaluate(rec, t, system)
        st["periodic_s"], _ = periodic_term_s(system, st["position_ecef_m"], st["velocity_ecef_m_per_s"],
                                              rec.get("eccentricity"), rec.get("sqrt_a_sqrt_m"),
                                              st["eccentric_anomaly_rad"])
        # without elements (GLONASS, e ~ 0.001) the radius stands for a
        a_m = rec["sqrt_a_sqrt_m"] ** 2 if model.has_elements else st["radius_m"]
        st["j2_s"] = _j2_term_s(a_m, st["inclination_rad"], st["argument_of_latitude_rad"], system)
        st["satellite_clock_s"] = broadcast_clock_s(table, rows, t, system)
        st["clock_total_s"] = st["satellite_clock_s"] + (0.0 if holds else st["periodic_s"])
        return st

    st = transmit_states(state_at, np.asarray(t_rx), pseudorange_m)
    st.update(ephemeris_row=rows, status=status, periodic_in_clock=np.full(rows.shape, holds))
    return st


def precise_at_transmit(orbits, clocks, system: str, sv, t_rx, pseudorange_m) -> dict:
    """Precise state and clock of each observation at its transmit time (keys as
    :func:`broadcast_at_transmit`, without ``ephemeris_row``).

    ``orbits``: a :func:`gnssrel.io.sp3.read_sp3` Dataset; ``clocks``: a Dataset with
    ``clock_s`` (time, sv), the SP3 itself or a RINEX clock file.  Positions are the
    product's (for real products: the centre of mass; no antenna offset is applied).
    """
    sv = np.asarray(sv)
    orbit_svs = set(np.asarray(orbits["sv"].values).astype(str))
    clock_svs = set(np.asarray(clocks["sv"].values).astype(str))
    clock_times = clocks["time"].values
    groups = {name: np.flatnonzero(sv == name) for name in np.unique(sv)}
    const = SYSTEMS[system]

    def state_at(t):
        n = t.shape[0]
        pos, vel, clock = np.full((n, 3), np.nan), np.full((n, 3), np.nan), np.full(n, np.nan)
        for name, idx in groups.items():            # a loop over satellites, vectorized over times
            if name in orbit_svs:
                ds = precise_states(orbits, t[idx], svs=[name])
                pos[idx] = ds["position_ecef_m"].values[:, 0]
                vel[idx] = ds["velocity_ecef_m_per_s"].values[:, 0]
            if name in clock_svs:
                clock[idx] = interpolate_clock(clock_times, clocks["clock_s"].sel(sv=name).values, t[idx])
        periodic = periodic_state_s(pos, vel)
        # Inertial velocity in the axes of the instant (v + omega x r) for the osculating i and u.
        with np.errstate(invalid="ignore", divide="ignore"):
            el = osculating_elements(pos, inertial_velocity(pos, vel, const.omega_earth_rad_s), const.gm_m3_s2)
        j2 = _j2_term_s(el["semi_major_axis_m"], el["inclination_rad"], el["argument_of_latitude_rad"], system)
        return {"position_ecef_m": pos, "velocity_ecef_m_per_s": vel, "satellite_clock_s": clock,
                "periodic_s": periodic, "j2_s": j2, "clock_total_s": clock + periodic}

    st = transmit_states(state_at, np.asarray(t_rx), pseudorange_m)
    ok = np.all(np.isfinite(st["position_ecef_m"]), axis=1) & np.isfinite(st["satellite_clock_s"])
    st["status"] = np.where(ok, STATUS_OK, STATUS_OUTSIDE).astype(np.int8)   # orbits.status codes
    st["periodic_in_clock"] = np.zeros(ok.shape, bool)
    return st
