"""The report's figures of orbit differences, signal-path terms and east/north/up positions.

On the invented scenario (sample_logs/, a few seconds): each figure is drawn when its input is
there and left out when not, its captions say what a practitioner must know (antenna offset,
approximate header position, default site), and its axes carry units.  The pieces behind them
are checked on geometry built here: ENU of a known offset, PDOP against a direct least-squares
computation, the Shapiro delay at zenith (IERS Conventions 2010 ch. 11 formula; ~12.7 mm for a
GPS satellite overhead, derived) and a zero Sagnac term in the site's meridian plane (Ashby 2003).
"""

from __future__ import annotations

import copy

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from gnssrel.geodesy import geodetic_to_ecef
from gnssrel.report.layout import GpstFormatter

UNIT = ("(m)", "(ns)", "(ns/s)", "(µs)", "(ms)", "(dimensionless)", "(RINEX name)", "GPST")


@pytest.fixture(scope="module")
def content(demo_content):
    return demo_content


def _labels_have_units(item):
    for ax in item.figure.axes:
        if not ax.get_visible():
            continue
        assert any(u in ax.get_ylabel() for u in UNIT), (item.key, ax.get_ylabel())
        if isinstance(ax.xaxis.get_major_formatter(), GpstFormatter):
            siblings = ax.get_shared_x_axes().get_siblings(ax)
            assert any("GPST" in a.get_xlabel() for a in siblings), item.key
        elif any(t.get_text() for t in ax.get_xticklabels()):
            assert any(u in ax.get_xlabel() for u in UNIT), (item.key, ax.get_xlabel())


def test_orbit_difference_figure_shows_the_radial_mean_and_names_the_antenna_offset(content):
    from gnssrel.report.fig_orbit_differences import orbit_differences_figure

    assert content.orbit_differences is not None
    assert {"time", "sv", "system", "radial_m", "along_m", "cross_m"} <= set(content.orbit_differences.columns)
    item = orbit_differences_figure(content)
    assert item.key == "orbit_differences"
    for words in ("phase centre", "centre of mass", "mean radial", "GPST"):
        assert words in item.caption
    _labels_have_units(item)
    systems = content.orbit_differences["system"].unique()
    assert len(item.figure.axes) == 3 * len(systems) + 1           # radial/along/cross per system + the means
    mean_axis = item.figure.axes[-1]
    names = [t.get_text() for t in mean_axis.get_xticklabels()]
    assert sorted(names) == sorted(content.orbit_differences["sv"].unique())
    # no precise orbits, no figure
    without = copy.copy(content)
    without.orbit_differences = None
    assert orbit_differences_figure(without) is None


def test_signal_path_figure_uses_the_log_header_site_and_says_so(content):
    from gnssrel.report.fig_signal_path import DEFAULT_SITE_DEG, report_site, signal_path_figure

    item = signal_path_figure(content)
    assert item.key == "signal_path"
    first = content.receivers[0]
    site, how = report_site(content)
    np.testing.assert_allclose(site, first.audit.reference_ecef_m)
    assert "header" in how and first.name in item.caption and "approximate" in item.caption
    assert "Sagnac" in item.caption and "Shapiro" in item.caption and "GPST" in item.caption
    _labels_have_units(item)
    # without a log: the stated default site
    without = copy.copy(content)
    without.receivers = []
    site, how = report_site(without)
    lat, lon, h = DEFAULT_SITE_DEG
    np.testing.assert_allclose(site, geodetic_to_ecef(np.radians(lat), np.radians(lon), h))
    item = signal_path_figure(without)
    assert "default site" in item.caption and f"{lat:g}° N" in item.caption


def test_signal_path_terms_overhead_and_in_the_meridian_plane():
    from gnssrel.report.fig_signal_path import signal_path_terms

    lat, lon = np.radians(50.0), np.radians(10.0)
    site = geodetic_to_ecef(lat, lon, 0.0)
    up = geodetic_to_ecef(lat, lon, 20_200e3)             # a GPS-height satellite straight overhead
    low = geodetic_to_ecef(np.radians(-60.0), lon + np.pi, 20_200e3)    # far below the horizon
    east = geodetic_to_ecef(lat, lon + np.radians(20.0), 20_200e3)      # east of the meridian plane
    positions = np.stack([up, low, east])[None].repeat(2, axis=0)
    states = xr.Dataset({"position_ecef_m": (("time", "sv", "axis"), positions)},
                        coords={"time": np.array(["2020-06-25T00:00", "2020-06-25T00:01"], "datetime64[ns]"),
                                "sv": ["G01", "G02", "G03"], "axis": ["x", "y", "z"]})
    terms = signal_path_terms(states, site)
    assert terms["elevation_deg"][0, 0] == pytest.approx(90.0, abs=0.3)
    assert abs(terms["sagnac_m"][0, 0]) < 1e-6                         # in the meridian plane: no Sagnac
    assert terms["shapiro_m"][0, 0] == pytest.approx(0.0127, abs=0.0003)  # ~12.7 mm at zenith (derived)
    assert np.isnan(terms["sagnac_m"][0, 1]) and np.isnan(terms["shapiro_m"][0, 1])   # below the mask
    # east of the site the Sagnac term is negative: omega (x_s y_r - y_s x_r) / c with y_s/x_s > y_r/x_r
    assert terms["sagnac_m"][0, 2] < -1.0


def test_position_figures_per_receiver_with_enu_satellites_and_dop(content):
    from gnssrel.report.fig_positions import position_figure

    for r in content.receivers:
        item = position_figure(r)
        assert item.key == f"positions_enu_{r.name}"
        _labels_have_units(item)
        ylabels = [ax.get_ylabel() for ax in item.figure.axes]
        assert ylabels[:3] == ["east error (m)", "north error (m)", "up error (m)"]
        assert any("PDOP" in y for y in ylabels) and any("satellites" in y for y in ylabels)
        # the reference is the header position here: the caption says it is only approximate
        assert r.audit.reference == "header" and "approximate" in item.caption
        # every computed hypothesis is drawn (the demo gives fixes, so all five), and the receiver's own fixes
        legend_texts = {t.get_text() for t in item.figure.legends[0].get_texts()}
        assert "periodic term applied (as specified)" in legend_texts and "periodic term omitted" in legend_texts
        assert len(legend_texts) == len(r.audit.positions) + 1


def test_enu_errors_of_a_known_offset():
    from gnssrel.report.fig_positions import enu_errors

    lat, lon = np.radians(78.93), np.radians(11.86)
    ref = geodetic_to_ecef(lat, lon, 80.0)
    north_1m = geodetic_to_ecef(lat + 1.0 / 6_360_000.0, lon, 80.0)   # ~1 m north (radius of curvature, approx.)
    points = pd.DataFrame(np.stack([geodetic_to_ecef(lat, lon, 82.5), north_1m]), columns=["x_m", "y_m", "z_m"])
    enu = enu_errors(points, ref)
    np.testing.assert_allclose(enu[0], [0.0, 0.0, 2.5], atol=1e-6)
    assert enu[1, 0] == pytest.approx(0.0, abs=1e-6) and enu[1, 1] == pytest.approx(1.0, abs=0.01)


def test_geometry_pdop_matches_a_direct_least_squares_computation():
    from gnssrel.report.fig_positions import geometry_pdop

    rng = np.random.default_rng(5)
    times = np.datetime64("2024-05-03T00:00", "ns") + np.arange(4) * np.timedelta64(30, "s")
    rows = []
    for i, t in enumerate(times):
        n = (3, 6, 7, 9)[i]                         # epoch 0: too few satellites for 4 unknowns
        for k in range(n):
            rows.append({"time": t, "sv": f"{'GE'[k % 2] if i == 3 else 'G'}{k + 1:02d}",
                         "system": "GE"[k % 2] if i == 3 else "G",
                         "elevation_deg": rng.uniform(12, 88), "azimuth_deg": rng.uniform(0, 360)})
    rows.append({**rows[-1], "elevation_deg": 5.0})               # below the mask: ignored
    rows.append(dict(rows[5]))                                     # a second code of one satellite: once
    c = pd.DataFrame(rows)
    pdop = geometry_pdop(c, times)
    assert np.isnan(pdop[0])
    for i in (1, 2, 3):
        e = c[(c.time == times[i]) & (c.elevation_deg >= 10)].drop_duplicates(["time", "sv"])
        el, az = np.radians(e.elevation_deg.to_numpy()), np.radians(e.azimuth_deg.to_numpy())
        los = np.stack([-np.cos(el) * np.sin(az), -np.cos(el) * np.cos(az), -np.sin(el)], 1)
        clocks = (e.system.to_numpy()[:, None] == np.array(sorted(e.system.unique()))[None]).astype(float)
        a = np.hstack([los, clocks])
        q = np.linalg.inv(a.T @ a)
        assert pdop[i] == pytest.approx(np.sqrt(np.trace(q[:3, :3])), rel=1e-9)


@pytest.mark.refdata
def test_on_real_products_the_orbit_figure_names_the_other_antenna_block_and_the_site_is_the_default():
    from conftest import refdata_file

    from gnssrel.pipeline.analysis import analyse
    from gnssrel.report.fig_orbit_differences import orbit_differences_figure
    from gnssrel.report.fig_signal_path import signal_path_figure

    day = "2020-177/"
    content = analyse([refdata_file(day + "MOJN00DNK_R_20201770000_01D_MN.rnx.gz")],
                      [refdata_file(day + "GRG0MGXFIN_20201760000_01D_15M_ORB.SP3.gz"),
                       refdata_file(day + "GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz")],
                      systems="GE", progress=lambda text: None, step_s=600.0,
                      start=np.datetime64("2020-06-25T00:00", "ns"), end=np.datetime64("2020-06-25T23:45", "ns"))
    orbit = orbit_differences_figure(content)
    # GPS: most satellites about -1 m, a block with its antenna near the centre of mass about 0 (measured:
    # G02, G05, G07, G12, G15, G17, G19, G22, G29, G31 within 0.3 m of zero)
    assert "GPS satellites with a mean within 0.3 m of zero" in orbit.caption
    named = orbit.caption.split("of zero (another antenna offset): ")[1].split(".")[0].split(", ")
    assert {"G02", "G05", "G07"} <= set(named) and not {"G01", "G03", "G06"} & set(named)
    assert "GPS -1.0" in orbit.caption or "GPS -1.1" in orbit.caption     # median of the means, measured -1.07 m
    path = signal_path_figure(content)
    assert path.title == "Signal-path terms at a default site" and "no observation log" in path.caption


def test_geometry_pdop_of_a_degenerate_geometry_is_missing_not_an_error():
    from gnssrel.report.fig_positions import geometry_pdop

    times = np.array(["2024-05-03T00:00"], "datetime64[ns]")
    # five satellites at one azimuth and elevation: the geometry cannot separate position and clock
    c = pd.DataFrame({"time": times.repeat(5), "sv": [f"G{k:02d}" for k in range(1, 6)], "system": "G",
                      "elevation_deg": 45.0, "azimuth_deg": 120.0})
    assert np.isnan(geometry_pdop(c, times)[0])


def test_receiver_clock_figure_shows_the_bias_the_drift_and_a_millisecond_reset():
    # A receiver 3.9 ms off drifting by 1e-7 that resets by -1 ms after 5 minutes (issue 13: low-cost
    # modules behave so); the positions table carries the clock in metres (clock_m).
    from types import SimpleNamespace

    from gnssrel.constants import C_M_S
    from gnssrel.report.fig_receiver_clock import receiver_clock_figure

    t = np.datetime64("2025-06-11T10:00:00", "ns") + np.arange(600) * np.timedelta64(1, "s")
    bias_s = -3.9e-3 + 1e-7 * np.arange(600) - 1e-3 * (np.arange(600) >= 300)
    positions = pd.DataFrame({"time": t, "clock_m": bias_s * C_M_S})
    receiver = SimpleNamespace(name="LOWC", audit=SimpleNamespace(positions={"applied": positions}), clock_series=None)
    item = receiver_clock_figure(receiver)
    assert item.key == "receiver_clock_LOWC"
    bias_ax, drift_ax = item.figure.axes[:2]
    assert bias_ax.get_ylabel() == "receiver clock − GPST (ms)" and drift_ax.get_ylabel() == "drift (ns/s)"
    assert "1 jump(s) found" in item.caption and "-1.000 ms" in item.caption
    assert "100.00 ns/s" in item.caption                           # 1e-7 s/s with the jump taken out
    drift_line = drift_ax.get_lines()[0].get_ydata()
    assert np.nanmax(np.abs(np.asarray(drift_line, float) - 100.0)) < 1e-3


def test_receiver_clock_figures_of_the_demo(content):
    from gnssrel.report.fig_receiver_clock import receiver_clock_figure

    for r in content.receivers:
        item = receiver_clock_figure(r)
        _labels_have_units(item)
        assert "No jump found" in item.caption                     # the demo receivers do not reset
