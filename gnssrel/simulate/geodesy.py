"""WGS-84 geodetic coordinates and local topocentric angles for the simulator.

Ellipsoid from ``gnssrel.constants.GPS`` (WGS-84, NGA TR8350.2).  Shapes:
positions ``(..., 3)`` in ECEF metres.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import GPS

A_M = GPS.ellipsoid_a_m
F = 1.0 / GPS.ellipsoid_inverse_flattening
E2 = F * (2.0 - F)


def geodetic_to_ecef(lat_deg, lon_deg, height_m) -> np.ndarray:
    """ECEF metres of geodetic latitude/longitude (degrees) and ellipsoidal height."""
    lat, lon = np.radians(lat_deg), np.radians(lon_deg)
    n = A_M / np.sqrt(1.0 - E2 * np.sin(lat) ** 2)
    return np.stack([(n + height_m) * np.cos(lat) * np.cos(lon),
                     (n + height_m) * np.cos(lat) * np.sin(lon),
                     (n * (1.0 - E2) + height_m) * np.sin(lat)], axis=-1)


def ecef_to_geodetic(xyz_m) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(latitude deg, longitude deg, ellipsoidal height m) of ECEF positions (iterated to < 1 mm)."""
    xyz = np.asarray(xyz_m, dtype=np.float64)
    x, y, z = xyz[..., 0], xyz[..., 1], xyz[..., 2]
    p = np.hypot(x, y)
    lat = np.arctan2(z, p * (1.0 - E2))
    for _ in range(6):
        n = A_M / np.sqrt(1.0 - E2 * np.sin(lat) ** 2)
        h = p / np.cos(lat) - n
        lat = np.arctan2(z, p * (1.0 - E2 * n / (n + h)))
    n = A_M / np.sqrt(1.0 - E2 * np.sin(lat) ** 2)
    h = p / np.cos(lat) - n
    return np.degrees(lat), np.degrees(np.arctan2(y, x)), h


def enu_matrix(lat_deg, lon_deg) -> np.ndarray:
    """Rows east, north, up of the local frame at a point, shape (3, 3)."""
    lat, lon = np.radians(lat_deg), np.radians(lon_deg)
    sl, cl, sp, cp = np.sin(lon), np.cos(lon), np.sin(lat), np.cos(lat)
    return np.array([[-sl, cl, 0.0], [-sp * cl, -sp * sl, cp], [cp * cl, cp * sl, sp]])


def azimuth_elevation(receiver_ecef_m, satellite_ecef_m) -> tuple[np.ndarray, np.ndarray]:
    """Azimuth and elevation (rad) of satellites ``(..., 3)`` seen from one receiver ``(3,)``."""
    lat, lon, _ = ecef_to_geodetic(np.asarray(receiver_ecef_m))
    enu = (np.asarray(satellite_ecef_m) - receiver_ecef_m) @ enu_matrix(lat, lon).T
    az = np.arctan2(enu[..., 0], enu[..., 1]) % (2 * np.pi)
    el = np.arctan2(enu[..., 2], np.hypot(enu[..., 0], enu[..., 1]))
    return az, el
