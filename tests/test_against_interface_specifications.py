"""Per-system constants against the interface specifications, and the orbit algorithm's use of them.

The values of F, L_G and the factory frequency offset are checked once, in
test_against_published_values.py (REFERENCE-CHECKS E1, E4, E5, E7); this file checks that
every system has its own constants and that the orbit algorithm takes the right one.
"""

import math

import numpy as np
import pytest

from gnssrel import constants as k
from gnssrel.orbits.keplerian import kepler_states


def test_every_system_has_a_source_and_own_time_scale():
    assert set(k.SYSTEMS) == set(k.ALL_SYSTEM_ORDER)
    scales = {s.time_scale for s in k.SYSTEMS.values()}
    assert scales == {"GPST", "GST", "BDT", "QZSST", "GLONASST", "IRNST"}   # SBAS keeps GPST
    for s in k.SYSTEMS.values():
        assert s.source and 3.9e14 < s.gm_m3_s2 < 4.0e14
        assert math.isclose(s.omega_earth_rad_s, 7.2921e-5, rel_tol=1e-5)


@pytest.mark.parametrize("system, mu", [
    ("G", 3.986005e14),      # IS-GPS-200 Table 20-IV (REFERENCE-CHECKS 1.1; published)
    ("J", 3.986005e14),      # IS-QZSS-PNT: the GPS constants (REFERENCE-CHECKS 2; from memory)
    ("E", 3.986004418e14),   # Galileo OS SIS ICD 5.1.1 (REFERENCE-CHECKS 2; from memory)
    ("C", 3.986004418e14),   # BDS-SIS-ICD 3.2, CGCS2000, a MEO satellite (REFERENCE-CHECKS 2; published)
])
def test_mean_motion_takes_the_system_mu(system, mu):
    # Table 20-IV steps 1-6 by hand: with e = 0, M0 = 0 and delta n = 0, E_k = M_k = sqrt(mu/A^3) t_k.
    # One day after toe the GPS and Galileo mu (relative difference 1.46e-9) move E_k by
    # 12.6 rad x 7.3e-10 = 9.2e-9 rad (0.24 m along the orbit): 9 000 times the tolerance.
    sqrt_a, tk = 5153.8, 86_400.0
    toe = np.datetime64("2020-06-25T00:00:00", "ns")
    elements = {name: np.array([0.0]) for name in ("delta_n_rad_per_s", "mean_anomaly_rad", "eccentricity",
                                                    "perigee_argument_rad", "cuc_rad", "cus_rad", "crc_m",
                                                    "crs_m", "cic_rad", "cis_rad", "inclination_rad",
                                                    "idot_rad_per_s", "omega0_rad", "omega_dot_rad_per_s")}
    elements.update(toe=np.array([toe]), sqrt_a_sqrt_m=np.array([sqrt_a]), toe_sow_s=np.array([345_600.0]))
    state = kepler_states(elements, np.array([toe + np.timedelta64(86_400, "s")]), system)
    expected = math.sqrt(mu / sqrt_a**6) * tk
    difference = np.angle(np.exp(1j * (state["eccentric_anomaly_rad"][0] - expected)))
    assert abs(difference) < 1e-12
    # and the orbit radius is A itself (circular orbit, no corrections)
    assert np.linalg.norm(state["position_ecef_m"][0]) == pytest.approx(sqrt_a**2, abs=1e-6)
