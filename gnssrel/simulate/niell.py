"""Niell (1996) mapping functions, the simulator's own copy, for the survey scenario's troposphere.

A. E. Niell, "Global mapping functions for the atmosphere delay at radio wavelengths",
J. Geophys. Res. 101(B2) (1996) 3227-3246, eqs. (4)-(6) and Table 3 (coefficients from memory,
as in the audit's copy; the seasonal phase is day 28, shifted by half a year south of the
equator; the hydrostatic height correction per km of height).  The survey scenario maps its
zenith delays with these so that the truth and an estimator using the same published model
differ only by the zenith wet delay it estimates (a mapping mismatch of 1 % at 10 degrees would
be 10 cm of slant delay, larger than everything the survey is built to show).

Written separately from :mod:`gnssrel.audit.troposphere` on purpose (see the package docstring).
"""

from __future__ import annotations

import numpy as np

_LATITUDES_DEG = (15.0, 30.0, 45.0, 60.0, 75.0)
_HYDROSTATIC_MEAN = ((1.2769934e-3, 2.9153695e-3, 62.610505e-3), (1.2683230e-3, 2.9152299e-3, 62.837393e-3),
                     (1.2465397e-3, 2.9288445e-3, 63.721774e-3), (1.2196049e-3, 2.9022565e-3, 63.824265e-3),
                     (1.2045996e-3, 2.9024912e-3, 64.258455e-3))
_HYDROSTATIC_SEASON = ((0.0, 0.0, 0.0), (1.2709626e-5, 2.1414979e-5, 9.0128400e-5),
                       (2.6523662e-5, 3.0160779e-5, 4.3497037e-5), (3.4000452e-5, 7.2562722e-5, 84.795348e-5),
                       (4.1202191e-5, 11.723375e-5, 170.37206e-5))
_HEIGHT = (2.53e-5, 5.49e-3, 1.14e-3)
_WET = ((5.8021897e-4, 1.4275268e-3, 4.3472961e-2), (5.6794847e-4, 1.5138625e-3, 4.6729510e-2),
        (5.8118019e-4, 1.4572752e-3, 4.3908931e-2), (5.9727542e-4, 1.5007428e-3, 4.4626982e-2),
        (6.1641693e-4, 1.7599082e-3, 5.4736038e-2))


def _marini(sin_el, a, b, c):
    """Continued fraction in sin(el), normalised to one at the zenith."""
    return (1.0 + a / (1.0 + b / (1.0 + c))) / (sin_el + a / (sin_el + b / (sin_el + c)))


def _coefficients(table, lat_deg: float) -> tuple[float, float, float]:
    x = min(max(abs(lat_deg), 15.0), 75.0)
    return tuple(float(np.interp(x, _LATITUDES_DEG, [row[k] for row in table])) for k in range(3))


def mapping(elevation_rad, lat_deg: float, height_m: float, day_of_year: float):
    """(hydrostatic, wet) mapping factors at the elevations ``elevation_rad`` (any shape)."""
    doy = day_of_year + (182.625 if lat_deg < 0 else 0.0)
    season = np.cos(2 * np.pi * (doy - 28.0) / 365.25)
    mean, amp = _coefficients(_HYDROSTATIC_MEAN, lat_deg), _coefficients(_HYDROSTATIC_SEASON, lat_deg)
    sin_el = np.sin(np.maximum(np.asarray(elevation_rad, dtype=float), np.radians(1.0)))
    hydro = _marini(sin_el, *(m - s * season for m, s in zip(mean, amp)))
    hydro = hydro + (1.0 / sin_el - _marini(sin_el, *_HEIGHT)) * height_m / 1000.0
    return hydro, _marini(sin_el, *_coefficients(_WET, lat_deg))
