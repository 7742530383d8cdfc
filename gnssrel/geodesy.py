"""WGS-84 geodetic coordinates and the local view of a satellite (azimuth, elevation).

All functions take numpy arrays and broadcast over leading dimensions; vectors
have the 3 ECEF components on the last axis, shape ``(..., 3)``.  Angles are in
radians unless the name says ``_deg``.

Ellipsoid: WGS-84, a = 6 378 137 m, 1/f = 298.257223563 (NGA TR8350.2, 2000,
Table 3.1; published).  The ECEF -> geodetic conversion is Bowring's closed form
(B. R. Bowring, "Transformation from spatial to geographical coordinates",
Survey Review 23 (1976) 323-327) followed by two fixed-point refinements, which
brings the height to well below a millimetre for any point near the Earth.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import GPS

WGS84_A_M = GPS.ellipsoid_a_m
WGS84_F = 1.0 / GPS.ellipsoid_inverse_flattening
WGS84_E2 = WGS84_F * (2.0 - WGS84_F)              # first eccentricity squared
WGS84_B_M = WGS84_A_M * (1.0 - WGS84_F)
WGS84_EP2 = WGS84_E2 / (1.0 - WGS84_E2)           # second eccentricity squared


def geodetic_to_ecef(lat_rad, lon_rad, height_m) -> np.ndarray:
    """ECEF position ``(..., 3)`` in metres of WGS-84 geodetic coordinates."""
    lat, lon, h = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (lat_rad, lon_rad, height_m)))
    n = WGS84_A_M / np.sqrt(1.0 - WGS84_E2 * np.sin(lat) ** 2)   # prime-vertical radius
    x = (n + h) * np.cos(lat) * np.cos(lon)
    y = (n + h) * np.cos(lat) * np.sin(lon)
    z = (n * (1.0 - WGS84_E2) + h) * np.sin(lat)
    return np.stack([x, y, z], axis=-1)


def ecef_to_geodetic(position_ecef_m) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(latitude rad, longitude rad, ellipsoidal height m) of ECEF positions ``(..., 3)``."""
    r = np.asarray(position_ecef_m, dtype=float)
    x, y, z = r[..., 0], r[..., 1], r[..., 2]
    p = np.hypot(x, y)
    lon = np.arctan2(y, x)
    # Bowring (1976): parametric latitude first, then geodetic latitude.
    beta = np.arctan2(z * WGS84_A_M, p * WGS84_B_M)
    lat = np.arctan2(z + WGS84_EP2 * WGS84_B_M * np.sin(beta) ** 3,
                     p - WGS84_E2 * WGS84_A_M * np.cos(beta) ** 3)
    for _ in range(2):
        beta = np.arctan2((1.0 - WGS84_F) * np.sin(lat), np.cos(lat))
        lat = np.arctan2(z + WGS84_EP2 * WGS84_B_M * np.sin(beta) ** 3,
                         p - WGS84_E2 * WGS84_A_M * np.cos(beta) ** 3)
    sin_lat, cos_lat = np.sin(lat), np.cos(lat)
    n = WGS84_A_M / np.sqrt(1.0 - WGS84_E2 * sin_lat**2)
    # Height along the normal, stable at all latitudes.
    h = p * cos_lat + z * sin_lat - WGS84_A_M**2 / n
    return lat, lon, h


def enu_rotation(lat_rad, lon_rad) -> np.ndarray:
    """Rows east, north, up of the local frame at (lat, lon): shape ``(..., 3, 3)``."""
    lat, lon = np.broadcast_arrays(np.asarray(lat_rad, float), np.asarray(lon_rad, float))
    sl, cl, so, co = np.sin(lat), np.cos(lat), np.sin(lon), np.cos(lon)
    zero = np.zeros_like(lat)
    east = np.stack([-so, co, zero], axis=-1)
    north = np.stack([-sl * co, -sl * so, cl], axis=-1)
    up = np.stack([cl * co, cl * so, sl], axis=-1)
    return np.stack([east, north, up], axis=-2)


def ecef_to_enu(vector_ecef_m, lat_rad, lon_rad) -> np.ndarray:
    """East, north, up components ``(..., 3)`` of ECEF vectors at (lat, lon)."""
    rot = enu_rotation(lat_rad, lon_rad)
    return np.einsum("...ij,...j->...i", rot, np.asarray(vector_ecef_m, dtype=float))


def azimuth_elevation(receiver_ecef_m, satellite_ecef_m) -> tuple[np.ndarray, np.ndarray]:
    """Azimuth (from north, clockwise, [0, 2 pi)) and elevation in radians of
    satellites seen from receivers; both ``(..., 3)``, broadcast against each other."""
    rx = np.asarray(receiver_ecef_m, dtype=float)
    los = np.asarray(satellite_ecef_m, dtype=float) - rx
    lat, lon, _ = ecef_to_geodetic(rx)
    enu = np.einsum("...ij,...j->...i", enu_rotation(lat, lon), los)   # einsum broadcasts "..."
    e, n, u = enu[..., 0], enu[..., 1], enu[..., 2]
    az = np.mod(np.arctan2(e, n), 2.0 * np.pi)
    el = np.arctan2(u, np.hypot(e, n))
    return az, el


def geodetic_deg_to_ecef(lat_deg, lon_deg, height_m) -> np.ndarray:
    """ECEF position ``(..., 3)`` in metres of WGS-84 latitude, longitude (degrees) and ellipsoidal height (m)."""
    return geodetic_to_ecef(np.radians(lat_deg), np.radians(lon_deg), height_m)


def enu_errors(positions_ecef_m, reference_ecef_m) -> np.ndarray:
    """East, north, up ``(..., 3)`` in metres of ``positions - reference``, in the local frame of the
    reference (its WGS-84 latitude and longitude); ``reference_ecef_m`` shape ``(3,)``."""
    ref = np.asarray(reference_ecef_m, dtype=float)
    lat, lon, _ = ecef_to_geodetic(ref)
    return ecef_to_enu(np.asarray(positions_ecef_m, dtype=float) - ref, lat, lon)
