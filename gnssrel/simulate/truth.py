"""The scenario's truth: satellite orbits and clocks, and what the precise products show.

* broadcast orbit  = the reference elements through the Table 20-IV algorithm (kepler.py);
* true orbit       = broadcast orbit + a smooth decimetre error (two sinusoids per ECEF axis);
* clock polynomial = af0 + af1 dt + af2 dt^2 (IS-GPS-200 20.3.3.3.3.1), continuous per satellite;
* true clock       = polynomial + periodic term F e sqrtA sinE + a smooth ~0.5 ns error:
  what a physical satellite clock shows against GPST, and what the pseudoranges carry;
* precise clock    = polynomial + the same smooth error + the product's datum offset, i.e.
  WITHOUT the periodic term, as IGS products are (REFERENCE-CHECKS.md 4.1, Kouba 2009; M).

Times: GPST ``datetime64[ns]`` of shape (n_t,) or (n_t, n_sat).  Results (n_t, n_sat[, 3]).
"""

from __future__ import annotations

import numpy as np

from gnssrel.simulate.kepler import kepler_positions, periodic_term_s
from gnssrel.timescales import seconds_between


def _elements(scn) -> dict:
    return {c: scn.reference[c].to_numpy() for c in scn.reference.columns}


def _since_start_s(scn, t) -> np.ndarray:
    t = np.asarray(t, dtype="datetime64[ns]")
    s = seconds_between(t, scn.t_ref)
    return s[:, None] if s.ndim == 1 else s


def broadcast_orbit(scn, t) -> dict:
    """Broadcast ECEF positions (m) and eccentric anomalies at GPST times."""
    return kepler_positions(_elements(scn), t)


def orbit_error_m(scn, t) -> np.ndarray:
    """True minus broadcast position, ECEF metres, smooth (periods 4-14 h)."""
    e = scn.errors
    s = _since_start_s(scn, t)[..., None, None]                       # (n_t, n_sat|1, 1, 1)
    wave = e["orbit_amplitude_m"] * np.sin(2 * np.pi * s / e["orbit_period_s"] + e["orbit_phase_rad"])
    return wave.sum(axis=-1)


def true_orbit(scn, t) -> dict:
    """True ECEF positions (m) and the eccentric anomaly of the underlying orbit."""
    out = broadcast_orbit(scn, t)
    out["position_ecef_m"] = out["position_ecef_m"] + orbit_error_m(scn, t)
    return out


def clock_polynomial_s(scn, t) -> np.ndarray:
    """af0 + af1 (t - toc) + af2 (t - toc)^2 of the reference polynomial (toc = ``scn.t_ref``)."""
    dt = _since_start_s(scn, t)
    c = scn.clock
    return c["af0_s"].to_numpy() + c["af1_s_per_s"].to_numpy() * dt + c["af2_s_per_s2"].to_numpy() * dt**2


def clock_error_s(scn, t) -> np.ndarray:
    """True minus broadcast clock, without the periodic term: smooth, ~0.5 ns."""
    e = scn.errors
    s = _since_start_s(scn, t)
    return e["clock_offset_s"] + e["clock_amplitude_s"] * np.sin(
        2 * np.pi * s / e["clock_period_s"] + e["clock_phase_rad"])


def periodic_s(scn, eccentric_anomaly_rad) -> np.ndarray:
    """F e sqrtA sinE for the scenario's satellites (IS-GPS-200 20.3.3.3.3.1)."""
    return periodic_term_s(_elements(scn), eccentric_anomaly_rad)


def true_clock_s(scn, t, eccentric_anomaly_rad) -> np.ndarray:
    """The physical satellite clock offset from GPST, periodic term included."""
    return clock_polynomial_s(scn, t) + periodic_s(scn, eccentric_anomaly_rad) + clock_error_s(scn, t)


def precise_datum_s(scn, t) -> np.ndarray:
    """Offset of the precise products' time scale from GPST (common to all satellites)."""
    offset, drift = scn.precise_datum
    return offset + drift * _since_start_s(scn, t)


def precise_clock_s(scn, t) -> np.ndarray:
    """What the SP3/CLK products contain: true clock minus the periodic term, on their datum."""
    return clock_polynomial_s(scn, t) + clock_error_s(scn, t) + precise_datum_s(scn, t)
