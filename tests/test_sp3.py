"""SP3 reader checked against the file's own text (GRG final orbits, 2020-177),
against synthetic SP3-d files, and on bad input."""

from __future__ import annotations

import gzip

import numpy as np
import pytest

from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError
from gnssrel.io.sp3 import read_sp3

DAY_176 = "2020-177/GRG0MGXFIN_20201760000_01D_15M_ORB.SP3.gz"
DAY_177 = "2020-177/GRG0MGXFIN_20201770000_01D_15M_ORB.SP3.gz"


def _text_records(path):
    """(epoch text, sv, x, y, z, clock) from the file by whitespace splitting (independent of the reader)."""
    out = []
    epoch = None
    with gzip.open(path, "rt") as handle:
        lines = handle.read().splitlines()
    for line in lines:
        if line.startswith("*"):
            y, mo, d, h, mi, s = line[1:].split()
            epoch = np.datetime64(f"{int(y):04d}-{int(mo):02d}-{int(d):02d}T{int(h):02d}:{int(mi):02d}") \
                + np.timedelta64(round(float(s) * 1e9), "ns")
        elif line.startswith("P"):
            sv, x, yy, z, c = line[1:4], *map(float, line[4:].split()[:4])
            out.append((epoch, sv, x, yy, z, c))
    return out


@pytest.mark.refdata
def test_records_match_file_text(refdata):
    path = refdata(DAY_177)
    ds = read_sp3(path)
    records = _text_records(path)
    assert len(records) == 7200  # 96 epochs x 75 satellites, counted in the file
    picks = records[:80] + records[3600:3650] + records[-80:]
    for epoch, sv, x, y, z, clock_us in picks:
        row = ds.sel(time=epoch, sv=sv)
        np.testing.assert_allclose(row["position_ecef_m"].values, np.array([x, y, z]) * 1e3, rtol=0, atol=1e-6)
        assert row["clock_s"].item() == pytest.approx(clock_us * 1e-6, abs=1e-15)
    # a record sliced by hand from the file: "PE08 -10261.549481 -27718.753350   1430.183889   6158.999594"
    e08 = ds.sel(time=np.datetime64("2020-06-25T00:00"), sv="E08")
    np.testing.assert_allclose(e08["position_ecef_m"].values, [-10261549.481, -27718753.350, 1430183.889],
                               rtol=0, atol=1e-6)
    assert e08["clock_s"].item() == pytest.approx(6158.999594e-6, abs=1e-15)


@pytest.mark.refdata
def test_header_fields(refdata):
    ds = read_sp3(refdata(DAY_177))
    assert ds.sizes == {"time": 96, "sv": 75, "axis": 3}
    assert ds.attrs["time_scale"] == "GPST" and ds.attrs["source_time_system"] == "GPS"
    assert ds.attrs["coordinate_system"] == "IGb14"
    assert ds.attrs["orbit_type"] == "FIT"
    assert ds.attrs["agency"] == "GRGS"
    assert ds.attrs["epoch_interval_s"] == 900.0
    assert ds.attrs["version"] == "c"
    assert ds["time"].values[0] == np.datetime64("2020-06-25T00:00", "ns")
    assert ds["time"].values[-1] == np.datetime64("2020-06-25T23:45", "ns")
    assert "velocity_ecef_m_per_s" not in ds  # this product has P records only
    # 75 satellites in the '+' lines: 24 Galileo, 21 GLONASS, 30 GPS
    systems = [s[0] for s in ds["sv"].values]
    assert (systems.count("E"), systems.count("R"), systems.count("G")) == (24, 21, 30)


@pytest.mark.refdata
def test_two_days_merge_and_duplicates(refdata):
    d176, d177 = refdata(DAY_176), refdata(DAY_177)
    both = read_sp3([d176, d177])
    assert both.sizes["time"] == 192
    assert np.all(np.diff(both["time"].values) == np.timedelta64(900, "s"))
    assert both.attrs["paths"] == [str(d176), str(d177)]
    reverse = read_sp3([d177, d176])
    np.testing.assert_array_equal(reverse["time"].values, both["time"].values)
    np.testing.assert_array_equal(reverse["position_ecef_m"].values, both["position_ecef_m"].values)
    same_twice = read_sp3([d177, d177])
    assert same_twice.sizes["time"] == 96


@pytest.mark.refdata
def test_system_filter(refdata):
    ds = read_sp3(refdata(DAY_177), systems="G")
    assert ds.sizes["sv"] == 30 and all(s.startswith("G") for s in ds["sv"].values)
    ds = read_sp3(refdata(DAY_177), systems=["E", "R"])
    assert ds.sizes["sv"] == 45


# --- synthetic SP3-d -----------------------------------------------------------------

def _sp3d_text(n_sat=90, time_system="GPS", velocity=True, n_epochs=2):
    """A small SP3-d file: more than 85 satellites, long comments, V records."""
    svs = [f"G{i:02d}" for i in range(1, 33)] + [f"E{i:02d}" for i in range(1, 37)] \
        + [f"C{i:02d}" for i in range(1, 23)]
    svs = svs[:n_sat]
    lines = [f"#d{'V' if velocity else 'P'}2020  6 25  0  0  0.00000000 {n_epochs:7d} ORBIT IGS14 FIT  TST",
             "## 2111 345600.00000000   900.00000000 59025 0.0000000000000"]
    for k in range(0, len(svs), 17):
        chunk = "".join(svs[k:k + 17]).ljust(51, " ")
        lines.append((f"+  {len(svs):3d}   " if k == 0 else "+        ") + chunk)
    for k in range(0, len(svs), 17):
        lines.append("++       " + "  5" * 17)
    lines += [f"%c M  cc {time_system} ccc cccc cccc cccc cccc ccccc ccccc ccccc ccccc",
              "%c cc cc ccc ccc cccc cccc cccc cccc ccccc ccccc ccccc ccccc",
              "%f  1.2500000  1.025000000  0.00000000000  0.000000000000000",
              "%f  0.0000000  0.000000000  0.00000000000  0.000000000000000",
              "%i    0    0    0    0      0      0      0      0         0",
              "%i    0    0    0    0      0      0      0      0         0",
              "/* SP3-d allows comment lines longer than 60 characters, like this one here, of any count",
              "/* second comment"]
    for e in range(n_epochs):
        lines.append(f"*  2020  6 25  0 {15 * e:2d}  0.00000000")
        for i, sv in enumerate(svs):
            x, y, z = 10000.0 + i + e, -20000.5 - i, 15000.25 + e
            clock = 100.0 + i + 0.5 * e
            if sv == "G03" and e == 1:
                x = y = z = 0.0  # missing position
            if sv == "E05":
                clock = 999999.999999  # missing clock
            lines.append(f"P{sv}{x:14.6f}{y:14.6f}{z:14.6f}{clock:14.6f}")
            if velocity:
                lines.append(f"V{sv}{1234.5:14.6f}{-5678.9:14.6f}{10.0:14.6f}{-2.5:14.6f}")
    lines.append("EOF")
    return "\n".join(lines) + "\n"


def test_sp3d_many_satellites_velocity_and_missing(tmp_path):
    path = tmp_path / "synthetic.sp3"
    path.write_text(_sp3d_text())
    ds = read_sp3(path)
    assert ds.sizes["sv"] == 90 and ds.attrs["version"] == "d"
    c22 = ds.sel(sv="C22").isel(time=1)
    np.testing.assert_allclose(c22["position_ecef_m"].values, [10090.0e3, -20089.5e3, 15001.25e3])
    assert c22["clock_s"].item() == pytest.approx((100.0 + 89 + 0.5) * 1e-6, abs=1e-15)
    # V records: dm/s -> m/s, 1e-4 microseconds/s -> s/s (SP3-c 2, velocity record)
    np.testing.assert_allclose(c22["velocity_ecef_m_per_s"].values, [123.45, -567.89, 1.0])
    assert c22["clock_rate_s_per_s"].item() == pytest.approx(-2.5e-10)
    assert np.isnan(ds["position_ecef_m"].sel(sv="G03").isel(time=1)).all()
    assert np.isfinite(ds["position_ecef_m"].sel(sv="G03").isel(time=0)).all()
    assert np.isnan(ds["clock_s"].sel(sv="E05")).all()
    assert ds["time"].values[1] == np.datetime64("2020-06-25T00:15", "ns")


@pytest.mark.parametrize("system, shift_s", [
    ("GPS", 0), ("GAL", 0),
    ("BDT", 14),      # BDT = GPST - 14 s (BDS-SIS-ICD 5.2.2, published)
    ("UTC", 18),      # GPST - UTC = 18 s since 2017-01-01 (IERS Bulletin C, published)
    ("TAI", -19),     # TAI - GPST = 19 s (published)
    ("GLO", 18 - 3 * 3600),  # GLONASST = UTC + 3 h (GLONASS ICD 3.3.3, published)
])
def test_time_system_converted_to_gpst(tmp_path, system, shift_s):
    path = tmp_path / f"ts_{system}.sp3"
    path.write_text(_sp3d_text(n_sat=3, time_system=system, velocity=False))
    ds = read_sp3(path)
    assert ds.attrs["source_time_system"] == system
    assert ds["time"].values[0] == np.datetime64("2020-06-25T00:00", "ns") + np.timedelta64(shift_s, "s")


# --- bad input ---------------------------------------------------------------------

def _write(tmp_path, text, name="bad.sp3"):
    path = tmp_path / name
    path.write_text(text)
    return path


def _ledger(ds):
    ledger = Ledger.from_dict(ds.attrs["accounting"])
    assert ledger.unbalanced() == []
    return ledger


def test_truncated_body(tmp_path):
    # A file cut inside its 3rd of 4 announced epochs keeps what is there (3 + 3 + 2 records),
    # with a warning naming the file and its last line.
    lines = _sp3d_text(n_sat=3, velocity=False, n_epochs=4).splitlines()
    path = _write(tmp_path, "\n".join(lines[:-6]) + "\n")
    ds = read_sp3(path)
    assert ds.sizes["time"] == 3 and ds.sizes["sv"] == 3
    ledger = _ledger(ds)
    assert ledger.count("sp3_records", "G") == 8 and ledger.count("sp3_records", "G", "used") == 8
    assert f"{path}:{len(lines) - 6}: SP3 file shorter than announced: header gives 4 epochs, body has 3" \
        in ledger.warnings[0]


def test_record_cut_mid_line(tmp_path):
    lines = _sp3d_text(n_sat=3, velocity=False).splitlines()
    index = next(i for i, l in enumerate(lines) if l.startswith("PG02"))
    lines[index] = lines[index][:30]
    path = _write(tmp_path, "\n".join(lines) + "\n")
    ds = read_sp3(path)
    assert np.isnan(ds["position_ecef_m"].sel(sv="G02").isel(time=0)).all()
    assert np.isfinite(ds["position_ecef_m"].sel(sv="G02").isel(time=1)).all()
    ledger = _ledger(ds)
    assert ledger.dropped("sp3_records", "G") == {"record cut short": 1}
    assert ledger.warnings == [f"{path}:{index + 1}: SP3 record skipped: record cut short"]


def test_garbled_number(tmp_path):
    lines = _sp3d_text(n_sat=3, velocity=False).splitlines()
    index = next(i for i, l in enumerate(lines) if l.startswith("PG02"))
    lines[index] = lines[index][:8] + "x" + lines[index][9:]
    path = _write(tmp_path, "\n".join(lines) + "\n")
    ds = read_sp3(path)
    assert np.isnan(ds["clock_s"].sel(sv="G02").isel(time=0))
    assert ds["clock_s"].sel(sv="G01").isel(time=0).item() == pytest.approx(100.0e-6, abs=1e-15)
    ledger = _ledger(ds)
    assert ledger.dropped("sp3_records") == {"damaged number": 1}
    assert ledger.warnings == [f"{path}:{index + 1}: SP3 record skipped: damaged number"]


def test_wrong_version(tmp_path):
    text = _sp3d_text(n_sat=3, velocity=False).replace("#dP", "#aP", 1)
    path = _write(tmp_path, text)
    with pytest.raises(FileFormatError, match=r":1: SP3 version 'a' not supported"):
        read_sp3(path)


def test_not_sp3_and_empty(tmp_path):
    with pytest.raises(FileFormatError, match=r"empty file"):
        read_sp3(_write(tmp_path, "", "empty.sp3"))
    with pytest.raises(FileFormatError, match=r"empty file"):
        read_sp3(_write(tmp_path, "\n  \n", "blank.sp3"))
    with pytest.raises(FileFormatError, match=r"nav.sp3:1: not an SP3 file: the first line must start with '#'"):
        read_sp3(_write(tmp_path, "     3.05           N: GNSS NAV DATA\n", "nav.sp3"))
    lines = _sp3d_text(n_sat=3, velocity=False).splitlines()
    header_only = "\n".join(l for l in lines if not l.startswith(("*", "P", "EOF"))) + "\n"
    with pytest.raises(FileFormatError, match=r"no epoch record"):
        read_sp3(_write(tmp_path, header_only, "header_only.sp3"))
