"""Tropospheric delay of a GNSS signal: Saastamoinen zenith delays mapped with Niell.

Zenith delays (metres), J. Saastamoinen, "Atmospheric correction for the
troposphere and stratosphere in radio ranging of satellites", AGU Geophysical
Monograph 15 (1972) 247-251, in the hydrostatic form of J. L. Davis et al.,
Radio Science 20 (1985) 1593-1607, eq. (A11):

    ZHD = 0.0022768 p / (1 - 0.00266 cos 2 phi - 0.00028 h_km)
    ZWD = 0.002277 (1255 / T + 0.05) e

with p the total pressure and e the water-vapour pressure (hPa), T in kelvin.

Without weather data the surface values come from a standard atmosphere (common
practice): p = 1013.25 (1 - 2.2557e-5 h)^5.2568 hPa, T = 288.15 - 0.0065 h K
(the ICAO/US 1976 troposphere lapse rate), relative humidity 50 % and the
saturation pressure 6.108 exp((17.15 T - 4684) / (T - 38.45)) hPa (a Magnus-type
formula).  At sea level this gives ZHD ~ 2.31 m and ZWD ~ 0.09 m.

Slant delay = ZHD m_h(el) + ZWD m_w(el) with the Niell mapping functions:
A. E. Niell, "Global mapping functions for the atmosphere delay at radio
wavelengths", J. Geophys. Res. 101(B2) (1996) 3227-3246, eqs. (4)-(5) and
Table 3.  The wet coefficients below were checked against a reproduction of the
table (status V2); the hydrostatic ones are from memory (status M), which the
tests guard with physical properties (m(90 deg) = 1, m(5 deg) ~ 10).

Arrays broadcast; elevation in radians, latitude in radians, height in metres
above the ellipsoid (the geoid-ellipsoid difference is ignored: common practice).
"""

from __future__ import annotations

import numpy as np

# Niell (1996) Table 3: rows are latitudes 15, 30, 45, 60, 75 degrees.
_NIELL_LAT_DEG = np.array([15.0, 30.0, 45.0, 60.0, 75.0])
_HYD_AVG = np.array([  # a, b, c (from memory, M)
    [1.2769934e-3, 2.9153695e-3, 62.610505e-3],
    [1.2683230e-3, 2.9152299e-3, 62.837393e-3],
    [1.2465397e-3, 2.9288445e-3, 63.721774e-3],
    [1.2196049e-3, 2.9022565e-3, 63.824265e-3],
    [1.2045996e-3, 2.9024912e-3, 64.258455e-3],
])
_HYD_AMP = np.array([  # seasonal amplitudes (from memory, M)
    [0.0, 0.0, 0.0],
    [1.2709626e-5, 2.1414979e-5, 9.0128400e-5],
    [2.6523662e-5, 3.0160779e-5, 4.3497037e-5],
    [3.4000452e-5, 7.2562722e-5, 84.795348e-5],
    [4.1202191e-5, 11.723375e-5, 170.37206e-5],
])
_HEIGHT_ABC = np.array([2.53e-5, 5.49e-3, 1.14e-3])  # Niell eq. (6) height correction (M)
_WET = np.array([  # a, b, c (V2: reproduced table of Niell 1996)
    [5.8021897e-4, 1.4275268e-3, 4.3472961e-2],
    [5.6794847e-4, 1.5138625e-3, 4.6729510e-2],
    [5.8118019e-4, 1.4572752e-3, 4.3908931e-2],
    [5.9727542e-4, 1.5007428e-3, 4.4626982e-2],
    [6.1641693e-4, 1.7599082e-3, 5.4736038e-2],
])
_DOY_PHASE = 28.0   # Niell (1996): seasonal term cos(2 pi (doy - 28) / 365.25)


def standard_atmosphere(height_m, relative_humidity=0.5):
    """(pressure hPa, temperature K, water-vapour pressure hPa) at ``height_m`` (common practice)."""
    h = np.clip(np.asarray(height_m, dtype=float), -500.0, 11_000.0)
    pressure_hpa = 1013.25 * (1.0 - 2.2557e-5 * h) ** 5.2568
    temperature_k = 288.15 - 6.5e-3 * h
    vapour_hpa = relative_humidity * 6.108 * np.exp((17.15 * temperature_k - 4684.0)
                                                   / (temperature_k - 38.45))
    return pressure_hpa, temperature_k, vapour_hpa


def saastamoinen_zenith_m(lat_rad, height_m, pressure_hpa=None, temperature_k=None, vapour_hpa=None):
    """(hydrostatic, wet) zenith delays in metres (Saastamoinen 1972; Davis et al. 1985 eq. A11).

    Weather values default to :func:`standard_atmosphere` at ``height_m``.
    """
    p0, t0, e0 = standard_atmosphere(height_m)
    p = p0 if pressure_hpa is None else np.asarray(pressure_hpa, float)
    t = t0 if temperature_k is None else np.asarray(temperature_k, float)
    e = e0 if vapour_hpa is None else np.asarray(vapour_hpa, float)
    h_km = np.asarray(height_m, dtype=float) / 1000.0
    zhd = 0.0022768 * p / (1.0 - 0.00266 * np.cos(2.0 * np.asarray(lat_rad, float)) - 0.00028 * h_km)
    zwd = 0.002277 * (1255.0 / t + 0.05) * e
    return zhd, zwd


def _continued_fraction(sin_el, a, b, c):
    """Marini (1972) continued fraction normalised to 1 at zenith (Niell 1996 eq. 4)."""
    top = 1.0 + a / (1.0 + b / (1.0 + c))
    return top / (sin_el + a / (sin_el + b / (sin_el + c)))


def _interpolate_latitude(table, abs_lat_deg):
    """Linear interpolation of a (5, 3) coefficient table in |latitude|, constant outside 15-75 deg."""
    return np.stack([np.interp(abs_lat_deg, _NIELL_LAT_DEG, table[:, j]) for j in range(3)], axis=0)


def niell_mapping(elevation_rad, lat_rad, height_m, day_of_year):
    """(hydrostatic, wet) Niell (1996) mapping factors; ``day_of_year`` may be fractional."""
    el, lat, h, doy = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                            (elevation_rad, lat_rad, height_m, day_of_year)))
    abs_lat_deg = np.abs(np.degrees(lat))
    doy = doy + np.where(lat < 0.0, 365.25 / 2.0, 0.0)          # southern-hemisphere seasons
    season = np.cos(2.0 * np.pi * (doy - _DOY_PHASE) / 365.25)
    ah, bh, ch = _interpolate_latitude(_HYD_AVG, abs_lat_deg) - _interpolate_latitude(_HYD_AMP, abs_lat_deg) * season
    sin_el = np.sin(np.maximum(el, np.radians(1.0)))   # below 1 deg the model has no meaning
    dry = _continued_fraction(sin_el, ah, bh, ch)
    # Height correction, Niell (1996) eq. (6): dm/dh = 1/sin(el) - f(el; a_ht, b_ht, c_ht), per km.
    dry = dry + (1.0 / sin_el - _continued_fraction(sin_el, *_HEIGHT_ABC)) * h / 1000.0
    aw, bw, cw = _interpolate_latitude(_WET, abs_lat_deg)
    wet = _continued_fraction(sin_el, aw, bw, cw)
    return dry, wet


def slant_delay_m(elevation_rad, lat_rad, height_m, day_of_year):
    """Tropospheric slant delay in metres: Saastamoinen zenith delays (standard
    atmosphere) times the Niell mapping factors."""
    zhd, zwd = saastamoinen_zenith_m(lat_rad, height_m)
    m_dry, m_wet = niell_mapping(elevation_rad, lat_rad, height_m, day_of_year)
    return zhd * m_dry + zwd * m_wet
