"""Every correction of every code observation, and the modelled pseudorange.

For one observation of satellite s at receiver r (all terms in metres):

    P_model = rho + c dt_r - c (dt_poly + k_p dt_periodic + dt_J2) + T + I + D + S

* rho: geometric range at transmit time, with the Earth's rotation during the
  flight (Sagnac): the satellite's Earth-fixed position at transmit time is
  turned by omega_E tau about z into the frame of the reception time, tau the
  flight time, iterated (light-time iteration; IS-GPS-200 20.3.3.4.3.3.2 and
  Ashby 2003 section 2).  ``sagnac_m`` is the difference this rotation makes,
  ~ omega_E (x_s y_r - y_s x_r) / c.
* dt_poly, dt_periodic: the broadcast clock polynomial and the periodic
  relativistic term F e sqrt(A) sin E (IS-GPS-200 20.3.3.3.3.1); k_p = 1 is the
  specification ("applied"), 0 omitted, -1 reversed, 2 doubled.
* dt_J2: the J2 periodic clock term (Kouba 2004); the broadcast user algorithm
  does not apply it, so it is off by default (about 2 cm).
* T: Saastamoinen + Niell troposphere (:mod:`gnssrel.audit.troposphere`).
* I: Klobuchar for single-frequency codes, 0 for the ionosphere-free combination.
* D: satellite group delay (:func:`gnssrel.audit.ionosphere.group_delay_m`).
* S: Shapiro delay (1 + gamma) GM/c^2 ln((r_s + r_r + rho)/(r_s + r_r - rho)), gamma = 1,
  IERS Conventions 2010 eq. (11.17) (status M for the equation number).

``terms`` (a mapping) switches the relativistic pieces:
``{"periodic": "applied" | "omitted" | "reversed" | "doubled" | factor,
"sagnac": bool, "shapiro": bool, "j2": bool}``; missing keys take :data:`DEFAULT_TERMS`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from gnssrel.audit import geodesy, ionosphere, troposphere
from gnssrel.audit.observables import prepare_observations
from gnssrel.constants import C_M_S, GM_EARTH_IERS_M3_S2, SYSTEMS
from gnssrel.errors import GnssrelInputError
from gnssrel.timescales import GPS_EPOCH, seconds_between

DEFAULT_TERMS = {"periodic": "applied", "sagnac": True, "shapiro": True, "j2": False}
PERIODIC_FACTORS = {"applied": 1.0, "omitted": 0.0, "reversed": -1.0, "doubled": 2.0}


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
    ``elevation_rad``, ``azimuth_rad``, ``unit_los`` ``(n, 3)`` (receiver to satellite).
    """
    rx = np.broadcast_to(np.asarray(receiver_ecef_m, dtype=float), obs["satellite_ecef_m"].shape)
    sat = obs["satellite_ecef_m"]
    omega = _omega_e(obs["system"])
    plain = np.linalg.norm(sat - rx, axis=-1)
    tau = plain / C_M_S
    for _ in range(3):                                       # light-time iteration
        angle = omega * tau
        ca, sa = np.cos(angle), np.sin(angle)
        rot = np.stack([ca * sat[:, 0] + sa * sat[:, 1], -sa * sat[:, 0] + ca * sat[:, 1], sat[:, 2]], axis=-1)
        rotated = np.linalg.norm(rot - rx, axis=-1)
        tau = rotated / C_M_S
    used = rot if sagnac else sat
    rng = rotated if sagnac else plain
    r_s, r_r = np.linalg.norm(used, axis=-1), np.linalg.norm(rx, axis=-1)
    shapiro = 2.0 * GM_EARTH_IERS_M3_S2 / C_M_S**2 * np.log((r_s + r_r + rng)
                                                              / np.maximum(r_s + r_r - rng, 1.0))
    az, el = geodesy.azimuth_elevation(rx, used)
    return {"range_m": rng, "sagnac_m": rotated - plain, "shapiro_m": shapiro,
            "elevation_rad": el, "azimuth_rad": az, "unit_los": (used - rx) / rng[:, None]}


def atmosphere_m(obs: dict, receiver_ecef_m, elevation_rad, azimuth_rad, ionosphere_header=None):
    """(troposphere, ionosphere) delays in metres for each observation."""
    rx = np.broadcast_to(np.asarray(receiver_ecef_m, dtype=float), obs["satellite_ecef_m"].shape)
    lat, lon, h = geodesy.ecef_to_geodetic(rx)
    t = obs["time"]
    doy = (seconds_between(t, t.astype("datetime64[Y]")) / 86_400.0) + 1.0
    tropo = troposphere.slant_delay_m(elevation_rad, lat, h, doy)
    iono = np.zeros(t.shape)
    single = np.isfinite(obs["frequency_hz"])
    coeff = (ionosphere_header or {})
    alpha, beta = coeff.get("GPSA"), coeff.get("GPSB")
    if single.any():
        if alpha is None or beta is None:
            iono[single] = np.nan                            # no model: say so, do not guess
        else:
            sow = np.mod(seconds_between(t[single], GPS_EPOCH), 604_800.0)
            iono[single] = ionosphere.klobuchar_delay_m(obs["frequency_hz"][single], lat[single], lon[single],
                                                        elevation_rad[single], azimuth_rad[single], sow,
                                                        alpha, beta)
    return tropo, iono


def modelled_pseudorange_m(obs: dict, los: dict, tropo_m, iono_m, receiver_clock_m, terms=None):
    """P_model without the receiver clock when ``receiver_clock_m`` is 0 (see the module text)."""
    t = resolve_terms(terms)
    clock_s = obs["clock_poly_s"] + t["periodic_factor"] * obs["periodic_s"] \
        + (obs["j2_s"] if t["j2"] else 0.0)
    shapiro = los["shapiro_m"] if t["shapiro"] else 0.0
    return (los["range_m"] + receiver_clock_m - C_M_S * clock_s + tropo_m + iono_m
            + obs["group_delay_m"] + shapiro)


def observation_corrections(obs_ds, nav, precise=None, receiver_position_ecef_m=None,
                            systems=None) -> pd.DataFrame:
    """One row per code observation with every correction (metres and seconds in the names).

    The receiver position is ``receiver_position_ecef_m`` or else the header's approximate
    position (``obs_ds.attrs["position"]``).  ``precise`` is not used yet: the satellite
    states and clocks are the broadcast ones (see the module text of ``observables``).
    """
    if precise is not None:
        raise GnssrelInputError("precise orbits/clocks are not supported by the per-observation "
                                "corrections yet; run without --precise")
    rx = receiver_position_ecef_m
    if rx is None:
        rx = obs_ds.attrs.get("position")
    if rx is None or not np.all(np.isfinite(rx)) or np.linalg.norm(rx) < 6.0e6:
        raise GnssrelInputError("no receiver position: the observation header has no approximate "
                                "position; give one (e.g. --position X,Y,Z in metres, ECEF)")
    rx = np.asarray(rx, dtype=float)
    obs = prepare_observations(obs_ds, nav, systems)
    los = line_of_sight(obs, rx)
    iono_header = getattr(nav, "header", {}).get("ionosphere") if hasattr(nav, "header") else None
    tropo, iono = atmosphere_m(obs, rx, los["elevation_rad"], los["azimuth_rad"], iono_header)
    t_tx = obs["time"] + np.round(obs["transmit_offset_s"] * 1e9).astype("int64").astype("timedelta64[ns]")
    sat = obs["satellite_ecef_m"]
    return pd.DataFrame({
        "time": obs["time"], "sv": obs["sv"], "system": obs["system"], "code": obs["code"],
        "pseudorange_m": obs["pseudorange_m"],
        "transmit_time": t_tx, "flight_time_s": (los["range_m"]) / C_M_S,
        "satellite_x_m": sat[:, 0], "satellite_y_m": sat[:, 1], "satellite_z_m": sat[:, 2],
        "satellite_clock_s": obs["clock_poly_s"], "periodic_s": obs["periodic_s"], "j2_s": obs["j2_s"],
        "geometric_range_m": los["range_m"], "sagnac_m": los["sagnac_m"], "shapiro_m": los["shapiro_m"],
        "troposphere_m": tropo, "ionosphere_m": iono, "group_delay_m": obs["group_delay_m"],
        "elevation_deg": np.degrees(los["elevation_rad"]), "azimuth_deg": np.degrees(los["azimuth_rad"]),
        "ephemeris_row": obs["ephemeris_row"],
    })
