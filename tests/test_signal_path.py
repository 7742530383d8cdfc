"""Signal-path terms: light-time iteration against an inertial-frame solution,
the Sagnac formula against the exact frame rotation, Shapiro shapes.

Reference values: Ashby 2003 (Sagnac form, published), IERS Conventions 2010
eq. 11.17 (Shapiro form; equation number from memory); the inertial-frame
solution is our own independent computation.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import ONE_MILLIMETRE, ONE_PICOSECOND
from relativity_orbits import kepler_state
from scipy.optimize import brentq

from gnssrel.constants import C_M_S
from gnssrel.relativity import signal_path
from gnssrel.timescales import seconds_between

OMEGA = signal_path.OMEGA_GPS_RAD_S
T0 = np.datetime64("2020-06-25T00:00:00", "ns")
ELEMENTS = {"a_m": [26_561_750.0, 29_600_000.0, 26_560_000.0], "e": [0.01, 0.0003, 0.02],
            "i_rad": np.radians([55, 56, 55]), "raan_rad": [0.2, 2.2, 4.0], "argp_rad": [0.5, 1.0, 2.0],
            "mean_anomaly0_rad": [0.1, 1.3, 2.5]}


def eci_position(t_s):
    """(n_t, n_sat, 3) inertial positions at seconds since T0 (n_t,)."""
    return kepler_state(t_s=np.atleast_1d(t_s), **ELEMENTS)[0]


def ecef_state_function(t_gpst, offset_s):
    """ECEF positions at t_gpst + offset_s; the ECEF frame coincides with ECI at T0."""
    n_sat = len(ELEMENTS["a_m"])
    t = np.broadcast_to(seconds_between(t_gpst, T0)[..., None] + np.asarray(offset_s),
                        (np.size(t_gpst), n_sat))  # (n_t, n_sat)
    pos = np.stack([kepler_state(t_s=t[:, k], **{n: np.asarray(v)[k:k + 1] for n, v in ELEMENTS.items()})[0][:, 0]
                    for k in range(t.shape[1])], axis=1)
    return signal_path.rotate_about_z(pos, OMEGA * t)


RX = np.array([3_512_000.0, 778_000.0, 5_248_000.0])  # a point near Copenhagen, ECEF (m)
T_RX = T0 + np.array([1800, 7200, 30_000], dtype="timedelta64[s]").astype("timedelta64[ns]")


def test_light_time_matches_inertial_solution():
    sol = signal_path.light_time(ecef_state_function, RX, T_RX)
    tau = sol["flight_time_s"]
    assert tau.shape == (3, 3)
    assert np.all((tau > 0.06) & (tau < 0.125))  # some are below the horizon: fine for geometry
    # self-consistency of the fixed point to the requested tolerance
    rng = np.linalg.norm(sol["satellite_position_m"] - RX, axis=-1)
    assert np.max(np.abs(rng / C_M_S - tau)) < ONE_PICOSECOND
    # independent: solve |r_s(t_r - tau) - r_r(t_r)| = c tau in the inertial frame
    t_rx_s = seconds_between(T_RX, T0)
    for i, t_r in enumerate(t_rx_s):
        rx_eci = signal_path.rotate_about_z(RX, -OMEGA * t_r)
        for k in range(3):
            def gap(tt, k=k, t_r=t_r, rx_eci=rx_eci):
                return np.linalg.norm(eci_position(t_r - tt)[0, k] - rx_eci) - C_M_S * tt
            ref = brentq(gap, 0.05, 0.13, xtol=1e-15)
            assert tau[i, k] == pytest.approx(ref, abs=ONE_PICOSECOND)


def test_sagnac_formula_against_frame_rotation():
    sol = signal_path.light_time(ecef_state_function, RX, T_RX)
    formula = signal_path.sagnac_s(sol["satellite_position_transmit_frame_m"], RX)
    assert np.max(np.abs(formula)) > 10e-9  # tens of ns at mid latitudes
    # the first-order formula vs the exact rotation: agree to far below a millimetre
    assert np.max(np.abs(formula - sol["sagnac_s"])) * C_M_S < 0.1 * ONE_MILLIMETRE


def test_shapiro_option_and_shapes():
    plain = signal_path.light_time(ecef_state_function, RX, T_RX)
    with_delay = signal_path.light_time(ecef_state_function, RX, T_RX, with_shapiro=True)
    extra = with_delay["flight_time_s"] - plain["flight_time_s"]
    shapiro = signal_path.shapiro_s(with_delay["satellite_position_m"], RX)
    assert extra.shape == shapiro.shape == (3, 3)
    assert np.max(np.abs(extra - shapiro)) < 2 * ONE_PICOSECOND
    # IERS 2010 eq. 11.17 (derived, REFERENCE-CHECKS 7): between 12.6 mm (zenith) and 18.7 mm (horizon),
    # for the satellites above the horizon (the others' paths cross the Earth and are longer)
    visible = np.einsum("...i,i->...", with_delay["satellite_position_m"] - RX, RX) > 0
    assert visible.sum() >= 3
    mm = shapiro[visible] * C_M_S / ONE_MILLIMETRE
    assert np.all(mm > 12.6) and np.all(mm < 19.5)
    assert np.all(shapiro[~visible] * C_M_S / ONE_MILLIMETRE > 18.0)


def test_sagnac_sign_eastward_and_westward():
    # Ashby 2003: a signal travelling eastward (with the rotation) takes longer
    rx = np.array([6_378_137.0, 0.0, 0.0])
    east = np.array([20_000e3, 10_000e3, 0.0])   # satellite to the east of the receiver meridian
    west = np.array([20_000e3, -10_000e3, 0.0])
    # signal goes from satellite to receiver: from the east it travels westward (shorter)
    assert signal_path.sagnac_s(east, rx) < 0 < signal_path.sagnac_s(west, rx)


def test_no_convergence_raises():
    with pytest.raises(RuntimeError, match="did not converge"):
        signal_path.light_time(ecef_state_function, RX, T_RX, max_iterations=1)
