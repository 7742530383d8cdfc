"""Weights of the code observations in the fixes from the logged carrier-to-noise density.

sigma^2 = a + b 10^(-C/N0 / 10), C/N0 in dB-Hz, with a = (0.3 m)^2 and b = 1.6e4 m^2 Hz: the form
of the sigma-epsilon model (Hartinger & Brunner 1999, from memory); the constants are our choice
for code pseudoranges (4.0 m at 30 dB-Hz, 1.3 m at 40, 0.5 m at 50 dB-Hz), near what phones
and low-cost modules show (GEOP 2024-04-01: a variance of unit weight of 0.8-1.3 with them).
An ionosphere-free combination g1 P1 - g2 P2 has the variance g1^2 sigma1^2 + g2^2 sigma2^2.
"""

from __future__ import annotations

import numpy as np

CN0_FLOOR_M2 = 0.3**2
CN0_SCALE_M2_HZ = 1.6e4
CN0_VALID_DBHZ = (10.0, 70.0)
"""A logged signal strength outside this range is not taken for a C/N0 in dB-Hz (RINEX 2 files
may carry the 1-9 strength scale there)."""


def cn0_variance_m2(cn0_dbhz) -> np.ndarray:
    """Code variance a + b 10^(-C/N0 / 10) in m^2 (module text); NaN where no valid C/N0."""
    c = np.asarray(cn0_dbhz, dtype=float)
    valid = np.isfinite(c) & (c >= CN0_VALID_DBHZ[0]) & (c <= CN0_VALID_DBHZ[1])
    with np.errstate(invalid="ignore"):
        return np.where(valid, CN0_FLOOR_M2 + CN0_SCALE_M2_HZ * 10.0 ** (-c / 10.0), np.nan)


def observation_cn0_variance_m2(obs: dict) -> np.ndarray:
    """Per observation, the C/N0 variance of its code or combination (NaN where not logged)."""
    n = obs["epoch"].size
    cn0 = obs.get("cn0_dbhz")
    if cn0 is None:
        return np.full(n, np.nan)
    gains = obs.get("combination_gains", np.column_stack([np.ones(n), np.zeros(n)]))
    second = obs.get("cn0_second_dbhz", np.full(n, np.nan))
    v1, v2 = cn0_variance_m2(cn0), cn0_variance_m2(second)
    pair = gains[:, 1] != 0
    return np.where(pair, gains[:, 0] ** 2 * v1 + gains[:, 1] ** 2 * v2, gains[:, 0] ** 2 * v1)
