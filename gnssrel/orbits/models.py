"""How a broadcast record becomes a satellite state and a clock: the orbit models, and the
broadcast clock polynomial, each written once.

:data:`ORBIT_MODELS` maps the ``orbit_model`` of a system (:data:`gnssrel.systems.SYSTEM_MODELS`)
to its evaluator and the record columns it reads:

* ``"keplerian"``: :func:`gnssrel.orbits.keplerian.kepler_states` (IS-GPS-200 Table 20-IV;
  Galileo, BeiDou incl. GEO, QZSS);
* ``"state_vector"``: :func:`gnssrel.orbits.glonass.glonass_states` (RK4 on the PZ-90
  state at t_b, GLONASS ICD 2008 A.3.1.2);
* ``"sbas_quadratic"``: :func:`gnssrel.orbits.geo_states.sbas_states` (the SBAS GEO
  message's position, velocity and acceleration as a quadratic in t - t_0, RTCA DO-229 A.4.4.11).

Every evaluator takes ``(records, t_gpst, system)``, records a mapping of contract columns
to arrays broadcastable with ``t_gpst``, and returns the keys of ``kepler_states``
(``position_ecef_m``, ``velocity_ecef_m_per_s``, ``eccentric_anomaly_rad`` (NaN without
elements), ``argument_of_latitude_rad``, ``radius_m``, ``inclination_rad``, ``tk_s``).

Broadcast clock polynomial (the satellite clock offset, seconds, to be *subtracted* from
a satellite's transmit time to get system time; no periodic term, no group delay):
``a0 + a1 dt + a2 dt^2``, dt = t - t_oc in integer nanoseconds first
(:func:`gnssrel.timescales.seconds_between`), folded into +-302 400 s where the system says
so, with the columns the system model names (``clock_columns``):

* GPS, QZSS: a_f0 + a_f1 dt + a_f2 dt^2 with the week crossover (IS-GPS-200
  20.3.3.3.3.1; IS-QZSS-PNT 5.x, same algorithm); Galileo: the same form (Galileo OS
  SIS ICD 5.1.4); BeiDou: the same form (BDS-SIS-ICD-B1I 3.0, 5.2.4.9);
* GLONASS: -tau_n + gamma_n (t - t_b) (GLONASS ICD 2008 ed. 5.1, 3.3.3; RINEX stores
  -tau_n and +gamma_n, so the file's columns are added as they are; t_b is a full
  datetime here, so no day crossover is needed);
* NavIC: the GPS form (IRNSS SPS ICD 1.1, from memory); SBAS: a_Gf0 + a_Gf1 (t - t_0,GEO)
  (RTCA DO-229 A.4.4.11, from memory), no a2, no fold (t_0 is a full GPST datetime).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from gnssrel.orbits import geo_states
from gnssrel.orbits.glonass import ACCELERATION_COLUMNS, STATE_COLUMNS, glonass_states
from gnssrel.orbits.keplerian import ELEMENT_COLUMNS, OPTIONAL_COLUMNS, kepler_states
from gnssrel.orbits.selection import take_rows
from gnssrel.systems import ORBIT_KEPLERIAN, ORBIT_SBAS_QUADRATIC, ORBIT_STATE_VECTOR, system_model
from gnssrel.timescales import seconds_between, week_crossover

__all__ = ["ORBIT_MODELS", "OrbitModel", "broadcast_clock_s", "clock_polynomial_s", "orbit_model"]


@dataclass(frozen=True)
class OrbitModel:
    """An orbit model: its evaluator and the record columns it reads."""

    name: str
    evaluate: Callable            # (records, t_gpst, system) -> state dict (module text)
    columns: tuple                # record columns it needs
    optional_columns: tuple = ()  # record columns it reads where the table has them


ORBIT_MODELS = {m.name: m for m in (
    OrbitModel(ORBIT_KEPLERIAN, kepler_states, ELEMENT_COLUMNS, OPTIONAL_COLUMNS),
    OrbitModel(ORBIT_STATE_VECTOR, lambda records, t, system: glonass_states(records, t),
               ("toc",) + STATE_COLUMNS + ACCELERATION_COLUMNS),
    OrbitModel(ORBIT_SBAS_QUADRATIC, geo_states.sbas_states,
               ("toc",) + geo_states.STATE_COLUMNS + geo_states.ACCELERATION_COLUMNS),
)}
"""Orbit models by the name a system model gives (module text)."""


def orbit_model(system: str) -> OrbitModel:
    """The orbit model of a system letter (or satellite name)."""
    return ORBIT_MODELS[system_model(system).orbit_model]


def clock_polynomial_s(records: Mapping, t_gpst, system: str) -> np.ndarray:
    """Broadcast clock polynomial (s) of records at GPST times (module text).

    ``records``: mapping with ``toc`` and the system's ``clock_columns``, arrays
    broadcastable with ``t_gpst`` (datetime64).  NaN where ``toc`` or ``t_gpst`` is NaT.
    """
    model = system_model(system)
    a0, a1, a2 = model.clock_columns
    t = np.asarray(t_gpst).astype("datetime64[ns]")
    toc = np.asarray(records["toc"]).astype("datetime64[ns]")
    dt_s = np.where(np.isnat(t) | np.isnat(toc), np.nan, seconds_between(t, toc))
    if model.clock_week_fold:
        # IS-GPS-200 20.3.3.3.3.1: fold t - t_oc into +-302 400 s.  With toc a full GPST
        # datetime the fold changes nothing unless toc was built wrongly.
        dt_s = week_crossover(dt_s)
    clock = np.asarray(records[a0], dtype=np.float64) + np.asarray(records[a1], dtype=np.float64) * dt_s
    if a2 is not None:
        clock = clock + np.asarray(records[a2], dtype=np.float64) * dt_s * dt_s
    return clock


def broadcast_clock_s(table, rows, t_gpst, system: str) -> np.ndarray:
    """Broadcast clock polynomial (s) from ephemeris rows at GPST times.

    ``table``: the system's ephemeris DataFrame (DEVELOPERS.md contract);
    ``rows``: int array of row indices (-1: no ephemeris -> NaN); ``t_gpst``:
    datetime64 array broadcastable with ``rows``.  Output has their broadcast shape.
    """
    rows, t = np.broadcast_arrays(np.asarray(rows, dtype=np.int64),
                                  np.asarray(t_gpst).astype("datetime64[ns]"))
    columns = ("toc",) + tuple(c for c in system_model(system).clock_columns if c is not None)
    return clock_polynomial_s({c: take_rows(table, c, rows) for c in columns}, t, system)
