"""Damaged observation files: what read_observations does with each kind of damage.

Choice (documented in read_observations): a damaged epoch in the body, including a
last epoch cut short by the end of the file, is skipped and counted in
attrs["skipped_epochs"] (line numbers in attrs["skipped_epoch_lines"], a sentence in
attrs["warnings"]); every other epoch is read unchanged.  A bad header is a
FileFormatError naming file and line.  The damaged files are made in tmp_path from
the small real files of 2021-001 (pdel0010.21o RINEX 3.02, delf0010.21o RINEX 2.11).
"""

from __future__ import annotations

import gzip

import numpy as np
import pytest
from conftest import refdata_file

from gnssrel import read_observations
from gnssrel.errors import FileFormatError, GnssrelInputError

pytestmark = pytest.mark.refdata

# Line numbers (1-based) in the original files, read from their text.
PDEL_EPOCH_10 = 216      # "> 2021 01 01 00 04 30.0000000  0 19"
PDEL_LAST_EPOCH = 1412   # "> 2021 01 01 00 33  0.0000000  0 20", 20 satellite lines follow
DELF_EPOCH_10 = 407      # " 21  1  1  0  4 30.0000000  0 20G07..." (+1 continuation, 20 x 2 lines)
DELF_LAST_EPOCH = 4355


def _lines(name):
    return refdata_file(f"2021-001/{name}").read_text().splitlines(keepends=True)


def _write(tmp_path, name, lines):
    path = tmp_path / name
    path.write_text("".join(lines))
    return path


@pytest.fixture(scope="module")
def pdel_ref():
    return read_observations(refdata_file("2021-001/pdel0010.21o"))


@pytest.fixture(scope="module")
def delf_ref():
    return read_observations(refdata_file("2021-001/delf0010.21o"))


def _same_except(ds, ref, missing_time):
    kept = ref.drop_sel(time=[np.datetime64(missing_time)])
    assert ds.sizes["time"] == kept.sizes["time"]
    for name in ref.data_vars:
        np.testing.assert_array_equal(ds[name].sel(sv=kept.sv).values, kept[name].values)


@pytest.mark.parametrize("cut_mid_line", [False, True])
def test_rinex3_truncated_last_epoch_is_skipped_and_counted(tmp_path, pdel_ref, cut_mid_line):
    lines = _lines("pdel0010.21o")
    kept = lines[:PDEL_LAST_EPOCH + 7]  # the epoch line and 7 of its 20 satellite lines
    if cut_mid_line:
        kept[-1] = kept[-1][:40]  # and the 7th cut inside a field, without a line end
    ds = read_observations(_write(tmp_path, "cut.21o", kept))
    assert ds.attrs["skipped_epochs"] == 1
    assert ds.attrs["skipped_epoch_lines"] == [PDEL_LAST_EPOCH]
    assert any("damaged epoch" in w and str(PDEL_LAST_EPOCH) in w for w in ds.attrs["warnings"])
    assert any("does not end with a line end" in w for w in ds.attrs["warnings"]) == cut_mid_line
    _same_except(ds, pdel_ref, "2021-01-01T00:33:00")


def test_rinex2_truncated_last_epoch_is_skipped_and_counted(tmp_path, delf_ref):
    lines = _lines("delf0010.21o")
    ds = read_observations(_write(tmp_path, "delf0010.21o", lines[:DELF_LAST_EPOCH + 10]))
    assert ds.attrs["skipped_epoch_lines"] == [DELF_LAST_EPOCH]
    _same_except(ds, delf_ref, "2021-01-01T00:52:00")


def test_rinex3_garbled_epoch_line_in_the_middle(tmp_path, pdel_ref):
    lines = _lines("pdel0010.21o")
    assert lines[PDEL_EPOCH_10 - 1].startswith("> 2021 01 01 00 04 30")
    lines[PDEL_EPOCH_10 - 1] = "> 2021 01 01 0# 04 30.0000000  0 19\n"
    ds = read_observations(_write(tmp_path, "garbled.21o", lines))
    assert ds.attrs["skipped_epochs"] == 1 and ds.attrs["skipped_epoch_lines"] == [PDEL_EPOCH_10]
    _same_except(ds, pdel_ref, "2021-01-01T00:04:30")


def test_rinex3_epoch_line_that_lost_its_marker(tmp_path, pdel_ref):
    lines = _lines("pdel0010.21o")
    lines[PDEL_EPOCH_10 - 1] = "X" + lines[PDEL_EPOCH_10 - 1][1:]
    ds = read_observations(_write(tmp_path, "nomark.21o", lines))
    # The previous epoch keeps its 18 declared satellites; the unmarked block is one damaged epoch.
    assert ds.attrs["skipped_epoch_lines"] == [PDEL_EPOCH_10]
    _same_except(ds, pdel_ref, "2021-01-01T00:04:30")


def test_rinex3_garbled_observation_field(tmp_path, pdel_ref):
    lines = _lines("pdel0010.21o")
    line = lines[PDEL_EPOCH_10]  # first satellite line of that epoch
    lines[PDEL_EPOCH_10] = line[:8] + "x" + line[9:]
    ds = read_observations(_write(tmp_path, "badfield.21o", lines))
    assert ds.attrs["skipped_epoch_lines"] == [PDEL_EPOCH_10]
    _same_except(ds, pdel_ref, "2021-01-01T00:04:30")


def test_rinex2_garbled_epoch_line_in_the_middle(tmp_path, delf_ref):
    lines = _lines("delf0010.21o")
    assert lines[DELF_EPOCH_10 - 1].startswith(" 21  1  1  0  4 30")
    lines[DELF_EPOCH_10 - 1] = " 21  1  1  0  4 3?.0000000  0 20" + lines[DELF_EPOCH_10 - 1][32:]
    ds = read_observations(_write(tmp_path, "delf0010.21o", lines))
    assert ds.attrs["skipped_epochs"] == 1 and ds.attrs["skipped_epoch_lines"] == [DELF_EPOCH_10]
    _same_except(ds, delf_ref, "2021-01-01T00:04:30")


def test_event_flags_rinex3(tmp_path, pdel_ref):
    lines = _lines("pdel0010.21o")
    # Epoch 10 gets flag 1 (power failure: data kept); before it, a flag-4 record with two
    # header lines, and a flag-6 cycle-slip block of one satellite line (RINEX 3.05 table A13).
    lines[PDEL_EPOCH_10 - 1] = lines[PDEL_EPOCH_10 - 1][:31] + "1" + lines[PDEL_EPOCH_10 - 1][32:]
    special = [f">{'':30s}4  2\n", f"{'A COMMENT':60s}COMMENT\n",
               f"{'  4551596.0624 -2186893.3724  3883410.6118':60s}APPROX POSITION XYZ\n",
               "> 2021 01 01 00 04 15.0000000  6  1\n", lines[PDEL_EPOCH_10]]
    lines[PDEL_EPOCH_10 - 1:PDEL_EPOCH_10 - 1] = special
    ds = read_observations(_write(tmp_path, "events.21o", lines))
    assert ds.attrs["skipped_epochs"] == 0
    assert ds.attrs["event_counts"] == {0: 66, 1: 1, 4: 1, 6: 1}
    warnings = " ".join(ds.attrs["warnings"])
    assert "power failure" in warnings and "2021-01-01T00:04:30" in warnings
    assert "special event record" in warnings and "cycle-slip" in warnings
    for name in pdel_ref.data_vars:
        np.testing.assert_array_equal(ds[name].values, pdel_ref[name].values)


def test_event_flag_with_blank_time_rinex2(tmp_path, delf_ref):
    lines = _lines("delf0010.21o")
    record = [f"{'':28s}4  1\n", f"{'INSERTED RECORD':60s}COMMENT\n"]
    lines[DELF_EPOCH_10 - 1:DELF_EPOCH_10 - 1] = record
    ds = read_observations(_write(tmp_path, "delf0010.21o", lines))
    assert ds.attrs["skipped_epochs"] == 0 and ds.attrs["event_counts"] == {0: 105, 4: 1}
    for name in delf_ref.data_vars:
        np.testing.assert_array_equal(ds[name].values, delf_ref[name].values)


def test_unknown_version(tmp_path):
    lines = _lines("pdel0010.21o")
    lines[0] = "     5.00" + lines[0][9:]
    path = _write(tmp_path, "v5.21o", lines)
    with pytest.raises(FileFormatError) as err:
        read_observations(path)
    assert str(err.value).startswith(f"{path}:1: RINEX version 5 is not supported")


def test_missing_end_of_header(tmp_path):
    lines = [ln for ln in _lines("pdel0010.21o") if "END OF HEADER" not in ln]
    path = _write(tmp_path, "noend.21o", lines)
    with pytest.raises(FileFormatError) as err:
        read_observations(path)
    assert str(err.value).startswith(f"{path}:{len(lines)}: no END OF HEADER line")


@pytest.mark.parametrize("content", [b"", b"\n\n  \n"])
def test_empty_file(tmp_path, content):
    path = tmp_path / "empty.21o"
    path.write_bytes(content)
    with pytest.raises(FileFormatError) as err:
        read_observations(path)
    assert str(err.value) == f"{path}:1: empty file: expected a RINEX observation header"


def test_navigation_file_is_refused():
    path = refdata_file("2021-001/cbw10010.21n.gz")
    with pytest.raises(FileFormatError) as err:
        read_observations(path)
    assert ":1: file type 'N' in column 21 is not 'O'" in str(err.value)


def test_damaged_gzip(tmp_path):
    raw = gzip.compress(refdata_file("2021-001/pdel0010.21o").read_bytes())
    path = tmp_path / "pdel0010.21o.gz"
    path.write_bytes(raw[: len(raw) // 2])
    with pytest.raises(FileFormatError, match="damaged or truncated"):
        read_observations(path)


def test_unknown_system_letter():
    with pytest.raises(GnssrelInputError, match="unknown satellite system letter"):
        read_observations(refdata_file("2021-001/pdel0010.21o"), systems="GX")
