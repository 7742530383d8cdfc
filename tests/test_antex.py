"""The ANTEX 1.4 reader against the format (IGS ANTEX 1.4, 2010) and the igs14 excerpt in refdata.

Built files follow ANTEX 1.4 column by column (labels in columns 61-80, NORTH / EAST / UP
3F10.2 mm, variation rows F8.1 + mF8.2 mm, VALID FROM 5I6 F13.7).  Offsets typed here are
invented for the tests unless a source is named beside them.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import refdata_file

from gnssrel.errors import FileFormatError
from gnssrel.io.antex import read_antex


def rec(text: str, label: str) -> str:
    """One ANTEX record: content in columns 1-60, label in 61-80."""
    return f"{text:<60}{label:<20}"


def header(version: str = "1.4") -> list[str]:
    return [rec(f"{version:>8}{'':12}M", "ANTEX VERSION / SYST"), rec("A", "PCV TYPE / REFANT"),
            rec("", "END OF HEADER")]


def satellite_block(prn: str, svn: str, offsets_mm: dict, valid_from=(2015, 1, 1), valid_until=None,
                    n_freq: int | None = None) -> list[str]:
    """A satellite antenna (DAZI 0, nadir 0..14 by 7: three NOAZI values)."""
    lines = [rec("", "START OF ANTENNA"), rec(f"{'BLOCK TEST':<20}{prn:<20}{svn:<10}2015-001A", "TYPE / SERIAL NO"),
             rec(f"{'':20}{'TEST':<20}{0:6d}    01-JAN-20", "METH / BY / # / DATE"),
             rec(f"  {0.0:6.1f}", "DAZI"), rec(f"  {0.0:6.1f}{14.0:6.1f}{7.0:6.1f}", "ZEN1 / ZEN2 / DZEN"),
             rec(f"{n_freq if n_freq is not None else len(offsets_mm):6d}", "# OF FREQUENCIES"),
             rec("".join(f"{v:6d}" for v in (*valid_from, 0, 0)) + f"{0.0:13.7f}", "VALID FROM")]
    if valid_until is not None:
        lines.append(rec("".join(f"{v:6d}" for v in (*valid_until, 23, 59)) + f"{59.9999999:13.7f}",
                         "VALID UNTIL"))
    for code, (x, y, z) in offsets_mm.items():
        lines += [rec(f"   {code}", "START OF FREQUENCY"), rec(f"{x:10.2f}{y:10.2f}{z:10.2f}", "NORTH / EAST / UP"),
                  f"   NOAZI{-0.8:8.2f}{0.1:8.2f}{1.3:8.2f}", rec(f"   {code}", "END OF FREQUENCY")]
    return lines + [rec("", "END OF ANTENNA")]


def receiver_block(kind: str = "TESTANT_A      NONE") -> list[str]:
    """A receiver antenna with an azimuth grid (DAZI 120: rows 0, 120, 240, 360; zenith 0..90 by 45)."""
    lines = [rec("", "START OF ANTENNA"), rec(f"{kind:<20}", "TYPE / SERIAL NO"),
             rec(f"{'ROBOT':<20}{'TEST':<20}{1:6d}    01-JAN-20", "METH / BY / # / DATE"),
             rec(f"  {120.0:6.1f}", "DAZI"), rec(f"  {0.0:6.1f}{90.0:6.1f}{45.0:6.1f}", "ZEN1 / ZEN2 / DZEN"),
             rec(f"{1:6d}", "# OF FREQUENCIES"), rec("   G01", "START OF FREQUENCY"),
             rec(f"{1.5:10.2f}{-0.4:10.2f}{65.2:10.2f}", "NORTH / EAST / UP"),
             f"   NOAZI{0.0:8.2f}{1.1:8.2f}{-2.2:8.2f}"]
    lines += [f"{az:8.1f}{0.0:8.2f}{az / 100:8.2f}{-1.0:8.2f}" for az in (0.0, 120.0, 240.0, 360.0)]
    return lines + [rec("   G01", "END OF FREQUENCY"), rec("", "END OF ANTENNA")]


def build_antex(path, blocks, version="1.4"):
    path.write_text("\n".join(header(version) + [line for block in blocks for line in block]) + "\n")
    return path


@pytest.mark.refdata
def test_igs14_excerpt():
    atx = read_antex(refdata_file("antex/igs14_small.atx.gz"))
    assert atx.header["version"] == 1.4 and atx.header["pcv_type"] == "absolute"
    counts = atx.accounting.as_dict()["antenna_blocks"]
    # The excerpt's Galileo-2 E04 block (line 512) and EML_REACH_RS2 block (line 679) are cut:
    # no END OF ANTENNA before the next START OF ANTENNA (file text).  Each costs its block only.
    assert counts["G"] == {"read": 2, "used": 2}
    assert counts["E"] == {"read": 1, "damaged": 1}
    assert counts["-"] == {"read": 3, "used": 2, "damaged": 1}
    assert any(":512:" in w for w in atx.accounting.warnings)
    assert atx.accounting.unbalanced() == []
    # PRN -> SVN by date (VALID FROM / UNTIL in the file): G01 was SVN G032, then G037.
    first = atx.satellite("G01", np.datetime64("2000-01-01"))
    second = atx.satellite("G01", np.datetime64("2008-12-01"))
    assert first.svn == "G032" and first.antenna_type == "BLOCK IIA" and first.cospar == "1992-079A"
    np.testing.assert_allclose(first.frequencies["G01"].offset_mm, [279.0, 0.0, 2319.5])   # file text
    np.testing.assert_allclose(second.frequencies["G02"].offset_mm, [279.0, 0.0, 2289.3])
    assert atx.satellite("G01", np.datetime64("2008-10-20")) is None       # between the two periods
    pattern = first.frequencies["G01"]
    assert pattern.zenith_deg[0] == 0.0 and pattern.zenith_deg[-1] == 17.0 and pattern.zenith_deg.size == 18
    assert pattern.noazi_mm[:3].tolist() == [-0.8, -0.9, -0.9] and pattern.grid_mm is None
    leg = atx.receiver("JPSLEGANT_E     NONE")
    np.testing.assert_allclose(leg.frequencies["G02"].offset_mm, [1.41, -1.76, 54.15])      # file text
    assert not leg.is_satellite and leg.valid_from is None


@pytest.mark.refdata
def test_excerpt_galileo_block_reads_when_closed(tmp_path):
    """The excerpt's E04 block (azimuth grid 0..360 by 5, nadir 0..20 by 0.5) with its two frequencies
    present, closed and counted right, reads: the cut is the only defect."""
    from gnssrel.io.opening import read_text
    lines = read_text(refdata_file("antex/igs14_small.atx.gz")).splitlines()
    head = lines[:lines.index(next(x for x in lines if x[60:].strip() == "END OF HEADER")) + 1]
    block = lines[511:678]
    block = [rec(f"{2:6d}", "# OF FREQUENCIES") if x[60:].strip() == "# OF FREQUENCIES" else x for x in block]
    path = tmp_path / "e04.atx"
    path.write_text("\n".join(head + block + [rec("", "END OF ANTENNA")]) + "\n")
    e04 = read_antex(path).satellite("E04", np.datetime64("2020-06-25"))
    assert e04.svn == "E213"
    np.testing.assert_allclose(e04.frequencies["E05"].offset_mm, [123.13, -9.59, 604.15])  # file text
    assert e04.frequencies["E07"].grid_mm.shape == (73, 41)


def test_built_file_satellite_and_receiver(tmp_path):
    path = build_antex(tmp_path / "a.atx", [satellite_block("G05", "G050", {"G01": (394.0, 0.0, 1500.0),
                                                                            "G02": (394.0, 0.0, 1600.0)}),
                                            receiver_block()])
    atx = read_antex(path)
    sat = atx.satellite("G05", np.datetime64("2020-06-25T12:00"))
    np.testing.assert_allclose(sat.frequencies["G02"].offset_mm, [394.0, 0.0, 1600.0])
    assert sat.frequencies["G01"].noazi_mm.tolist() == [-0.8, 0.1, 1.3]
    assert sat.valid_from == np.datetime64("2015-01-01T00:00:00", "ns") and sat.valid_until is None
    ant = atx.receiver("TESTANT_A      NONE")
    pattern = ant.frequencies["G01"]
    assert pattern.azimuth_deg.tolist() == [0.0, 120.0, 240.0, 360.0]
    np.testing.assert_allclose(pattern.grid_mm[:, 1], [0.0, 1.2, 2.4, 3.6])
    np.testing.assert_allclose(pattern.offset_mm, [1.5, -0.4, 65.2])
    assert atx.accounting.as_dict()["antenna_blocks"] == {"G": {"read": 1, "used": 1}, "-": {"read": 1, "used": 1}}


GOOD = {"G01": (0.0, 0.0, 1000.0), "G02": (0.0, 0.0, 1000.0)}


def _damaged(block, old, new):
    return [line.replace(old, new, 1) if old in line else line for line in block]


@pytest.mark.parametrize("damage", [
    ("underscore", lambda b: _damaged(b, "   1000.00", "  1_000.00")),
    ("NaN", lambda b: _damaged(b, "   1000.00", "       NaN")),
    ("one column off", lambda b: _damaged(b, "   1000.00", "  1000.00 ")),
    ("offset beyond 10 m", lambda b: _damaged(b, "   1000.00", "  99999.00")),
    ("variation beyond 100 mm", lambda b: _damaged(b, "    1.30", "  130.00")),
    ("frequency count", lambda b: _damaged(b, "     2" + " " * 54 + "# OF FREQ", "     3" + " " * 54 + "# OF FREQ")),
    ("30 February", lambda b: _damaged(b, "  2015     1     1", "  2015     2    30")),
    ("unknown label", lambda b: b[:3] + [rec("x", "NO SUCH RECORD")] + b[3:]),
    ("missing DAZI", lambda b: [x for x in b if "DAZI" not in x[60:] or "ZEN" in x[60:]]),
    ("noazi values missing", lambda b: _damaged(b, f"{1.3:8.2f}", "")),
    ("not closed", lambda b: b[:-1]),
])
def test_damaged_block_costs_that_block_only(tmp_path, damage):
    name, change = damage
    bad = change(satellite_block("G07", "G048", GOOD))
    path = build_antex(tmp_path / "d.atx", [satellite_block("G05", "G050", GOOD), bad,
                                            satellite_block("G08", "G072", GOOD)])
    atx = read_antex(path)
    kept = sorted(a.serial for a in atx.antennas)
    assert kept == ["G05", "G08"], name
    assert atx.accounting.count("antenna_blocks", "G", "damaged") == 1
    assert atx.accounting.unbalanced() == []
    assert atx.accounting.warnings and str(path) in atx.accounting.warnings[0]


def test_validity_ends_before_it_starts(tmp_path):
    path = build_antex(tmp_path / "v.atx", [satellite_block("G05", "G050", GOOD, (2016, 1, 1), (2015, 1, 1)),
                                            satellite_block("G08", "G072", GOOD)])
    atx = read_antex(path)
    assert [a.serial for a in atx.antennas] == ["G08"]
    assert "VALID UNTIL before VALID FROM" in atx.accounting.warnings[0]


def test_whole_file_refused(tmp_path):
    with pytest.raises(FileFormatError, match="version"):
        read_antex(build_antex(tmp_path / "v.atx", [satellite_block("G05", "G050", GOOD)], version="2.0"))
    (tmp_path / "n.atx").write_text("not an antenna file\n")
    with pytest.raises(FileFormatError, match="not an ANTEX file"):
        read_antex(tmp_path / "n.atx")
    with pytest.raises(FileFormatError, match="no usable antenna block"):
        read_antex(build_antex(tmp_path / "b.atx", [satellite_block("G05", "G050", GOOD)[:-1]]))


@pytest.mark.parametrize("old, new, why", [
    ("   240.0", "   245.0", "not the next step of the DAZI grid"),
    ("   240.0    0.00", "   240.0    0_00", "value 1 '0_00'"),
    ("   240.0    0.00    2.40", "   240.0    0.00    2.40    9.99", "more than the 3 values"),
])
def test_damaged_azimuth_row_names_its_line(tmp_path, old, new, why):
    block = receiver_block()
    row = next(k for k, line in enumerate(block) if line.startswith("   240.0"))
    block[row] = block[row].replace(old, new)
    path = build_antex(tmp_path / "g.atx", [receiver_block("OTHERANT_B     NONE"), block])
    atx = read_antex(path)
    assert [a.antenna_type for a in atx.antennas] == ["OTHERANT_B     NONE"]
    line = len(header()) + len(receiver_block()) + row + 1        # 1-based line of the damaged row
    assert atx.accounting.count("antenna_blocks", "-", "damaged") == 1 and atx.accounting.unbalanced() == []
    assert f"{path}:{line}:" in atx.accounting.warnings[0] and why in atx.accounting.warnings[0]
