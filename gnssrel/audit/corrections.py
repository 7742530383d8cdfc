"""Every correction of every code observation, and the modelled pseudorange.

For one observation of satellite s at receiver r (all terms in metres):

    P_model = rho + c dt_r - c (dt_sat + k_p dt_periodic + dt_J2) + T + I + D + S

* rho: geometric range at transmit time, with the Earth's rotation during the
  flight (Sagnac): :func:`gnssrel.relativity.signal_path.light_time` turns the
  satellite's Earth-fixed position at transmit time by omega_E tau about z into
  the frame of the reception time, tau the flight time, iterated (Ashby 2003
  section 2).  The transmit time itself comes from the pseudorange
  (:mod:`gnssrel.audit.satellites`), so the satellite position is held fixed
  in that iteration.  ``sagnac_m`` is the difference the rotation makes.
* dt_sat: the broadcast clock polynomial or the precise clock; dt_periodic the
  periodic relativistic term (IS-GPS-200 20.3.3.3.3.1).  k_p = 1 is the
  specification ("applied"), 0 omitted, -1 reversed, 2 doubled; where the clock
  already holds the term (GLONASS broadcast clocks: ``periodic_in_clock``,
  :data:`gnssrel.clocks.broadcast.POLYNOMIAL_HOLDS_PERIODIC`) the user adds
  nothing under any hypothesis.
* dt_J2: the J2 periodic clock term (Kouba 2004); the broadcast user algorithm
  does not apply it, so it is off by default (about 2 cm).
* T: Saastamoinen + Niell troposphere (:mod:`gnssrel.audit.troposphere`).
* I: Klobuchar for single-frequency codes, 0 for the ionosphere-free combination.
* D: satellite group delay (:func:`gnssrel.audit.ionosphere.group_delay_m`).
* S: Shapiro delay, :func:`gnssrel.relativity.signal_path.shapiro_m` (IERS
  Conventions 2010 eq. 11.17, gamma = 1).

``terms`` (a mapping) switches the relativistic pieces:
``{"periodic": "applied" | "omitted" | "reversed" | "doubled" | factor,
"sagnac": bool, "shapiro": bool, "j2": bool}``; missing keys take :data:`DEFAULT_TERMS`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from gnssrel import geodesy
from gnssrel.audit import ionosphere, troposphere
from gnssrel.audit.observables import prepare_observations
from gnssrel.audit.relativity_fit import HYPOTHESES
from gnssrel.audit.satellites import offset_times
from gnssrel.constants import C_M_S, SYSTEMS
from gnssrel.errors import GnssrelInputError
from gnssrel.relativity.signal_path import light_time, shapiro_m
from gnssrel.timescales import seconds_between

DEFAULT_TERMS = {"periodic": "applied", "sagnac": True, "shapiro": True, "j2": False}
PERIODIC_FACTORS = HYPOTHESES
"""Factor on the periodic term per named hypothesis (the same names as the k fit's)."""


def resolve_terms(terms=None) -> dict:
    """Complete a ``terms`` mapping with the defaults and turn the periodic choice into a factor."""
    out = dict(DEFAULT_TERMS)
    out.update(terms or {})
    p = out["periodic"]
    if isinstance(p, str):
        if p not in PERIODIC_FACTORS:
            raise GnssrelInputError(f"unknown periodic-term hypothesis {p!r}; use one of "
                                    f"{', '.join(PERIODIC_FACTORS)} or a number")
        out["periodic_factor"] = PERIODIC_FACTORS[p]
    else:
        out["periodic_factor"] = float(p)
    return out


def _omega_e(system_letters) -> np.ndarray:
    return np.array([SYSTEMS[s].omega_earth_rad_s for s in system_letters]) if len(system_letters) \
        else np.zeros(0)


def line_of_sight(obs: dict, receiver_ecef_m, sagnac: bool = True) -> dict[str, np.ndarray]:
    """Geometric range with and without Earth rotation, Shapiro, elevation, azimuth.

    ``receiver_ecef_m``: ``(3,)`` or ``(n, 3)`` (one row per observation).
    Returns ``range_m`` (with the rotation when ``sagnac``), ``sagnac_m``, ``shapiro_m``,
    ``elevation_rad``, ``azimuth_rad``, ``unit_los`` ``(n, 3)`` (receiver to satellite);
    NaN where the satellite position is unknown.
    """
    sat = obs["satellite_ecef_m"]
    rx = np.broadcast_to(np.asarray(receiver_ecef_m, dtype=float), sat.shape)
    ok = np.all(np.isfinite(sat), axis=1) & np.all(np.isfinite(rx), axis=1)
    rotated = np.full(sat.shape, np.nan)
    if ok.any():
        fixed = sat[ok]                                  # the transmit-time position, held fixed
        lt = light_time(lambda t, offset: fixed, rx[ok], None, omega=_omega_e(obs["system"][ok]))
        rotated[ok] = lt["satellite_position_m"]
    plain = np.linalg.norm(sat - rx, axis=-1)
    with_rotation = np.linalg.norm(rotated - rx, axis=-1)
    used = rotated if sagnac else sat
    rng = with_rotation if sagnac else plain
    az, el = geodesy.azimuth_elevation(rx, used)
    return {"range_m": rng, "sagnac_m": with_rotation - plain, "shapiro_m": shapiro_m(used, rx),
            "elevation_rad": el, "azimuth_rad": az, "unit_los": (used - rx) / rng[:, None]}


def atmosphere_m(obs: dict, receiver_ecef_m, elevation_rad, azimuth_rad, ionosphere_header=None):
    """(troposphere, ionosphere) delays in metres for each observation."""
    rx = np.broadcast_to(np.asarray(receiver_ecef_m, dtype=float), obs["satellite_ecef_m"].shape)
    lat, lon, h = geodesy.ecef_to_geodetic(rx)
    t = obs["time"]
    doy = (seconds_between(t, t.astype("datetime64[Y]")) / 86_400.0) + 1.0
    tropo = troposphere.slant_delay_m(elevation_rad, lat, h, doy)
    # broadcast model per system (GPS/QZSS/BeiDou Klobuchar; NaN where none: say so, do not guess)
    iono = ionosphere.broadcast_delay_m(obs["system"], obs["frequency_hz"], lat, lon, elevation_rad, azimuth_rad,
                                        t, ionosphere_header)
    return tropo, iono


def modelled_pseudorange_m(obs: dict, los: dict, tropo_m, iono_m, receiver_clock_m, terms=None):
    """P_model without the receiver clock when ``receiver_clock_m`` is 0 (see the module text)."""
    t = resolve_terms(terms)
    user_adds = ~np.asarray(obs.get("periodic_in_clock", False), dtype=bool)
    clock_s = obs["satellite_clock_s"] + np.where(user_adds, t["periodic_factor"], 0.0) * obs["periodic_s"] \
        + (obs["j2_s"] if t["j2"] else 0.0)
    shapiro = los["shapiro_m"] if t["shapiro"] else 0.0
    return (los["range_m"] + receiver_clock_m - C_M_S * clock_s + tropo_m + iono_m
            + obs["group_delay_m"] + shapiro)


def receiver_reference(obs_ds, receiver_position_ecef_m=None) -> np.ndarray:
    """The receiver position for the corrections: the given one, else the header's approximate one."""
    rx = receiver_position_ecef_m
    if rx is None:
        rx = obs_ds.attrs.get("position")
    if rx is None or not np.all(np.isfinite(rx)) or np.linalg.norm(rx) < 6.0e6:
        raise GnssrelInputError("no receiver position: the observation header has no approximate "
                                "position; give one (e.g. --position X,Y,Z in metres, ECEF)")
    return np.asarray(rx, dtype=float)


def corrections_table(obs: dict, receiver_ecef_m, ionosphere_header=None) -> pd.DataFrame:
    """One row per prepared observation (:func:`prepare_observations`) with every correction
    at the receiver position ``receiver_ecef_m`` ``(3,)``."""
    rx = np.asarray(receiver_ecef_m, dtype=float)
    los = line_of_sight(obs, rx)
    tropo, iono = atmosphere_m(obs, rx, los["elevation_rad"], los["azimuth_rad"], ionosphere_header)
    sat = obs["satellite_ecef_m"]
    return pd.DataFrame({
        "time": obs["time"], "sv": obs["sv"], "system": obs["system"], "code": obs["code"],
        "pseudorange_m": obs["pseudorange_m"],
        "transmit_time": offset_times(obs["time"], obs["transmit_offset_s"]),
        "flight_time_s": los["range_m"] / C_M_S,
        "satellite_x_m": sat[:, 0], "satellite_y_m": sat[:, 1], "satellite_z_m": sat[:, 2],
        "clock_source": obs["clock_source"], "satellite_clock_s": obs["satellite_clock_s"],
        "periodic_s": obs["periodic_s"], "periodic_in_clock": obs["periodic_in_clock"], "j2_s": obs["j2_s"],
        "geometric_range_m": los["range_m"], "sagnac_m": los["sagnac_m"], "shapiro_m": los["shapiro_m"],
        "troposphere_m": tropo, "ionosphere_m": iono, "group_delay_m": obs["group_delay_m"],
        "elevation_deg": np.degrees(los["elevation_rad"]), "azimuth_deg": np.degrees(los["azimuth_rad"]),
        "ephemeris_row": obs["ephemeris_row"], "state_status": obs["state_status"],
    })


def observation_corrections(obs_ds, nav, precise=None, receiver_position_ecef_m=None,
                            systems=None) -> pd.DataFrame:
    """One row per code observation with every correction (metres and seconds in the names).

    The receiver position is ``receiver_position_ecef_m`` or else the header's approximate
    position (``obs_ds.attrs["position"]``).  ``precise``: None (broadcast orbits and clocks)
    or ``{"orbits": SP3 Dataset, "clocks": Dataset with clock_s}`` (see ``observables``).
    """
    rx = receiver_reference(obs_ds, receiver_position_ecef_m)
    obs = prepare_observations(obs_ds, nav, systems, precise=precise)
    return corrections_table(obs, rx, getattr(nav, "header", {}).get("ionosphere"))
