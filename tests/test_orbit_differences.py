"""Broadcast minus precise orbits per epoch: the radial / along / cross decomposition and the radial mean.

Synthetic: a known offset written in an orbital frame built here by hand (Gram-Schmidt on r and the
inertial velocity) comes back exactly.  Real (MOJN nav against the GRG final orbits, 2020-06-25): the
mean radial difference per satellite is the satellite antenna offset, because broadcast orbits refer to
the antenna phase centre and precise ones to the centre of mass (common practice): about -1.0 m for
G01, G03, G06, G08, G09, G10 and about 0 for G02, G05, G07 (an independent computation on the same files;
derived).  The GRG product holds G, E and R only: BeiDou and QZSS radial means cannot be checked on it.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from conftest import SAMPLE_LOGS, refdata_file

from gnssrel.orbits.compare import PER_EPOCH_COLUMNS, compare_with_precise, per_epoch_differences

OMEGA = 7.2921151467e-5        # WGS-84 Earth rotation, rad/s (IS-GPS-200 Table 20-IV; published)
T0 = np.datetime64("2020-06-25T00:00:00", "ns")


def _states(positions, velocities, svs):
    """A state Dataset (time, sv, axis) from (time, sv, 3) arrays."""
    times = T0 + np.arange(positions.shape[0]) * np.timedelta64(900, "s")
    return xr.Dataset({"position_ecef_m": (("time", "sv", "axis"), positions),
                       "velocity_ecef_m_per_s": (("time", "sv", "axis"), velocities)},
                      coords={"time": times, "sv": svs, "axis": ["x", "y", "z"]})


def _by_hand(n_epochs, radial, along, cross):
    """Precise states of two inclined circular-ish orbits and broadcast = precise + the RAC offsets."""
    rng = np.random.default_rng(3)
    r = rng.normal(size=(n_epochs, 2, 3))
    r *= 26_560e3 / np.linalg.norm(r, axis=-1, keepdims=True)
    v_inertial = np.cross(rng.normal(size=(n_epochs, 2, 3)), r)             # perpendicular to r
    v_inertial *= 3_870.0 / np.linalg.norm(v_inertial, axis=-1, keepdims=True)
    v_inertial += 25.0 * r / np.linalg.norm(r, axis=-1, keepdims=True)      # a small radial rate
    omega_cross_r = np.stack([-OMEGA * r[..., 1], OMEGA * r[..., 0], np.zeros(r.shape[:-1])], -1)
    v_ecef = v_inertial - omega_cross_r
    # the orbital frame by hand: e_R along r, e_C along r x v (inertial), e_A completes it
    e_r = r / np.linalg.norm(r, axis=-1, keepdims=True)
    h = np.cross(r, v_inertial)
    e_c = h / np.linalg.norm(h, axis=-1, keepdims=True)
    e_a = np.cross(e_c, e_r)
    offset = radial[..., None] * e_r + along[..., None] * e_a + cross[..., None] * e_c
    precise = _states(r, v_ecef, ["G01", "E11"])
    broadcast = _states(r + offset, v_ecef + 0.01, ["G01", "E11"])
    return broadcast, precise


def test_a_known_offset_comes_back_exactly_in_radial_along_cross():
    n = 6
    radial = np.stack([np.full(n, -1.0), np.linspace(0.2, 0.7, n)], -1)
    along = np.stack([np.sin(np.arange(n)), np.full(n, 2.5)], -1)
    cross = np.stack([np.full(n, 0.3), -np.arange(n) * 0.1], -1)
    broadcast, precise = _by_hand(n, radial, along, cross)
    table = per_epoch_differences(broadcast, precise)
    assert list(table.columns) == list(PER_EPOCH_COLUMNS)
    assert table["sv"].tolist() == ["G01"] * n + ["E11"] * n and table["system"].tolist() == ["G"] * n + ["E"] * n
    for j, sv in enumerate(("G01", "E11")):
        rows = table[table["sv"] == sv]
        assert (rows["time"].to_numpy() == precise["time"].values).all()
        np.testing.assert_allclose(rows["radial_m"], radial[:, j], atol=1e-7)    # 0.1 µm on 26 000 km
        np.testing.assert_allclose(rows["along_m"], along[:, j], atol=1e-7)
        np.testing.assert_allclose(rows["cross_m"], cross[:, j], atol=1e-7)
        np.testing.assert_allclose(rows["difference_3d_m"],
                                   np.sqrt(radial[:, j] ** 2 + along[:, j] ** 2 + cross[:, j] ** 2), atol=1e-7)


def test_mean_radial_is_its_own_column_beside_the_rms_and_missing_epochs_are_left_out():
    n = 8
    radial = np.stack([np.full(n, -1.0) + 0.5 * (-1) ** np.arange(n), np.zeros(n)], -1)   # mean -1, RMS 1.118
    along = np.stack([np.zeros(n), np.full(n, 2.0)], -1)
    broadcast, precise = _by_hand(n, radial, along, np.zeros((n, 2)))
    broadcast["position_ecef_m"][2, 1, :] = np.nan                   # E11 has no broadcast state at epoch 2
    table = per_epoch_differences(broadcast, precise)
    stats, summary = compare_with_precise(broadcast, precise)
    g01, e11 = (stats.set_index("sv").loc[s] for s in ("G01", "E11"))
    assert g01["mean_radial_m"] == pytest.approx(-1.0, abs=1e-7)
    assert g01["rms_radial_m"] == pytest.approx(np.sqrt(1.0 + 0.25), abs=1e-7)
    assert e11["mean_radial_m"] == pytest.approx(0.0, abs=1e-7) and e11["rms_along_m"] == pytest.approx(2.0)
    assert len(table) == 2 * n - 1 and e11["n_epochs"] == n - 1
    assert T0 + np.timedelta64(1800, "s") not in table.loc[table.sv == "E11", "time"].to_numpy()
    assert summary["satellites"]["G01"]["mean_radial_m"] == pytest.approx(-1.0, abs=1e-7)
    assert summary["by_system"]["G"]["median_mean_radial_m"] == pytest.approx(-1.0, abs=1e-7)
    # the per-satellite mean is the mean of the per-epoch table
    means = table.groupby("sv")["radial_m"].mean()
    assert means["G01"] == pytest.approx(g01["mean_radial_m"]) and means["E11"] == pytest.approx(e11["mean_radial_m"])


def test_orbits_command_writes_the_per_epoch_table_on_request(tmp_path, capsys):
    from gnssrel.cli import main

    if not (SAMPLE_LOGS / "scenario.json").exists():
        pytest.skip("sample_logs/ is not in this checkout")
    nav = str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx")
    sp3 = str(SAMPLE_LOGS / "KVA0DEMFIN_20251620830_06H_15M_ORB.SP3")
    per_sat, per_epoch = tmp_path / "per_sat.csv", tmp_path / "per_epoch.csv"
    assert main(["orbits", nav, "--precise", sp3, "--output", str(per_sat), "-q"]) == 0
    assert main(["orbits", nav, "--precise", sp3, "--per-epoch", "--output", str(per_epoch), "-q"]) == 0
    stats, epochs = pd.read_csv(per_sat), pd.read_csv(per_epoch)
    assert "mean_radial_m" in stats.columns and "radial_m" not in stats.columns    # default output unchanged
    assert list(epochs.columns) == list(PER_EPOCH_COLUMNS)
    assert len(epochs) == stats["n_epochs"].sum()
    means = epochs.groupby("sv")["radial_m"].mean()
    used = stats[stats["n_epochs"] > 0].set_index("sv")
    np.testing.assert_allclose(means[used.index], used["mean_radial_m"], atol=1e-9)
    capsys.readouterr()
    # --per-epoch means nothing without precise orbits: refused in one line, exit 2
    assert main(["orbits", nav, "--per-epoch", "--output", str(tmp_path / "x.csv")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--per-epoch" in err[0] and "--precise" in err[0]
    assert not (tmp_path / "x.csv").exists()


@pytest.mark.refdata
def test_radial_means_of_real_broadcast_orbits_hold_the_antenna_offset():
    from gnssrel.io.rinex_nav import read_navigation
    from gnssrel.io.sp3 import read_sp3
    from gnssrel.orbits.broadcast import broadcast_states
    from gnssrel.orbits.precise import precise_states

    day = "2020-177/"
    nav = read_navigation(refdata_file(day + "MOJN00DNK_R_20201770000_01D_MN.rnx.gz"), systems="GE")
    sp3 = read_sp3([refdata_file(day + "GRG0MGXFIN_20201760000_01D_15M_ORB.SP3.gz"),
                    refdata_file(day + "GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz")], systems="GE")
    t = sp3["time"].values
    times = t[t >= np.datetime64("2020-06-25T00:00")]
    broadcast, precise = broadcast_states(nav, times, systems="GE"), precise_states(sp3, times)
    stats, _ = compare_with_precise(broadcast, precise)
    table = per_epoch_differences(broadcast, precise)
    mean = table.groupby("sv")["radial_m"].mean()
    # measured: G01 -1.05, G03 -1.07, G06 -1.04, G08 -1.12, G09 -1.13, G10 -1.00 (regression, +-0.2 m)
    for sv in ("G01", "G03", "G06", "G08", "G09", "G10"):
        assert -1.25 < mean[sv] < -0.8, sv
    # measured: G02 -0.02, G05 0.06, G07 0.04 (another block's antenna offset, near zero)
    for sv in ("G02", "G05", "G07"):
        assert abs(mean[sv]) < 0.2, sv
    # Galileo: every satellite between -0.70 and -0.94 m (measured, regression)
    galileo = mean[[s for s in mean.index if s[0] == "E"]]
    assert len(galileo) >= 20 and galileo.between(-1.05, -0.6).all()
    # the radial mean is a bias, not noise: on G01 the per-epoch radial scatter about it is small
    g01 = table.loc[table.sv == "G01", "radial_m"]
    assert g01.std() < 0.3
    np.testing.assert_allclose(stats.set_index("sv").loc[mean.index, "mean_radial_m"], mean, atol=1e-9)
