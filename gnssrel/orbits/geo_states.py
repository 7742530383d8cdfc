"""SBAS GEO states from the broadcast position, velocity and acceleration (RINEX SBAS records).

The SBAS standard prescribes no integration for its GEO navigation message (message type 9):
the user evaluates a quadratic in time from the reference epoch t_0,GEO,

    r(t) = r_0 + v_0 (t - t_0) + a_0 (t - t_0)^2 / 2,     v(t) = v_0 + a_0 (t - t_0),

in WGS-84 Earth-fixed coordinates, and the clock a_Gf0 + a_Gf1 (t - t_0,GEO)
(RTCA DO-229 Appendix A, GEO navigation message, A.4.4.11; section number from memory).
This module evaluates that quadratic, not a GLONASS-style integration: the message is
refreshed every few minutes (BRD400DLR 2023-071: every 80-130 s per satellite), so the
quadratic is what the sender meant and what a receiver computes.  Several SBAS providers
broadcast zero velocity and acceleration (BRD400DLR: S22 and others), which the quadratic
turns into a fixed point -- the broadcast meaning of such a record.

The clock's relativistic convention (whether a_Gf0, a_Gf1 already hold the periodic term
-2 r.v / c^2, or the user adds it) is *undetermined* here: the MOPS text on the GEO clock
could not be checked, and for a geostationary orbit the term is below a nanosecond (e ~ 1e-4,
F e sqrt(A) ~ 0.3 ns), under the metre-level accuracy of the message.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from gnssrel.timescales import seconds_between

STATE_COLUMNS = ("x_m", "y_m", "z_m", "vx_m_per_s", "vy_m_per_s", "vz_m_per_s")
ACCELERATION_COLUMNS = ("ax_m_per_s2", "ay_m_per_s2", "az_m_per_s2")


def sbas_states(records: Mapping, t_gpst, system: str = "S") -> dict:
    """States of SBAS GEO records at GPST times (module text), the keys of ``kepler_states``.

    ``records``: ``toc`` (t_0,GEO, GPST) and :data:`STATE_COLUMNS` / :data:`ACCELERATION_COLUMNS`
    (metres, as the reader gives them), arrays broadcastable with ``t_gpst``.  Element
    values (eccentric anomaly, argument of latitude, inclination) are NaN: the message has none.
    """
    t = np.asarray(t_gpst).astype("datetime64[ns]")
    t0 = np.asarray(records["toc"]).astype("datetime64[ns]")
    dt = np.where(np.isnat(t) | np.isnat(t0), np.nan, seconds_between(t, t0))
    r0 = np.stack([np.asarray(records[c], dtype=np.float64) for c in STATE_COLUMNS[:3]], axis=-1)
    v0 = np.stack([np.asarray(records[c], dtype=np.float64) for c in STATE_COLUMNS[3:]], axis=-1)
    a0 = np.stack([np.nan_to_num(np.asarray(records[c], dtype=np.float64)) for c in ACCELERATION_COLUMNS],
                  axis=-1)
    d = np.asarray(dt, dtype=np.float64)[..., None]
    pos = r0 + v0 * d + 0.5 * a0 * d * d
    vel = v0 + a0 * d
    nan = np.full(pos.shape[:-1], np.nan)
    return {"position_ecef_m": pos, "velocity_ecef_m_per_s": vel, "eccentric_anomaly_rad": nan,
            "argument_of_latitude_rad": nan.copy(), "radius_m": np.linalg.norm(pos, axis=-1),
            "inclination_rad": nan.copy(), "tk_s": np.broadcast_to(dt, nan.shape).copy()}
