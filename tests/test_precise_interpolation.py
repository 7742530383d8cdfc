"""Lagrange interpolation of SP3 orbits and linear interpolation of clocks, checked
against the precise samples themselves (leave-one-out), finite differences,
the orbital speed, the 30 s clocks of the same product, and on gaps."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import ONE_MILLIMETRE, ONE_NANOSECOND, ONE_PICOSECOND

from gnssrel.constants import GM_EARTH_IERS_M3_S2, GPS_NOMINAL_SEMI_MAJOR_AXIS_M, OMEGA_EARTH_IERS_RAD_S
from gnssrel.io.rinex_clock import read_rinex_clock
from gnssrel.io.sp3 import read_sp3
from gnssrel.orbits.interpolation import interpolate_clock
from gnssrel.orbits.precise import STATUS_CODES, STATUS_GAP, STATUS_OUTSIDE, lagrange_weights, precise_states
from gnssrel.timescales import seconds_between

DAY_176 = "2020-177/GRG0MGXFIN_20201760000_01D_15M_ORB.SP3.gz"
DAY_177 = "2020-177/GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz"
CLK_177 = "2020-177/GRG0MGXFIN_20201770000_01D_30S_CLK.CLK.gz"
ONE_CENTIMETRE = 10 * ONE_MILLIMETRE


@pytest.fixture(scope="module")
def two_days():
    from conftest import refdata_file
    return read_sp3([refdata_file(DAY_176), refdata_file(DAY_177)])


@pytest.fixture(scope="module")
def day_177():
    from conftest import refdata_file
    return read_sp3(refdata_file(DAY_177))


def _is_gps(ds):
    return np.array([s.startswith("G") for s in ds["sv"].values])


# --- Lagrange core -------------------------------------------------------------------

def test_weights_reproduce_polynomials_and_derivatives():
    rng = np.random.default_rng(1)
    nodes = np.sort(rng.uniform(-5, 5, size=(4, 10)), axis=1)
    coeffs = rng.normal(size=10)  # degree 9: reproduced exactly by 10 points
    values = np.polynomial.polynomial.polyval(nodes, coeffs)
    weights, deriv = lagrange_weights(nodes)
    np.testing.assert_allclose((weights * values).sum(axis=1), coeffs[0], rtol=1e-9)
    np.testing.assert_allclose((deriv * values).sum(axis=1), coeffs[1], rtol=1e-8)
    np.testing.assert_allclose(weights.sum(axis=1), 1.0, rtol=1e-12)
    np.testing.assert_allclose(deriv.sum(axis=1), 0.0, atol=1e-10)


def _leave_one_out_m(ds, order, epochs):
    """Distance between each left-out sample and the interpolant through its 'order' neighbours."""
    t = seconds_between(ds["time"].values, ds["time"].values[0])
    pos = ds["position_ecef_m"].values
    left = order // 2
    nodes = np.array([np.r_[np.arange(k - left, k), np.arange(k + 1, k + 1 + order - left)] for k in epochs])
    weights, _ = lagrange_weights((t[nodes] - t[epochs][:, None]) / 900.0)
    estimate = np.einsum("tj,tjsa->tsa", weights, pos[nodes])
    return np.linalg.norm(estimate - pos[epochs], axis=-1)


@pytest.mark.refdata
def test_leave_one_out_gps_at_15_min(day_177):
    """Common practice: 9-11 point Lagrange on 15-min SP3 gives cm-level (< 1 cm) positions
    (Navipedia, REFERENCE-CHECKS 4.1).  Measured on GRG final 2020-06-25, 30 GPS
    satellites, 86 inner epochs, 10 points: median 0.23 cm, 99th percentile 0.78 cm,
    max 1.18 cm (one satellite); 9 points: median 2.0 cm."""
    error = _leave_one_out_m(day_177, 10, np.arange(5, 91))[:, _is_gps(day_177)]
    assert np.median(error) < 0.5 * ONE_CENTIMETRE
    assert np.percentile(error, 99) < 1.0 * ONE_CENTIMETRE
    assert error.max() < 2.0 * ONE_CENTIMETRE
    # fewer points is measurably worse: the degree matters (9 points: median 2.0 cm measured)
    error_9 = _leave_one_out_m(day_177, 9, np.arange(5, 91))[:, _is_gps(day_177)]
    assert np.median(error_9) > 3 * np.median(error)


@pytest.mark.refdata
def test_sample_epochs_reproduced(two_days):
    states = precise_states(two_days, two_days["time"].values[10:20])
    np.testing.assert_allclose(states["position_ecef_m"].values, two_days["position_ecef_m"].values[10:20],
                               rtol=0, atol=1e-6)
    np.testing.assert_array_equal(states["clock_s"].values, two_days["clock_s"].values[10:20])
    assert (states["status"].values == 0).all()


@pytest.mark.refdata
def test_inertial_frame_is_better_on_sparse_samples(day_177):
    """Every second epoch left out (30-min samples): the Earth-rotation-frozen frame
    reproduces the left-out GPS samples better (measured medians, 10 points: ECEF 12.5 cm,
    inertial 3.2 cm)."""
    sparse = day_177.isel(time=slice(0, None, 2))
    sparse.attrs = dict(day_177.attrs, epoch_interval_s=1800.0)
    targets = day_177["time"].values[11:86:2]
    truth = day_177["position_ecef_m"].values[11:86:2][:, _is_gps(day_177)]
    errors = {}
    for frame in ("ecef", "inertial"):
        states = precise_states(sparse, targets, frame=frame)
        assert (states["status"].values == 0).all()
        errors[frame] = np.linalg.norm(states["position_ecef_m"].values[:, _is_gps(day_177)] - truth, axis=-1)
    assert np.median(errors["inertial"]) < 0.5 * np.median(errors["ecef"])
    assert np.median(errors["inertial"]) < 6 * ONE_CENTIMETRE


# --- velocity ---------------------------------------------------------------------

@pytest.mark.refdata
@pytest.mark.parametrize("frame", ["ecef", "inertial"])
def test_velocity_matches_finite_differences(two_days, frame):
    t = np.arange(np.datetime64("2020-06-25T00:07:10", "ns"), np.datetime64("2020-06-25T23:00", "ns"),
                  np.timedelta64(47, "m"))
    h = np.timedelta64(1, "s")
    after = precise_states(two_days, t + h, frame=frame)["position_ecef_m"].values
    before = precise_states(two_days, t - h, frame=frame)["position_ecef_m"].values
    velocity = precise_states(two_days, t, frame=frame)["velocity_ecef_m_per_s"].values
    # central difference over 2 s: truncation ~ jerk h^2 / 6 < 1e-4 m/s (measured max 1.3e-4 m/s
    # for the eccentric Galileo E14/E18)
    np.testing.assert_allclose(velocity, (after - before) / 2.0, rtol=0, atol=1e-3)


@pytest.mark.refdata
def test_gps_inertial_speed(two_days):
    """Derived: a circular orbit at the nominal GPS semi-major axis moves at
    sqrt(GM/a) = 3873.8 m/s; with e <= 0.02 the speed stays within +-2 %."""
    t = np.arange(np.datetime64("2020-06-25T00:00", "ns"), np.datetime64("2020-06-25T23:45", "ns"),
                  np.timedelta64(7, "m"))
    states = precise_states(two_days, t, svs=[s for s in two_days["sv"].values if s.startswith("G")])
    r = states["position_ecef_m"].values
    v = states["velocity_ecef_m_per_s"].values.copy()
    v[..., 0] -= OMEGA_EARTH_IERS_RAD_S * r[..., 1]  # v_inertial = v_ecef + omega x r
    v[..., 1] += OMEGA_EARTH_IERS_RAD_S * r[..., 0]
    speed = np.linalg.norm(v, axis=-1)
    circular = np.sqrt(GM_EARTH_IERS_M3_S2 / GPS_NOMINAL_SEMI_MAJOR_AXIS_M)
    assert circular == pytest.approx(3873.8, abs=0.1)
    assert np.median(speed) == pytest.approx(circular, rel=0.005)
    assert np.all(np.abs(speed / circular - 1) < 0.025)


# --- across midnight -----------------------------------------------------------------

@pytest.mark.refdata
def test_continuity_across_midnight(two_days):
    midnight = np.datetime64("2020-06-25T00:00", "ns")
    eps = np.timedelta64(1, "us")
    before = precise_states(two_days, [midnight - eps])
    after = precise_states(two_days, [midnight + eps])
    assert (before["status"].values == 0).all() and (after["status"].values == 0).all()
    # windows from the two daily files meet at the shared node: no step in position beyond
    # the motion in 2 us, velocity steps of 0.012 mm/s at most (measured; 0.003-0.005 mm/s
    # at nodes inside a day)
    moved = after["position_ecef_m"].values - before["position_ecef_m"].values
    expected = before["velocity_ecef_m_per_s"].values * 2e-6
    np.testing.assert_allclose(moved, expected, rtol=0, atol=1e-6)
    jump = np.linalg.norm(after["velocity_ecef_m_per_s"].values - before["velocity_ecef_m_per_s"].values, axis=-1)
    assert np.nanmax(jump) < 0.1 * ONE_MILLIMETRE
    # the two independent daily solutions agree at the day boundary to a few cm:
    # leave-one-out at 23:45 and 00:00 (measured max 2.6 cm for GPS)
    error = _leave_one_out_m(two_days, 10, np.array([95, 96]))[:, _is_gps(two_days)]
    assert error.max() < 4 * ONE_CENTIMETRE
    # the last interval of day 176 alone is covered (off-centre window) and agrees with the
    # centred two-day interpolation to 1.6 cm for GPS (measured)
    t = np.arange(np.datetime64("2020-06-24T23:30", "ns"), np.datetime64("2020-06-24T23:45:01", "ns"),
                  np.timedelta64(30, "s"))
    alone = precise_states(two_days.sel(time=slice(None, np.datetime64("2020-06-24T23:45"))), t)
    merged = precise_states(two_days, t)
    gps = _is_gps(two_days)
    d = np.linalg.norm(alone["position_ecef_m"].values - merged["position_ecef_m"].values, axis=-1)[:, gps]
    assert d.max() < 3 * ONE_CENTIMETRE


# --- gaps, limits, shapes -------------------------------------------------------------

@pytest.mark.refdata
def test_missing_sample_gives_gap_status(two_days):
    ds = two_days.copy(deep=True)
    k = 120
    ds["position_ecef_m"][k, 0, :] = np.nan
    t0 = ds["time"].values[k]
    targets = t0 + np.array([-6 * 900, -2 * 900, 450, 4 * 900, 6 * 900], dtype="timedelta64[s]")
    states = precise_states(ds, targets)
    first = states["status"].values[:, 0]
    # a 10-point window reaches 4-5 samples either side of the target
    assert first.tolist() == [0, STATUS_GAP, STATUS_GAP, STATUS_GAP, 0]
    assert np.isnan(states["position_ecef_m"].values[1:4, 0]).all()
    assert (states["status"].values[:, 1:] == 0).all()
    assert states["status"].attrs["status_codes"] == STATUS_CODES


@pytest.mark.refdata
def test_missing_epochs_and_outside(two_days):
    ds = two_days.drop_isel(time=[100, 101])  # two epochs lost: a 45-min hole
    t0 = two_days["time"].values[100]
    targets = np.array([t0, t0 + np.timedelta64(20, "h"), two_days["time"].values[0] - np.timedelta64(1, "s"),
                        two_days["time"].values[-1] + np.timedelta64(1, "s")])
    states = precise_states(ds, targets, svs=["G05", "E11", "C20"])
    gap, out = STATUS_GAP, STATUS_OUTSIDE
    assert states["status"].values.tolist() == [[gap, gap, out], [0, 0, out], [out, out, out], [out, out, out]]
    assert np.isnan(states["clock_s"].values[0]).all()
    assert np.isfinite(states["clock_s"].values[1, :2]).all()


@pytest.mark.refdata
def test_shapes_follow_inputs(two_days):
    t = np.arange(np.datetime64("2020-06-25T01:00", "ns"), np.datetime64("2020-06-25T02:00", "ns"),
                  np.timedelta64(30, "s"))
    states = precise_states(two_days, t, svs=["G05", "R07"], order=11)
    assert states["position_ecef_m"].shape == (120, 2, 3)
    assert states["velocity_ecef_m_per_s"].shape == (120, 2, 3)
    assert states["clock_s"].shape == (120, 2) and states["status"].dtype == np.int8
    assert states.attrs["time_scale"] == "GPST" and "IGb14" in states.attrs["frame"]


# --- clocks ------------------------------------------------------------------------

def test_interpolate_clock_linear_and_gaps():
    t = np.arange(0.0, 300.0, 30.0)          # 10 samples at 30 s
    clock = np.stack([1e-4 + 2e-9 * t, -3e-4 + 0.0 * t], axis=1)
    clock[6, 1] = np.nan                     # one missing sample
    targets = np.array([-1.0, 0.0, 15.0, 145.0, 165.0, 185.0, 270.0, 271.0])
    out = interpolate_clock(t, clock, targets)
    np.testing.assert_allclose(out[1:7, 0], 1e-4 + 2e-9 * targets[1:7], rtol=0, atol=1e-18)
    assert np.isnan(out[0]).all() and np.isnan(out[7]).all()       # outside the samples
    assert np.isnan(out[4, 1]) and np.isnan(out[5, 1])             # next to the missing sample (180 s)
    assert out[3, 1] == -3e-4 and out[6, 1] == -3e-4
    spaced = np.array([0.0, 30.0, 60.0, 150.0, 180.0])            # 90 s spacing = gap at 30 s nominal
    single = interpolate_clock(spaced, spaced * 1e-9, np.array([45.0, 100.0, 165.0]))
    assert np.isnan(single[1]) and single.shape == (3,)
    assert single[0] == pytest.approx(45e-9) and single[2] == pytest.approx(165e-9)
    bridged = interpolate_clock(spaced, spaced * 1e-9, np.array([100.0]), max_gap_s=120.0)
    assert bridged[0] == pytest.approx(100e-9)


def test_interpolate_clock_datetimes():
    t = np.datetime64("2020-06-25T00:00", "ns") + np.arange(4) * np.timedelta64(30, "s")
    out = interpolate_clock(t, np.array([0.0, 3e-9, 6e-9, 9e-9]), t[:1] + np.timedelta64(40, "s"))
    assert out[0] == pytest.approx(4e-9, abs=1e-20)


@pytest.mark.refdata
def test_sp3_clocks_against_30s_clocks(day_177, refdata):
    """Same GRG product: the 15-min SP3 clocks equal the 30 s CLK values at shared
    epochs to the SP3 rounding (1 ps); linear interpolation of the 15-min clocks
    then reproduces the 30 s clocks with RMS (measured) GPS 0.13 ns, Galileo 0.011 ns
    (passive hydrogen masers), GLONASS 0.14 ns; max 1.2 ns."""
    clk = read_rinex_clock(refdata(CLK_177))
    svs = [s for s in clk["sv"].values if s in day_177["sv"].values]
    at_sp3 = clk["clock_s"].sel(sv=svs, time=day_177["time"].values).values
    assert np.nanmax(np.abs(at_sp3 - day_177["clock_s"].sel(sv=svs).values)) <= 0.51 * ONE_PICOSECOND
    interpolated = interpolate_clock(day_177["time"].values, day_177["clock_s"].sel(sv=svs).values,
                                     clk["time"].values)
    diff = interpolated - clk["clock_s"].sel(sv=svs).values
    system = np.array([s[0] for s in svs])
    rms = {s: np.sqrt(np.nanmean(diff[:, system == s] ** 2)) for s in "GER"}
    assert rms["E"] < 0.03 * ONE_NANOSECOND
    assert rms["G"] < 0.3 * ONE_NANOSECOND and rms["R"] < 0.3 * ONE_NANOSECOND
    assert np.nanmax(np.abs(diff)) < 3 * ONE_NANOSECOND
    # after 23:45 there is no next SP3 sample: no extrapolation
    assert np.isnan(interpolated[-29:]).all() and np.isfinite(interpolated[:-29]).mean() > 0.99
