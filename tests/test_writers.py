"""Outputs describe themselves: CF attributes in NetCDF, the same as Parquet field metadata (issue 12).

Checked by writing and reading back with xarray and pyarrow.  The attribute names and the
UDUNITS spellings follow the CF conventions 1.10 (sections 3.1-3.3, 4.4: units, long_name,
standard_name; ``degrees_north``/``degrees_east`` for latitude/longitude; the standard names
``time``, ``latitude``, ``longitude``, ``height_above_reference_ellipsoid`` from the CF
standard-name table; from the documents).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import xarray as xr
from conftest import SAMPLE_LOGS

from gnssrel.cli import main
from gnssrel.io.writers import write_table

ONE_NS_AFTER = np.datetime64("2020-06-25T00:00:00.000000001", "ns")


def _table():
    return pd.DataFrame({
        "time": np.array([ONE_NS_AFTER, np.datetime64("2020-06-25T00:00:30", "ns")]),
        "sv": ["G01", "E11"],
        "x_m": [1.5e7, 1.6e7], "vx_m_per_s": [100.0, -200.0],
        "periodic_icd_s": [1e-8, -2e-8], "rate_total": [4.46e-10, 4.47e-10],
        "latitude_applied_deg": [78.93, 78.93], "longitude_applied_deg": [11.87, 11.87],
        "height_applied_m": [80.0, 81.0], "east_error_omitted_m": [1.0, -1.0],
        "elevation_deg": [10.0, 45.0], "transmit_time": np.array([ONE_NS_AFTER, ONE_NS_AFTER]),
    })


def test_netcdf_carries_cf_attributes_and_exact_gpst_times(tmp_path):
    path = write_table(_table(), tmp_path / "t.nc")
    with xr.open_dataset(path) as ds:
        assert ds.attrs["Conventions"] == "CF-1.10" and ds.attrs["time_scale"] == "GPST"
        assert ds["time"].attrs == {"long_name": "GPS time", "standard_name": "time", "time_scale": "GPST"}
        assert ds["time"].encoding["units"].startswith("nanoseconds since 1980-01-06")   # the GPS epoch
        assert ds["time"].values[0] == ONE_NS_AFTER                                       # no rounding
        assert ds["transmit_time"].attrs["time_scale"] == "GPST"
        assert ds["x_m"].attrs["units"] == "m" and "ECEF x" in ds["x_m"].attrs["long_name"]
        assert ds["vx_m_per_s"].attrs["units"] == "m s-1"
        assert ds["periodic_icd_s"].attrs["units"] == "s"
        assert "F e sqrt(A) sin E" in ds["periodic_icd_s"].attrs["long_name"]
        assert ds["rate_total"].attrs["units"] == "1"                                      # s/s
        lat = ds["latitude_applied_deg"].attrs
        assert (lat["units"], lat["standard_name"]) == ("degrees_north", "latitude") and "applied" in lat["long_name"]
        assert ds["longitude_applied_deg"].attrs["units"] == "degrees_east"
        assert ds["height_applied_m"].attrs["standard_name"] == "height_above_reference_ellipsoid"
        assert ds["east_error_omitted_m"].attrs["units"] == "m"
        assert ds["elevation_deg"].attrs["units"] == "degree" and "standard_name" not in ds["elevation_deg"].attrs


def test_netcdf_keeps_the_attributes_a_dataset_already_has(tmp_path):
    ds = xr.Dataset({"clock_s": (("time",), [1e-4]), "status": (("time",), np.array([0], "int8"))},
                    coords={"time": [ONE_NS_AFTER]})
    ds["clock_s"].attrs["long_name"] = "our own words"
    ds["status"].attrs["status_codes"] = "0: ok"
    with xr.open_dataset(write_table(ds, tmp_path / "d.nc")) as back:
        assert back["clock_s"].attrs == {"long_name": "our own words", "units": "s"}
        assert back["status"].attrs["status_codes"] == "0: ok"


def test_parquet_columns_carry_the_same_metadata(tmp_path):
    table = _table()
    path = write_table(table, tmp_path / "t.parquet")
    schema = pq.read_schema(path)
    assert schema.metadata[b"time_scale"] == b"GPST" and schema.metadata[b"Conventions"] == b"CF-1.10"
    assert schema.field("time").metadata == {b"long_name": b"GPS time", b"standard_name": b"time",
                                             b"time_scale": b"GPST"}
    assert schema.field("x_m").metadata[b"units"] == b"m"
    assert schema.field("latitude_applied_deg").metadata[b"standard_name"] == b"latitude"
    assert schema.field("rate_total").metadata[b"units"] == b"1"
    assert b"pandas" in schema.metadata                  # pandas' own metadata kept: reads back as written
    pd.testing.assert_frame_equal(pd.read_parquet(path), table, check_dtype=False)


def test_command_outputs_carry_the_attributes(tmp_path, capsys):
    nav = str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx")
    assert main(["-q", "relativity", nav, "--systems", "G", "--step", "600", "--output", str(tmp_path / "r.nc")]) == 0
    assert main(["-q", "orbits", nav, "--systems", "G", "--step", "600", "--output", str(tmp_path / "o.nc")]) == 0
    with xr.open_dataset(tmp_path / "r.nc") as ds:
        assert ds["j2_periodic_s"].attrs["units"] == "s" and ds["time"].attrs["long_name"] == "GPS time"
    with xr.open_dataset(tmp_path / "o.nc") as ds:
        assert ds["position_ecef_m"].attrs["units"] == "m" and ds["time"].attrs["time_scale"] == "GPST"
        assert ds["toe"].attrs["time_scale"] == "GPST"
