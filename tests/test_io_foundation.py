"""File opening (compressions) and atomic writers."""

import gzip
import json
import warnings
import zipfile

import numpy as np
import pandas as pd
import pytest

from gnssrel.errors import FileFormatError, GnssrelInputError
from gnssrel.io import opening, writers

TEXT = "     3.04           N: GNSS NAV DATA    M: MIXED            RINEX VERSION / TYPE\n"


def test_plain_gzip_zip_read_the_same(tmp_path):
    (tmp_path / "a.rnx").write_text(TEXT)
    (tmp_path / "a.rnx.gz").write_bytes(gzip.compress(TEXT.encode()))
    with zipfile.ZipFile(tmp_path / "a.zip", "w") as z:
        z.writestr("a.rnx", TEXT)
    for name in ("a.rnx", "a.rnx.gz", "a.zip"):
        assert opening.read_text(tmp_path / name) == TEXT


def test_unix_compress(tmp_path):
    ncompress = pytest.importorskip("ncompress")
    (tmp_path / "a.rnx.Z").write_bytes(ncompress.compress(TEXT.encode()))
    assert opening.read_text(tmp_path / "a.rnx.Z") == TEXT


def test_damaged_gzip_names_the_file(tmp_path):
    data = gzip.compress(TEXT.encode() * 50)
    (tmp_path / "bad.rnx.gz").write_bytes(data[: len(data) // 2])
    with pytest.raises(FileFormatError, match=r"bad\.rnx\.gz: compressed file is damaged"):
        opening.read_text(tmp_path / "bad.rnx.gz")


@pytest.mark.parametrize("damage", ["zlib", "eof", "header"])
def test_every_damaged_gzip_stream_is_one_line_naming_the_file(tmp_path, damage):
    raw = bytearray(gzip.compress(TEXT.encode() * 50))
    if damage == "zlib":
        raw[12] ^= 0xFF            # zlib.error (invalid block type / code lengths)
    elif damage == "eof":
        raw = raw[:-10]            # EOFError
    else:
        raw[3] = 0xFF              # BadGzipFile: reserved flag bits set
    path = tmp_path / "a.rnx.gz"
    path.write_bytes(bytes(raw))
    with pytest.raises(FileFormatError) as err:
        opening.read_bytes(path)
    assert str(err.value).startswith(f"{path}: compressed file is damaged or truncated")
    assert "\n" not in str(err.value)


def test_damaged_unix_compress_and_zip_are_file_format_errors(tmp_path):
    for name, raw in (("b.rnx.Z", b"\x1f\x9d\x90" + bytes(range(256)) * 2),
                      ("c.zip", b"PK\x03\x04" + b"\x01" * 60)):
        (tmp_path / name).write_bytes(raw)
        with pytest.raises(FileFormatError, match=f"{name}: compressed file is damaged"):
            opening.read_bytes(tmp_path / name)


def test_hatanaka_decompressor_warnings_become_ours(tmp_path):
    hatanaka = pytest.importorskip("hatanaka")
    from obs_samples import rinex3

    from gnssrel.accounting import Ledger

    crx = hatanaka.compress("".join(rinex3()).encode(), compression="none").decode().splitlines(keepends=True)
    k = next(i for i, ln in enumerate(crx) if "END OF HEADER" in ln) + 9
    path = tmp_path / "a.crx"
    path.write_text("".join(crx[:k] + [crx[k]] + crx[k:]))          # one line repeated
    ledger = Ledger()
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        opened = opening.open_log(path, ledger)
    assert opened.hatanaka_epochs == 6 and opened.hatanaka_gave_up
    assert ledger.warnings[0].startswith(f"{path}:24: Hatanaka decompression: line 24")
    with pytest.warns(UserWarning, match=f"{path}:24: Hatanaka decompression"):
        opening.read_bytes(path)                                       # no ledger: a Python warning


def test_missing_file(tmp_path):
    with pytest.raises(FileFormatError, match="no such file"):
        opening.read_text(tmp_path / "nothere.rnx")


def test_atomic_write_leaves_nothing_on_failure(tmp_path):
    target = tmp_path / "out.csv"
    with pytest.raises(RuntimeError), writers.atomic_path(target) as tmp:
        tmp.write_text("half")
        raise RuntimeError("boom")
    assert list(tmp_path.iterdir()) == []


def test_tables_round_trip(tmp_path):
    df = pd.DataFrame({"sv": ["G01", "E11"], "periodic_icd_s": [1.25e-8, -3.5e-9]})
    for suffix in (".csv", ".parquet"):
        writers.write_table(df, tmp_path / f"t{suffix}")
    back = pd.read_csv(tmp_path / "t.csv")
    np.testing.assert_allclose(back["periodic_icd_s"], df["periodic_icd_s"], rtol=1e-12)
    assert list(pd.read_parquet(tmp_path / "t.parquet")["sv"]) == ["G01", "E11"]
    with pytest.raises(GnssrelInputError, match="unknown output format '.xls'"):
        writers.write_table(df, tmp_path / "t.xls")


def test_json_summary_nan_becomes_null(tmp_path):
    writers.write_json({"a": np.float64("nan"), "b": np.int64(3), "c": np.bool_(True)}, tmp_path / "s.json")
    assert json.loads((tmp_path / "s.json").read_text()) == {"a": None, "b": 3, "c": True}


def test_error_message_is_one_line_with_file_and_line():
    e = FileFormatError("garbled number", "x.rnx", 12, "G01 2020 06 25 00 00 00 1.2E-0X\n")
    assert str(e) == "x.rnx:12: garbled number (line reads 'G01 2020 06 25 00 00 00 1.2E-0X')"
    assert "\n" not in str(e)


def test_netcdf_output_keeps_values_and_flattens_attributes(tmp_path):
    import xarray as xr

    ds = xr.Dataset({"clock_s": (("time", "sv"), np.array([[1.5e-4, np.nan]]))},
                    coords={"time": np.array(["2020-06-25T00:00"], dtype="datetime64[ns]"),
                            "sv": ["G01", "E11"]},
                    attrs={"fields": {"G": ["C1C", "L1C"]}, "receiver": None, "position": [1.0, 2.0, 3.0]})
    ds["clock_s"].attrs["status_codes"] = {0: "ok"}
    writers.write_table(ds, tmp_path / "c.nc")
    back = xr.open_dataset(tmp_path / "c.nc")
    np.testing.assert_array_equal(back["clock_s"].values, ds["clock_s"].values)
    assert json.loads(back.attrs["fields"]) == {"G": ["C1C", "L1C"]}
    assert list(back.attrs["position"]) == [1.0, 2.0, 3.0]
    back.close()
