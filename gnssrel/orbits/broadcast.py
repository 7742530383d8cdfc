"""State histories from broadcast navigation data: select, evaluate, assemble.

``broadcast_states(nav, times)`` returns the DEVELOPERS.md state-history
Dataset on a (time, sv) grid for every system in the navigation data:
each system through its orbit model (:mod:`gnssrel.orbits.models`: Keplerian
elements, or GLONASS's state vector), each (epoch, satellite) served by the record that
``selection.select_ephemerides`` chooses under the named rule (``"post"`` by
default).  Epochs without a usable record are NaN, with the reason in ``status``
(codes in ``attrs["status_codes"]``, the rule in ``attrs["selection_rule"]``).

Broadcast clock polynomial, ``clock_poly_s`` (no periodic relativistic term, no group
delay): :func:`gnssrel.orbits.models.clock_polynomial_s` (a_f0 + a_f1 dt + a_f2 dt^2 with
the week crossover; GLONASS -tau_n + gamma_n (t - t_b)).  ``toe`` is the record's reference
time (t_b for GLONASS).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import xarray as xr

from gnssrel.constants import ALL_SYSTEM_ORDER, SYSTEM_ORDER
from gnssrel.orbits.frames import OMEGA_ECI_RAD_S, ecef_to_eci
from gnssrel.orbits.models import clock_polynomial_s, orbit_model
from gnssrel.orbits.selection import DEFAULT_RULE, get_rule, select_ephemerides, status_codes
from gnssrel.systems import system_model
from gnssrel.timescales import as_datetime64

AXES = ("x", "y", "z")
_FLOAT_VARIABLES = ("clock_poly_s", "eccentricity", "sqrt_a_sqrt_m", "eccentric_anomaly_rad",
                    "argument_of_latitude_rad", "inclination_rad", "radius_m")


def time_grid(start, end, step_s: float) -> np.ndarray:
    """GPST epochs from ``start`` to ``end`` inclusive every ``step_s`` seconds (datetime64[ns])."""
    t0, t1 = as_datetime64(start)[()], as_datetime64(end)[()]
    step_ns = round(float(step_s) * 1e9)
    if step_ns <= 0:
        raise ValueError(f"time step must be positive, not {step_s!r} s")
    count = int((t1 - t0).astype(np.int64) // step_ns) + 1
    return t0 + (np.arange(max(count, 0), dtype=np.int64) * step_ns).astype("timedelta64[ns]")


def _ephemerides(nav) -> Mapping:
    return nav.ephemerides if hasattr(nav, "ephemerides") else nav


def _system_block(table, letter: str, times: np.ndarray, include_unhealthy: bool, rule: str) -> dict:
    """Arrays (n_time, n_sv[, 3]) for one system's satellites."""
    svs = sorted(table["sv"].unique())
    rows, status = select_ephemerides(table, svs, times, letter, include_unhealthy, rule=rule)
    n_time, n_sv = rows.shape
    valid = rows >= 0
    picked = rows[valid]
    t_valid = np.broadcast_to(times[:, None], rows.shape)[valid]
    cols = {c: table[c].to_numpy()[picked] for c in table.columns if c not in ("sv", "line")}
    states = orbit_model(letter).evaluate(cols, t_valid, letter)
    clock = clock_polynomial_s(cols, t_valid, letter)
    toe = cols[system_model(letter).reference_column]
    ecc = cols.get("eccentricity", np.full(picked.size, np.nan))
    sqrt_a = states.get("sqrt_a_sqrt_m", cols.get("sqrt_a_sqrt_m", np.full(picked.size, np.nan)))  # CNAV: A_k

    def grid(values, fill=np.nan, dtype=np.float64, tail=()):
        out = np.full((n_time, n_sv) + tail, fill, dtype=dtype)
        out[valid] = values
        return out

    block = {"sv": svs, "status": status, "ephemeris_row": rows,
             "position_ecef_m": grid(states["position_ecef_m"], tail=(3,)),
             "velocity_ecef_m_per_s": grid(states["velocity_ecef_m_per_s"], tail=(3,)),
             "clock_poly_s": grid(clock), "eccentricity": grid(ecc), "sqrt_a_sqrt_m": grid(sqrt_a),
             "toe": grid(np.asarray(toe).astype("datetime64[ns]"), np.datetime64("NaT"), "datetime64[ns]"),
             "toc": grid(np.asarray(cols["toc"]).astype("datetime64[ns]"), np.datetime64("NaT"),
                         "datetime64[ns]")}
    for name in ("eccentric_anomaly_rad", "argument_of_latitude_rad", "inclination_rad", "radius_m"):
        block[name] = grid(states[name])
    return block


def broadcast_states(nav, times, systems=None, include_unhealthy: bool = False,
                     frame: str = "ecef", rule: str = DEFAULT_RULE) -> xr.Dataset:
    """Satellite state histories from broadcast ephemerides.

    nav: ``NavigationData`` (or a mapping letter -> ephemeris DataFrame).
    times: datetime64[ns] GPST epochs (n_time).
    systems: letters to include (default: every system in ``nav`` that gnssrel handles).
    include_unhealthy: use unhealthy records and rule-excluded satellites too.
    frame: ``"ecef"``, or ``"eci"`` to add ``position_eci_m`` / ``velocity_eci_m_per_s``
        in the ECEF frame frozen at the first epoch (``gnssrel.orbits.frames``).
    rule: the record-selection rule, ``"post"`` (default) or ``"receiver"``
        (:mod:`gnssrel.orbits.selection`); kept in ``attrs["selection_rule"]``.

    Returns the contract Dataset: dims (time, sv, axis); ``position_ecef_m``,
    ``velocity_ecef_m_per_s`` (time, sv, axis); ``status`` int8 (time, sv) with
    ``attrs["status_codes"]``; ``clock_poly_s``, ``eccentricity``, ``sqrt_a_sqrt_m``,
    ``eccentric_anomaly_rad``, ``argument_of_latitude_rad``, ``inclination_rad``,
    ``radius_m``, ``toe``, ``toc``, ``ephemeris_row`` (row in the system's table, -1 none).
    """
    if frame not in ("ecef", "eci"):
        raise ValueError(f"frame must be 'ecef' or 'eci', not {frame!r}")
    get_rule(rule)
    times = as_datetime64(times).ravel()
    tables = _ephemerides(nav)
    wanted = SYSTEM_ORDER if systems is None else "".join(systems).upper()
    letters = [s for s in ALL_SYSTEM_ORDER if s in wanted and s in tables and len(tables[s])]  # I, S when asked
    blocks = [_system_block(tables[s], s, times, include_unhealthy, rule) for s in letters]
    if not blocks:
        blocks = [{"sv": [], "status": np.zeros((times.size, 0), np.int8),
                   "ephemeris_row": np.zeros((times.size, 0), np.int64),
                   "position_ecef_m": np.zeros((times.size, 0, 3)),
                   "velocity_ecef_m_per_s": np.zeros((times.size, 0, 3)),
                   "toe": np.zeros((times.size, 0), "datetime64[ns]"),
                   "toc": np.zeros((times.size, 0), "datetime64[ns]"),
                   **{k: np.zeros((times.size, 0)) for k in _FLOAT_VARIABLES}}]
    joined = {k: np.concatenate([b[k] for b in blocks], axis=1) for k in blocks[0] if k != "sv"}
    svs = [sv for b in blocks for sv in b["sv"]]
    vec, flat = ("time", "sv", "axis"), ("time", "sv")
    data = {k: (vec if v.ndim == 3 else flat, v) for k, v in joined.items()}
    ds = xr.Dataset(data, coords={"time": times, "sv": np.array(svs, dtype="<U3"), "axis": list(AXES)})
    ds["status"].attrs["status_codes"] = status_codes(rule, "".join(letters))
    ds.attrs.update(time_scale="GPST", frame="ECEF", source="broadcast",
                    include_unhealthy=int(include_unhealthy), selection_rule=rule)
    if frame == "eci" and times.size:
        t_ref = times[0]
        t_b = np.broadcast_to(times[:, None], ds["status"].shape)
        r_eci, v_eci = ecef_to_eci(ds["position_ecef_m"].values, ds["velocity_ecef_m_per_s"].values,
                                   t_b, t_ref)
        ds["position_eci_m"] = (vec, r_eci)
        ds["velocity_eci_m_per_s"] = (vec, v_eci)
        ds.attrs.update(eci_reference_time=str(t_ref), eci_rotation_rate_rad_per_s=OMEGA_ECI_RAD_S,
                        eci_frame="ECEF frozen at eci_reference_time (rotation about z only)")
    return ds
