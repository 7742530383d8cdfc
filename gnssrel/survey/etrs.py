"""An approximate ITRF -> ETRF2000 transformation, to compare a solution with a European header.

Precise orbits put the solution in the ITRF realisation of the product (IGS14 for 2020); many
European stations write ETRS89 coordinates into their RINEX headers (e.g. ESBC, operated by the
Danish agency SDFE), which is fixed to the stable part of the Eurasian plate: by 2020 the two
differ by ~0.75 m in Denmark (2.4 cm/yr for 31 years).  This module applies the 14-parameter ITRF2014 -> ETRF2000 transformation of EUREF Technical
Note 1 (Altamimi 2018; parameters from memory, status M) at epoch 2000.0:
translation (53.7, 51.2, -55.1) mm with rates (0.1, 0.1, -1.9) mm/yr, scale 1.02 ppb with
rate 0.11 ppb/yr, rotation (0.891, 5.390, -8.712) mas with rates (0.081, 0.490, -0.792)
mas/yr (the rotation is the plate motion since 1989.0: 11 years of the rates at 2000.0), in
the small-angle form

    X_E = X_I + T + D X_I + R X_I,   R = [[0, -R3, R2], [R3, 0, -R1], [-R2, R1, 0]].

IGS14 is taken as ITRF2014.  A header in an older ETRS89 realisation (ETRF89, ETRF93, a
national one) differs from ETRF2000 by a few cm: that is the accuracy of this check, not of
the survey.
"""

from __future__ import annotations

import numpy as np

_MAS = np.pi / (180.0 * 3600.0 * 1000.0)
T_M = np.array([0.0537, 0.0512, -0.0551])
T_RATES_M_PER_YEAR = np.array([0.0001, 0.0001, -0.0019])
SCALE = 1.02e-9
SCALE_RATE_PER_YEAR = 0.11e-9
ROTATION_MAS = np.array([0.891, 5.390, -8.712])
RATES_MAS_PER_YEAR = np.array([0.081, 0.490, -0.792])
EPOCH_YEAR = 2000.0


def decimal_year(t) -> float:
    t = np.datetime64(t, "ns")
    year = t.astype("datetime64[Y]")
    start, end = year.astype("datetime64[ns]"), (year + 1).astype("datetime64[ns]")
    return float(year.astype(int) + 1970 + (t - start) / (end - start))


def itrf_to_etrf2000(position_ecef_m, t) -> np.ndarray:
    """ECEF (3,) in ETRF2000 of an ITRF position at time ``t`` (approximate: module text)."""
    x = np.asarray(position_ecef_m, float)
    dt_years = decimal_year(t) - EPOCH_YEAR
    r1, r2, r3 = (ROTATION_MAS + RATES_MAS_PER_YEAR * dt_years) * _MAS
    rot = np.array([[0.0, -r3, r2], [r3, 0.0, -r1], [-r2, r1, 0.0]])
    scale = SCALE + SCALE_RATE_PER_YEAR * dt_years
    return x + T_M + T_RATES_M_PER_YEAR * dt_years + scale * x + rot @ x
