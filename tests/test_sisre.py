"""SISRE (Montenbruck et al. 2015, GPS Solutions 19:321) and satellite antenna offsets on states.

Hand values: the SISRE formula evaluated by hand; the Sun against the Astronomical Almanac
(June solstice 2020-06-20 21:44 UT, declination +23.44 deg, published; equation of time in late
June about -2 to -3 min, published); the ionosphere-free offset from the GPS carriers
(IS-GPS-200 3.3.1.1, 1575.42 / 1227.60 MHz, published).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from test_antex import build_antex, satellite_block

from gnssrel.io.antex import read_antex
from gnssrel.orbits.antenna import body_axes, ionosphere_free_offset_m, sun_position_ecef_m, to_phase_centre
from gnssrel.orbits.compare import compare_with_precise, per_epoch_differences
from gnssrel.orbits.sisre import (
    SISRE_WEIGHTS,
    clock_errors_m,
    per_epoch_sisre,
    sisre_by_system,
    summarize_sisre,
    weights,
)

F1, F2 = 1575.42e6, 1227.60e6   # IS-GPS-200 3.3.1.1 (published)


def test_formula_by_hand():
    orbit = pd.DataFrame({"time": np.array(["2020-06-25T00:00"] * 2, dtype="datetime64[ns]"),
                          "sv": ["G01", "E01"], "system": ["G", "E"], "radial_m": [1.0, -0.5],
                          "along_m": [2.0, 1.0], "cross_m": [3.0, 0.0]})
    clock = pd.DataFrame({"time": orbit["time"], "sv": ["G01", "E01"], "clock_m": [0.5, 0.2]})
    out = per_epoch_sisre(orbit, clock)
    # GPS: w_R 0.98, w_AC^2 1/49 (from memory, module table)
    assert out["sisre_m"][0] == pytest.approx(np.sqrt((0.98 * 1.0 - 0.5) ** 2 + (4 + 9) / 49))
    assert out["sisre_orbit_m"][0] == pytest.approx(np.sqrt(0.98 ** 2 + 13 / 49))
    assert out["sisre_clock_m"][1] == pytest.approx(0.2)
    # Galileo: 0.98, 1/61: a radial error and an equal clock error cancel for the user
    assert out["sisre_m"][1] == pytest.approx(np.sqrt((0.98 * -0.5 - 0.2) ** 2 + 1 / 61))
    _, summary = summarize_sisre(out)
    assert summary["G"]["total_m"] == pytest.approx(out["sisre_m"][0])
    assert summary["E"]["published_2013_14_m"] == 1.6 and summary["G"]["published_2013_14_m"] == 0.7
    no_clock = per_epoch_sisre(orbit, None)
    assert no_clock["sisre_m"].isna().all() and no_clock["sisre_orbit_m"].notna().all()


def test_weights_by_orbit_class():
    w_r, w_ac = weights(["G01", "R01", "C20", "C08", "J01"], np.array([np.nan, np.nan, 27.9e6, 42.16e6, np.nan]))
    assert w_r.tolist() == [0.98, 0.98, 0.98, 0.99, 0.99]
    np.testing.assert_allclose(w_ac ** 2, [1 / 49, 1 / 45, 1 / 54, 1 / 126, 1 / 126])
    assert weights(["C03"])[0][0] == SISRE_WEIGHTS["C_IGSO_GEO"][0]          # by PRN: GEO
    assert np.isnan(weights(["S20"])[0][0])


def test_clock_error_sign():
    """compare_clocks' residual is precise - broadcast; SISRE wants broadcast - precise, in metres."""
    table = pd.DataFrame({"time": [np.datetime64("2020-06-25", "ns")], "sv": ["G01"], "residual_ns": [1.0]})
    assert clock_errors_m(table)["clock_m"][0] == pytest.approx(-0.299792458)


def test_sun_against_almanac():
    solstice = sun_position_ecef_m(np.array(["2020-06-20T21:44"], dtype="datetime64[ns]"))[0]
    declination = np.degrees(np.arcsin(solstice[2] / np.linalg.norm(solstice)))
    assert declination == pytest.approx(23.44, abs=0.02)
    assert np.linalg.norm(solstice) == pytest.approx(1.016 * 149.598e9, rel=2e-3)   # near aphelion
    noon = sun_position_ecef_m(np.array(["2020-06-25T12:00"], dtype="datetime64[ns]"))[0]
    longitude = np.degrees(np.arctan2(noon[1], noon[0]))
    assert 0.0 < longitude < 1.5          # equation of time -2.5 min: the Sun 0.6 deg east at 12 UT


def test_body_axes():
    r = np.array([[26.0e6, 3.0e6, -1.0e6]])
    sun = np.array([[1.4e11, 5.0e10, 2.0e10]])
    axes = body_axes(r, sun)[0]
    np.testing.assert_allclose(axes @ axes.T, np.eye(3), atol=1e-12)
    np.testing.assert_allclose(np.cross(axes[0], axes[1]), axes[2], atol=1e-12)   # right-handed
    np.testing.assert_allclose(axes[2], -r[0] / np.linalg.norm(r[0]))             # z to the Earth
    s = (sun[0] - r[0]) / np.linalg.norm(sun[0] - r[0])
    assert abs(axes[1] @ s) < 1e-12 and axes[0] @ s > 0                            # panels, x sun side


def test_ionosphere_free_offset():
    got = ionosphere_free_offset_m({"G01": [0.0, 0.0, 1000.0], "G02": [0.0, 0.0, 1200.0]}, "G")
    expected = (F1 ** 2 * 1.0 - F2 ** 2 * 1.2) / (F1 ** 2 - F2 ** 2)
    assert got[2] == pytest.approx(expected, abs=1e-12) and got[2] == pytest.approx(0.690854, abs=1e-6)   # 1 - 0.2 * 1.54573
    assert ionosphere_free_offset_m({"G01": [0, 0, 1000.0]}, "G") is None


def _circular_states(svs, times):
    """Two circular MEO orbits (radius 26 560 km, inclined 55 deg), ECEF with the Earth turning."""
    t = (times - times[0]).astype("int64") / 1e9
    n = np.sqrt(3.986004418e14 / 26_560e3 ** 3)
    pos, vel = [], []
    for k, _ in enumerate(svs):
        u = n * t + k * 2.0
        node = 0.7 * k - 7.292115e-5 * t
        inc = np.radians(55.0)
        xo, yo = 26_560e3 * np.cos(u), 26_560e3 * np.sin(u)
        p = np.stack([xo * np.cos(node) - yo * np.cos(inc) * np.sin(node),
                      xo * np.sin(node) + yo * np.cos(inc) * np.cos(node), yo * np.sin(inc)], -1)
        pos.append(p)
        vel.append(np.gradient(p, t, axis=0))
    ds = xr.Dataset({"position_ecef_m": (("time", "sv", "axis"), np.stack(pos, 1)),
                     "velocity_ecef_m_per_s": (("time", "sv", "axis"), np.stack(vel, 1))},
                    coords={"time": times, "sv": svs, "axis": ["x", "y", "z"]})
    return ds


def test_radial_moves_by_the_offset_projection(tmp_path):
    """With a built ANTEX file's offsets applied to the precise (centre-of-mass) states, each
    satellite's mean radial difference moves by exactly the ionosphere-free z offset (x and y are
    perpendicular to the radius by the yaw-steering law), and the 3-D change is the offset's length."""
    times = np.datetime64("2020-06-25T00:00", "ns") + np.arange(0, 86_400, 900).astype("timedelta64[s]")
    precise = _circular_states(["G05", "G08"], times)
    broadcast = precise.copy(deep=True)
    broadcast["position_ecef_m"] = broadcast["position_ecef_m"] + 0.3          # a constant ECEF error
    offsets = {"G05": {"G01": (394.0, 0.0, 1500.0), "G02": (394.0, 0.0, 1600.0)},
               "G08": {"G01": (-120.0, 250.0, 900.0), "G02": (-120.0, 250.0, 900.0)}}
    atx = read_antex(build_antex(tmp_path / "day.atx", [satellite_block("G05", "G050", offsets["G05"]),
                                                       satellite_block("G08", "G072", offsets["G08"])]))
    moved, info = to_phase_centre(precise, atx)
    before, _ = compare_with_precise(broadcast, precise)
    after, _ = compare_with_precise(broadcast, moved)
    for sv, by_freq in offsets.items():
        o1, o2 = (np.array(by_freq[c]) / 1000.0 for c in ("G01", "G02"))
        expected = (F1 ** 2 * o1 - F2 ** 2 * o2) / (F1 ** 2 - F2 ** 2)       # independent of the module
        shift = (after.set_index("sv").loc[sv, "mean_radial_m"] - before.set_index("sv").loc[sv, "mean_radial_m"])
        assert shift == pytest.approx(expected[2], abs=1e-6), sv
        np.testing.assert_allclose(info["applied"][sv], expected, atol=1e-12)
    e0, e1 = per_epoch_differences(broadcast, precise), per_epoch_differences(broadcast, moved)
    change = (e1[["radial_m", "along_m", "cross_m"]].to_numpy() - e0[["radial_m", "along_m", "cross_m"]].to_numpy())
    lengths = {sv: np.linalg.norm((F1 ** 2 * np.array(f["G01"]) - F2 ** 2 * np.array(f["G02"]))
                                  / (F1 ** 2 - F2 ** 2) / 1000.0) for sv, f in offsets.items()}
    np.testing.assert_allclose(np.linalg.norm(change, axis=1), e0["sv"].map(lengths).to_numpy(), atol=1e-6)
    assert np.ptp(change[e0["sv"].to_numpy() == "G05", 1]) > 0.1     # the x offset turns with the Sun


def test_missing_antenna_is_said(tmp_path):
    times = np.array(["2020-06-25T00:00", "2020-06-25T00:15"], dtype="datetime64[ns]")
    precise = _circular_states(["G05", "G09"], times)
    atx = read_antex(build_antex(tmp_path / "a.atx", [satellite_block("G05", "G050", {"G01": (0, 0, 1000.0)})]))
    from gnssrel.accounting import Ledger
    ledger = Ledger()
    moved, info = to_phase_centre(precise, atx, ledger)
    assert set(info["missing"]) == {"G05", "G09"}         # G05 lacks G02, G09 has no antenna
    assert "lacks a frequency" in info["missing"]["G05"] and len(ledger.warnings) == 2
    np.testing.assert_array_equal(moved["position_ecef_m"].values, precise["position_ecef_m"].values)


def test_summary_block_and_report_table():
    """orbits/sisre.sisre_by_system (used by the report's analysis) and the report's SISRE table."""
    from types import SimpleNamespace

    from gnssrel.report.tables import SHOWN_IN_HTML, sisre_table
    t = np.array(["2020-06-25T00:00", "2020-06-25T00:15"], dtype="datetime64[ns]")
    orbit = pd.DataFrame({"time": t, "sv": ["G01", "G01"], "system": ["G", "G"], "radial_m": [-1.0, -1.0],
                          "along_m": [0.0, 0.0], "cross_m": [0.0, 0.0]})
    clocks = pd.DataFrame({"time": t, "sv": ["G01", "G01"], "residual_ns": [0.0, 0.0]})
    block = sisre_by_system(orbit, clocks)
    assert block["G"]["total_m"] == pytest.approx(0.98) and block["G"]["clock_m"] == 0.0
    assert block["G"]["median_mean_radial_m"] == -1.0
    table = sisre_table(SimpleNamespace(orbit_summary={"sisre": block}))
    assert table["SISRE (m)"].tolist() == [pytest.approx(0.98)] and "sisre_by_system" in SHOWN_IN_HTML
    assert sisre_table(SimpleNamespace(orbit_summary={"by_system": {}})) is None


@pytest.mark.parametrize("command", ["orbits", "clocks"])
def test_antex_needs_precise_files(command, tmp_path, capsys):
    from gnssrel.cli import main
    nav = tmp_path / "x.rnx"
    nav.write_text("")
    assert main([command, str(nav), "--antex", str(tmp_path / "a.atx"),
                 *(["--receiver-clocks", str(tmp_path / "c.csv")] if command == "clocks" else [])]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--antex" in err[0]


def test_broadcast_states_back_to_the_centre_of_mass(tmp_path):
    """to_centre_of_mass undoes to_phase_centre (the attitude is taken at the shifted position, which
    turns the body axes by ~|offset| / r ~ 4e-8 rad: well below a micrometre)."""
    times = np.datetime64("2020-06-25T00:00", "ns") + np.arange(0, 7200, 900).astype("timedelta64[s]")
    com = _circular_states(["G05"], times)
    atx = read_antex(build_antex(tmp_path / "a.atx", [satellite_block("G05", "G050", {"G01": (394.0, 0.0, 1500.0),
                                                                                     "G02": (394.0, 0.0, 1500.0)})]))
    from gnssrel.orbits.antenna import to_centre_of_mass
    apc, _ = to_phase_centre(com, atx)
    back, info = to_centre_of_mass(apc, atx)
    assert np.abs(apc["position_ecef_m"].values - com["position_ecef_m"].values).max() > 1.0
    np.testing.assert_allclose(back["position_ecef_m"].values, com["position_ecef_m"].values, atol=1e-6)
    assert back.attrs["antenna_offsets"] == "centre of mass" and info["combination"] == {"G": "GPS L1/L2"}
