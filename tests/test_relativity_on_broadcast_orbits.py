"""The relativity engine on real broadcast (and final SP3) orbits of 2020-06-25.

Data: ../shared/refdata/2020-177, MOJN mixed RINEX 3.05 navigation file and the
GRG final multi-GNSS SP3 orbits.  Reference figures: REFERENCE-CHECKS section 11 (an
independent computation on the same files): largest GPS periodic term 54.6 ns.  The same
independent computation found F e sqrtA sinE vs -2 r.v/c^2 within 0.062 ns for GPS and
Galileo (0.10 ns BeiDou, 0.15 ns QZSS), the same with SP3 states; those figures are not
printed in REFERENCE-CHECKS, so they count as regression values here (this code measures
the same to 0.01 ns) under the section 9 limit of 0.2 ns.  E14/E18 periodic terms of 392 ns:
derived from their broadcast elements.  Rate: IS-GPS-200 3.3.1.1 factory offset 4.4647e-10
(published), satellites off nominal by up to ~10 ns/day ~ 1.2e-13 (Kouba 2004, published).
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import refdata_file

from gnssrel.relativity.engine import relativity_summary, relativity_terms

pytestmark = pytest.mark.refdata

NAV = "2020-177/MOJN00DNK_R_20201770000_01D_MN.rnx.gz"
SP3 = ("2020-177/GRG0MGXFIN_20201760000_01D_15M_ORB.SP3.gz",
       "2020-177/GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz")
DAY_START = np.datetime64("2020-06-25T00:00:00", "ns")


@pytest.fixture(scope="module")
def nav():
    from gnssrel.io.rinex_nav import read_navigation

    return read_navigation(refdata_file(NAV), systems=list("GECJ"))


@pytest.fixture(scope="module")
def broadcast_summary(nav):
    from gnssrel.orbits.broadcast import broadcast_states, time_grid

    times = time_grid(DAY_START, DAY_START + np.timedelta64(86_340, "s"), 60.0)
    ds = relativity_terms(broadcast_states(nav, times, include_unhealthy=True))
    return ds, relativity_summary(ds)


def by_system(summary, letter):
    return {s: v for s, v in summary["satellites"].items() if s[0] == letter}


def test_every_gps_rate_is_the_factory_offset(nav, broadcast_summary):
    gps = by_system(broadcast_summary[1], "G")
    assert len(gps) >= 30
    rates = np.array([v["rate_total"] for v in gps.values()])
    # IS-GPS-200 3.3.1.1 (published) to 5e-13: real semi-major axes are off nominal by up to
    # ~10 ns/day = 1.2e-13 (Kouba 2004, published), and J2 moves the day's mean rate by less
    assert np.all(np.abs(rates - 4.4647e-10) < 5e-13)
    # Kouba 2004 (published): off-nominal semi-major axes give up to ~10 ns/day (1.2e-13)
    residual = np.array([v["rate_residual_vs_nominal"] for v in gps.values()])
    assert np.max(np.abs(residual)) < 2e-13
    assert np.max(np.abs(residual)) > 1e-15  # real satellites are not all exactly nominal
    split = gps["G05"]
    # Derived from G05's own broadcast sqrt A (median over the day's records, 5153.6917 m^0.5):
    # over whole orbits <1/r> = 1/a and <v^2> = GM/a, so the day's mean parts are
    #   gravity  = (L_G - GM/(a c^2)) x 86 400 s = +45.7878 us/day,
    #   velocity = -GM/(2 a c^2) x 86 400 s      = -7.2135 us/day
    # (L_G = 6.969290134e-10 IERS 2010, GM = 3.986005e14 IS-GPS-200).  Measured 45.7879 / -7.2133:
    # the tolerance 0.005 us/day covers J2 and the day not being two whole orbits.
    a = np.median(nav.ephemerides["G"].query("sv == 'G05'")["sqrt_a_sqrt_m"]) ** 2
    gm, c, l_g = 3.986005e14, 299_792_458.0, 6.969290134e-10
    assert split["us_per_day_gravity"] == pytest.approx((l_g - gm / (a * c * c)) * 86_400e6, abs=0.005)
    assert split["us_per_day_velocity"] == pytest.approx(-gm / (2 * a * c * c) * 86_400e6, abs=0.005)
    # IS-GPS-200 3.3.1.1 (published): 4.4647e-10 x 86 400 s = 38.575 us/day, G05 within 0.01 us/day
    # (10 ns/day, Kouba 2004's bound for off-nominal orbits; measured 38.5746)
    assert split["us_per_day_total"] == pytest.approx(38.575, abs=0.01)
    assert split["user_applies_periodic"] is True


def test_largest_gps_periodic_term(broadcast_summary):
    gps = by_system(broadcast_summary[1], "G")
    largest = max(gps.items(), key=lambda kv: kv[1]["periodic_max_abs_ns"])
    # REFERENCE-CHECKS 11 (independent computation): 54.6 ns that day
    assert largest[1]["periodic_max_abs_ns"] == pytest.approx(54.6, abs=0.1)
    # the amplitude |F| e sqrtA bounds it (same elements, largest |sin E| over the day ~ 1)
    assert largest[1]["periodic_amplitude_ns"] == pytest.approx(largest[1]["periodic_max_abs_ns"], rel=0.01)


@pytest.mark.parametrize("letter,limit,expected", [("G", 0.2, 0.062), ("E", 0.2, 0.062),
                                                   ("C", 0.2, 0.10), ("J", 0.2, 0.15)])
def test_icd_form_against_state_form(broadcast_summary, letter, limit, expected):
    # REFERENCE-CHECKS 9: the two forms agree to <= ~0.1 ns (judgement; the harmonic corrections,
    # Kouba 2004), limit 0.2 ns; the independent computation on the same files gave 0.062 / 0.062 /
    # 0.10 / 0.15 ns (module text: regression values), pinned to 0.01 ns
    diffs = [v["icd_vs_state_max_diff_ns"] for v in by_system(broadcast_summary[1], letter).values()]
    assert max(diffs) <= limit
    assert max(diffs) == pytest.approx(expected, abs=0.01)


def test_eccentric_galileo_satellites(broadcast_summary):
    # E14/E18 (unhealthy, eccentric orbit, e = 0.167): |F| e sqrtA = 4.4428073e-10 x 0.1668 x 5289.35
    # = 392.0 ns, E18 392.5 ns (derived from their broadcast elements; |sin E| reaches ~1 in a day)
    gal = by_system(broadcast_summary[1], "E")
    for sv in ("E14", "E18"):
        assert gal[sv]["periodic_max_abs_ns"] == pytest.approx(392, abs=1.5)
        assert gal[sv]["eccentricity"] == pytest.approx(0.167, abs=0.002)


def test_proper_time_integral_on_broadcast_orbits(broadcast_summary):
    # The integral closes against the closed forms at the J2 level (Kouba 2004: ~0.1 ns);
    # broadcast e, sqrtA, E act like mean elements, so the specification form alone and
    # the state form + J2 term both stay well inside 0.2 ns (see test_proper_time_integral.py).
    gps = by_system(broadcast_summary[1], "G")
    assert max(v["integral_vs_closed_form_max_ns"] for v in gps.values()) < 0.1
    assert max(v["integral_vs_state_form_with_j2_max_ns"] for v in gps.values()) < 0.03
    ds = broadcast_summary[0]
    assert {"periodic_icd_s", "j2_periodic_s", "rate_total", "proper_time_offset_s"} <= set(ds)
    assert ds["periodic_icd_s"].dims == ("time", "sv")
    assert ds["user_applies_periodic"].sel(sv="G05").item()


def test_same_figures_with_final_sp3_states(nav):
    # the icd-vs-state difference is 0.062 ns with SP3 states too (independent computation on the
    # same files, module text: a regression value)
    from gnssrel.io.sp3 import read_sp3
    from gnssrel.orbits.broadcast import broadcast_states, time_grid
    from gnssrel.orbits.precise import precise_states

    times = time_grid(DAY_START, DAY_START + np.timedelta64(86_100, "s"), 300.0)
    states = precise_states(read_sp3([refdata_file(p) for p in SP3], systems=["G"]), times)
    broadcast = broadcast_states(nav, times, systems="G")
    elements = ("eccentricity", "sqrt_a_sqrt_m", "eccentric_anomaly_rad", "inclination_rad",
                "argument_of_latitude_rad")
    aligned = broadcast[list(elements)].reindex(sv=states["sv"].values)
    for name in elements:
        states[name] = aligned[name]
    summary = relativity_summary(relativity_terms(states))
    gps = by_system(summary, "G")
    assert max(v["icd_vs_state_max_diff_ns"] for v in gps.values()) == pytest.approx(0.062, abs=0.01)
    rates = np.array([v["rate_total"] for v in gps.values()])
    assert np.all(np.abs(rates - 4.4647e-10) < 5e-13)
