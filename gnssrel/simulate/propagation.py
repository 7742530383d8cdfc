"""Signal-path models the simulator puts into the pseudoranges.

* light time with Earth rotation during flight (Sagnac): the satellite's ECEF position at
  transmission is rotated by omega_E tau about z into the ECEF frame of reception
  (Ashby 2003 section 2; REFERENCE-CHECKS.md 7);
* Shapiro delay (1+gamma) GM/c^2 ln((r_s + r_r + rho)/(r_s + r_r - rho)), gamma = 1
  (IERS Conventions 2010 eq. 11.17);
* troposphere: Saastamoinen zenith delays (hydrostatic with a standard atmosphere at the site
  height, wet from a fixed humidity) and the mapping 1.001/sqrt(0.002001 + sin^2 el)
  (RTCA DO-229 A.4.2.4, as restated by ESA Navipedia "Tropospheric Delay"; from memory);
* ionosphere: the broadcast Klobuchar model (IS-GPS-200 20.3.3.5.2.5) on L1, scaled by
  (f_L1/f)^2 to other carriers, so that the dual-frequency ionosphere-free combination
  removes it exactly.

Shapes: receiver position (3,), satellite positions (n_t, n_sat, 3), angles (n_t, n_sat).
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import C_M_S, GM_EARTH_IERS_M3_S2, OMEGA_EARTH_IERS_RAD_S
from gnssrel.geodesy import azimuth_elevation, ecef_to_geodetic
from gnssrel.signals import CARRIER_HZ

L1_HZ = CARRIER_HZ["G"]["L1"]
LIGHT_TIME_ITERATIONS = 4   # converges to < 1 ps for ground receivers


def rotate_z(pos_m: np.ndarray, angle_rad: np.ndarray) -> np.ndarray:
    """Rotate ECEF vectors (..., 3) by ``angle_rad`` (...) about z (frame rotation, Sagnac)."""
    c, s = np.cos(angle_rad), np.sin(angle_rad)
    x, y, z = pos_m[..., 0], pos_m[..., 1], pos_m[..., 2]
    return np.stack([c * x + s * y, -s * x + c * y, z], axis=-1)


def light_time(position_at, receiver_ecef_m, t_rx_gpst):
    """Solve the light-time equation for each reception time and satellite.

    ``position_at(t_tx)`` returns ECEF satellite positions (n_t, n_sat, 3) at GPST times
    (n_t, n_sat).  Returns (t_tx, tau_s, position at t_tx rotated into the reception frame).
    """
    t_rx = np.asarray(t_rx_gpst, dtype="datetime64[ns]")[:, None]
    pos0 = position_at(np.broadcast_to(t_rx, t_rx.shape))
    tau = np.linalg.norm(pos0 - receiver_ecef_m, axis=-1) / C_M_S
    for _ in range(LIGHT_TIME_ITERATIONS):
        t_tx = t_rx - np.round(tau * 1e9).astype("timedelta64[ns]")
        sat = rotate_z(position_at(t_tx), OMEGA_EARTH_IERS_RAD_S * tau)
        tau = np.linalg.norm(sat - receiver_ecef_m, axis=-1) / C_M_S
    return t_tx, tau, sat


def shapiro_m(receiver_ecef_m, satellite_ecef_m) -> np.ndarray:
    """Relativistic range delay, m (IERS 2010 eq. 11.17 with gamma = 1)."""
    r_s = np.linalg.norm(satellite_ecef_m, axis=-1)
    r_r = np.linalg.norm(receiver_ecef_m)
    rho = np.linalg.norm(satellite_ecef_m - receiver_ecef_m, axis=-1)
    return 2.0 * GM_EARTH_IERS_M3_S2 / C_M_S**2 * np.log((r_s + r_r + rho) / (r_s + r_r - rho))


def zenith_delays_m(lat_deg: float, height_m: float, relative_humidity: float = 0.6) -> tuple[float, float]:
    """Saastamoinen zenith hydrostatic and wet delays, m, from a standard atmosphere.

    Pressure p = 1013.25 (1 - 2.2557e-5 h)^5.2568 hPa, T = 288.15 - 6.5e-3 h K (standard
    atmosphere, common practice); ZHD = 0.0022768 p / (1 - 0.00266 cos 2phi - 0.28e-6 h)
    (Saastamoinen 1972 as in IERS 2010 eq. 9.11, from memory); ZWD = 0.002277 (1255/T + 0.05) e.
    """
    p = 1013.25 * (1 - 2.2557e-5 * height_m) ** 5.2568
    temp = 288.15 - 6.5e-3 * height_m
    e = relative_humidity * 6.108 * np.exp(17.15 * (temp - 273.15) / (temp - 38.45))
    zhd = 0.0022768 * p / (1 - 0.00266 * np.cos(2 * np.radians(lat_deg)) - 0.28e-6 * height_m)
    zwd = 0.002277 * (1255.0 / temp + 0.05) * e
    return float(zhd), float(zwd)


def troposphere_m(lat_deg: float, height_m: float, elevation_rad: np.ndarray) -> np.ndarray:
    """Slant tropospheric delay, m: zenith total times 1.001/sqrt(0.002001 + sin^2 el)."""
    zhd, zwd = zenith_delays_m(lat_deg, height_m)
    return (zhd + zwd) * 1.001 / np.sqrt(0.002001 + np.sin(elevation_rad) ** 2)


def klobuchar_l1_s(lat_deg: float, lon_deg: float, azimuth_rad, elevation_rad, gps_sow_s,
                   alpha, beta) -> np.ndarray:
    """Broadcast ionospheric delay on L1, s (IS-GPS-200 20.3.3.5.2.5, angles in semicircles)."""
    el = np.asarray(elevation_rad) / np.pi
    az = np.asarray(azimuth_rad)
    psi = 0.0137 / (el + 0.11) - 0.022
    phi_i = np.clip(lat_deg / 180.0 + psi * np.cos(az), -0.416, 0.416)
    lam_i = lon_deg / 180.0 + psi * np.sin(az) / np.cos(phi_i * np.pi)
    phi_m = phi_i + 0.064 * np.cos((lam_i - 1.617) * np.pi)
    t = np.mod(4.32e4 * lam_i + np.asarray(gps_sow_s), 86400.0)
    amp = np.maximum(sum(a * phi_m**k for k, a in enumerate(alpha)), 0.0)
    per = np.maximum(sum(b * phi_m**k for k, b in enumerate(beta)), 72000.0)
    x = 2 * np.pi * (t - 50400.0) / per
    f = 1.0 + 16.0 * (0.53 - el) ** 3
    return f * np.where(np.abs(x) < 1.57, 5e-9 + amp * (1 - x**2 / 2 + x**4 / 24), 5e-9)


def receiver_view(receiver_ecef_m, satellite_ecef_m):
    """(azimuth, elevation, lat deg, lon deg, height m) of satellites seen from a receiver."""
    az, el = azimuth_elevation(receiver_ecef_m, satellite_ecef_m)
    lat, lon, h = ecef_to_geodetic(receiver_ecef_m)
    return az, el, float(np.degrees(lat)), float(np.degrees(lon)), float(h)
