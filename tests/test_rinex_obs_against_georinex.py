"""gnssrel.read_observations against the reference reader georinex 1.16, value for value.

Reference: georinex (geospace-code/georinex) reading the same refdata file in the same
run; status: outside reader, values must be identical (NaN exactly where it has NaN).
georinex cannot read RINEX 4, so the RINEX 4 file is checked against its own text.
The big files are compared on a time window (georinex needs minutes for a whole day).
"""

from __future__ import annotations

from datetime import datetime

import numpy as np
import pytest
from conftest import refdata_file

from gnssrel import read_observations

georinex = pytest.importorskip("georinex")

pytestmark = [pytest.mark.refdata, pytest.mark.filterwarnings("ignore::FutureWarning"),
              pytest.mark.filterwarnings("ignore::DeprecationWarning")]


def assert_same_as_georinex(mine, ref):
    """Every georinex variable is in ``mine`` with identical values on georinex's grid,
    and ``mine`` has nothing but NaN outside that grid."""
    ref_times = ref.time.values.astype("datetime64[ns]")
    assert set(ref_times) <= set(mine.time.values), "georinex has epochs gnssrel lacks"
    assert set(ref.sv.values) <= set(mine.sv.values), "georinex has satellites gnssrel lacks"
    assert len(ref.data_vars) > 0
    for name in ref.data_vars:
        assert name in mine, f"{name} missing"
        on_ref_grid = mine[name].sel(time=ref_times, sv=ref.sv.values).values
        np.testing.assert_array_equal(on_ref_grid, ref[name].values, err_msg=name)
        outside = mine[name].drop_sel(time=ref_times, sv=[])
        outside_sv = mine[name].drop_sel(sv=ref.sv.values)
        assert np.isnan(outside.values).all() and np.isnan(outside_sv.values).all(), name


def test_rinex2_delf_all_values_and_flags():
    path = refdata_file("2021-001/delf0010.21o")
    ref = georinex.load(path, useindicators=True)
    mine = read_observations(path, with_flags=True)
    assert_same_as_georinex(mine, ref)
    # RINEX 2.11 file: 105 epochs, 20 satellites in most (counted in the file text).
    assert mine.sizes["time"] == 105
    assert mine.attrs["version"] == 2.11
    assert {"L1", "L2", "C1", "P2", "P1", "S1", "S2"} <= set(mine.data_vars)


def test_rinex2_delf_gps_only():
    path = refdata_file("2021-001/delf0010.21o")
    ref = georinex.load(path, use="G")
    mine = read_observations(path, systems="G")
    assert_same_as_georinex(mine, ref)
    assert all(s.startswith("G") for s in mine.sv.values)


def test_rinex302_pdel_all_values_and_flags():
    path = refdata_file("2021-001/pdel0010.21o")
    ref = georinex.load(path, useindicators=True)
    mine = read_observations(path, with_flags=True)
    assert_same_as_georinex(mine, ref)
    assert mine.sizes["time"] == 67 and mine.sizes["sv"] == 20


def test_rinex302_pdel_observable_selection():
    path = refdata_file("2021-001/pdel0010.21o")
    ref = georinex.load(path, meas=["C1", "L2"])
    mine = read_observations(path, observables=["C1", "L2"])
    assert set(mine.data_vars) == {"C1C", "L2W", "L2P"}
    assert_same_as_georinex(mine, ref)


@pytest.mark.slow
def test_ceda_time_window_galileo_glonass():
    path = refdata_file("2018-210/CEDA00USA_R_20182100000_23H_15S_MO.rnx.gz")
    t0, t1 = datetime(2018, 7, 29, 0, 0), datetime(2018, 7, 29, 3, 0)
    ref = georinex.load(path, tlim=(t0, t1), useindicators=True)
    # The file's times are GPS time (TIME OF FIRST OBS ... GPS), so GPST bounds equal georinex's.
    mine = read_observations(path, start=np.datetime64(t0), end=np.datetime64(t1), with_flags=True)
    assert_same_as_georinex(mine, ref)
    assert mine.time.values[0] >= np.datetime64(t0) and mine.time.values[-1] <= np.datetime64(t1)


@pytest.mark.slow
def test_nya1_hatanaka_first_hour_all_systems():
    path = refdata_file("2024-124/NYA100NOR_S_20241240000_01D_30S_MO.crx.gz")
    t0, t1 = datetime(2024, 5, 3, 0, 0), datetime(2024, 5, 3, 1, 0)
    ref = georinex.load(path, tlim=(t0, t1), useindicators=True)
    mine = read_observations(path, start=np.datetime64(t0), end=np.datetime64(t1), with_flags=True)
    assert_same_as_georinex(mine, ref)
    assert mine.sizes["time"] == 121  # 00:00:00 to 01:00:00 inclusive at 30 s
    assert {s[0] for s in mine.sv.values} == {"G", "R", "E", "C"}


# RINEX 4.00 (2022-159 KMS3): values copied by eye from the expanded file text.
# Line after "> 2022 06 08 10 00 00.0000000  0 49":
# "C05                  39975899.571 5                  39975899.534 4 ..." (types C1P C2I C5P C6I
# C7D C7I L1P L2I L5P L6I L7D L7I); the first J04 record (types C1C C1L C2L C5Q L1C L1L L2L L5Q):
# "J04  44413050.581 5  44413051.856 5  44413055.281 5  44413053.118 4 233392158.14305 ..."
# and the first S23 record (types C1C C5I L1C L5I): "S23  39177114.010 6                 205877074.58006"

def test_rinex4_kms3_against_file_text():
    path = refdata_file("2022-159/KMS300DNK_R_20221591000_01H_30S_MO.crx")
    ds = read_observations(path, with_flags=True)
    assert ds.attrs["version"] == 4.0
    assert ds.sizes["time"] == 19  # 19 epoch lines in the body (10:00:00 to 10:09:00)
    assert ds.time.values[-1] == np.datetime64("2022-06-08T10:09:00")
    c05 = ds.sel(time=np.datetime64("2022-06-08T10:00:00"), sv="C05")
    assert np.isnan(c05["C1P"]) and c05["C2I"] == 39975899.571 and c05["C2Issi"] == 5
    assert c05["C6I"] == 39975899.534 and c05["C7I"] == 39975903.723
    assert c05["L2I"] == 208164978.439 and c05["L2Illi"] == 0 and c05["L2Issi"] == 5
    assert np.isnan(c05["L6I"]) and c05["L7I"] == 160966386.685
    j04 = ds.sel(sv="J04").dropna("time", how="all", subset=["C1C"]).isel(time=0)
    assert j04["C1C"] == 44413050.581 and j04["C1L"] == 44413051.856
    assert j04["L1C"] == 233392158.143 and j04["L5Q"] == 174286359.608 and j04["L5Qssi"] == 4
    s23 = ds.sel(sv="S23").dropna("time", how="all", subset=["C1C"]).isel(time=0)
    assert s23["C1C"] == 39177114.010 and np.isnan(s23["C5I"]) and s23["L1C"] == 205877074.580
    assert set(ds.attrs["fields"]) == {"C", "E", "G", "J", "R", "S"}
