"""ANTEX 1.4 antenna files: phase-centre offsets and variations of satellite and receiver antennas.

Format: "ANTEX: The Antenna Exchange Format, Version 1.4" (IGS, R. Schmid, 2010; sections cited
as "ANTEX 1.4" below, with the record label).  Every record but the variation rows carries its
label in columns 61-80.

Header (ANTEX 1.4, header section): ``ANTEX VERSION / SYST`` first (F8.1, 12X, A1; versions 1.3
and 1.4 read, others refused), ``PCV TYPE / REFANT`` (A1: A absolute / R relative), ``COMMENT``,
``END OF HEADER``.

One antenna is the block ``START OF ANTENNA`` .. ``END OF ANTENNA`` (ANTEX 1.4, data section):

* ``TYPE / SERIAL NO``: A20 antenna type (receivers: 16 characters + 4 of radome), A20 serial
  number -- for a satellite antenna the PRN code ``sNN``, then A10 the SVN code ``sNNN`` and
  (10X) A10 the COSPAR ID.  A block is a satellite's when its serial is ``sNN`` and its SVN ``sNNN``.
* ``METH / BY / # / DATE``, ``DAZI`` (2X, F6.1: azimuth step, 0 = no azimuth dependence),
  ``ZEN1 / ZEN2 / DZEN`` (2X, 3F6.1: zenith -- for satellites nadir -- grid, degrees),
  ``# OF FREQUENCIES`` (I6), optional ``VALID FROM`` / ``VALID UNTIL`` (5I6, F13.7; GPST),
  ``SINEX CODE``, ``COMMENT``.
* per frequency ``START OF FREQUENCY`` (3X, A1, I2: e.g. ``G01``), ``NORTH / EAST / UP``
  (3F10.2, millimetres: north/east/up of the receiver antenna's phase centre from its reference
  point; x/y/z in the satellite body frame from the centre of mass for a satellite), the
  ``NOAZI`` row (3X, A5, mF8.2 mm) and, when DAZI > 0, one row per azimuth 0, DAZI, .. 360
  (F8.1, mF8.2 mm), ``END OF FREQUENCY``; optional ``START OF FREQ RMS`` .. ``END OF FREQ RMS``
  (read over).

Refused, never guessed (each costs its antenna block only; ledger item ``antenna_blocks``, system
the satellite's letter, ``-`` for receiver antennas or a block whose satellite cannot be told):
a number a strict Fortran reading rejects (underscore, NaN, INF, a letter, wrong decimals), a
missing mandatory record, a frequency count that differs from ``# OF FREQUENCIES``, a variation
row with the wrong number of values or azimuths not on the DAZI grid, an impossible date or a
validity that ends before it starts, an offset beyond 10 m or a variation beyond 100 mm (physical
ranges, common practice: satellite offsets are below ~3.5 m, variations below ~30 mm), a block
not closed before the next one starts, an unknown label.  The file is refused when its header
cannot be read or no block survives.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from gnssrel.accounting import NO_SYSTEM, Ledger
from gnssrel.errors import FileFormatError
from gnssrel.io.opening import read_text

ITEM = "antenna_blocks"
VERSIONS = (1.3, 1.4)
MAX_OFFSET_MM = 10_000.0
MAX_VARIATION_MM = 100.0
SATELLITE_PRN = re.compile(r"[GRECJIS]\d\d")
SATELLITE_SVN = re.compile(r"[GRECJIS]\d\d\d")
FREQUENCY_CODE = re.compile(r"[GRECJIS]\d\d")


@dataclass(frozen=True)
class FrequencyPattern:
    """Offset and variations of one frequency; millimetres and degrees."""

    offset_mm: np.ndarray          # (3,): north/east/up (receiver) or x/y/z body frame (satellite)
    zenith_deg: np.ndarray         # (n_zen,) zenith (receiver) or nadir (satellite) angles
    noazi_mm: np.ndarray           # (n_zen,) azimuth-independent variations
    azimuth_deg: np.ndarray | None = None   # (n_azi,) when DAZI > 0
    grid_mm: np.ndarray | None = None       # (n_azi, n_zen) when DAZI > 0


@dataclass(frozen=True)
class Antenna:
    """One antenna block."""

    antenna_type: str
    serial: str                     # satellite: PRN code "G01"; receiver: serial or "" (type mean)
    svn: str = ""                   # satellite: SVN code "G032"
    cospar: str = ""
    valid_from: np.datetime64 | None = None    # GPST
    valid_until: np.datetime64 | None = None   # GPST
    frequencies: dict = field(default_factory=dict)   # code "G01" -> FrequencyPattern
    line: int = 0

    @property
    def is_satellite(self) -> bool:
        return bool(self.svn)

    def valid_at(self, t) -> bool:
        t = np.datetime64(t, "ns")
        return ((self.valid_from is None or t >= self.valid_from)
                and (self.valid_until is None or t <= self.valid_until))


@dataclass
class AntexData:
    """What :func:`read_antex` returns: header dict, antennas in file order, path, ledger."""

    header: dict
    antennas: list
    path: str
    accounting: Ledger

    def satellite(self, prn: str, t) -> Antenna | None:
        """The satellite antenna serving PRN ``prn`` at GPST ``t`` (the PRN/SVN mapping by date)."""
        found = [a for a in self.antennas if a.is_satellite and a.serial == prn and a.valid_at(t)]
        return found[-1] if found else None

    def receiver(self, antenna_type: str, serial: str = "") -> Antenna | None:
        """A receiver antenna by type (with radome, 20 characters as in RINEX) and serial.

        An individual calibration (same serial) wins over the type mean (blank serial or NONE).
        """
        wanted = antenna_type.strip()
        exact = [a for a in self.antennas if not a.is_satellite and a.antenna_type == wanted]
        for a in exact:
            if serial and a.serial == serial.strip():
                return a
        means = [a for a in exact if a.serial in ("", "NONE")]
        return means[0] if means else None


class _BlockError(Exception):
    """A damaged antenna block: message and line number."""

    def __init__(self, message: str, line: int):
        super().__init__(message)
        self.line = line


def _number(text: str, decimals: int, what: str, line: int) -> float:
    """A strict Fortran Fw.d field: blanks, one sign, digits, '.', exactly ``decimals`` digits."""
    if not re.fullmatch(rf" *[+-]?\d*\.\d{{{decimals}}}", text):     # right-justified, no trailing blank
        raise _BlockError(f"{what}: {text.strip()!r} is not a number of the form F.{decimals} "
                          f"in its columns", line)
    return float(text)


def _integer(text: str, what: str, line: int) -> int:
    if not re.fullmatch(r" *[+-]?\d+", text):
        raise _BlockError(f"{what}: {text.strip()!r} is not an integer in its columns", line)
    return int(text)


def _epoch(text: str, what: str, line: int) -> np.datetime64:
    """5I6, F13.7 (ANTEX 1.4 VALID FROM / UNTIL): a real calendar date and time, GPST."""
    y, mo, d, h, mi = (_integer(text[6 * k:6 * k + 6], what, line) for k in range(5))
    sec = _number(text[30:43], 7, what, line)
    import calendar
    if not (1980 <= y <= 2100 and 1 <= mo <= 12 and 1 <= d <= calendar.monthrange(y, mo)[1]
            and 0 <= h <= 23 and 0 <= mi <= 59 and 0.0 <= sec < 60.0):
        raise _BlockError(f"{what}: impossible date {text[:43].strip()!r}", line)
    day = np.datetime64(f"{y:04d}-{mo:02d}-{d:02d}", "ns")
    return day + np.timedelta64(h * 3600 + mi * 60, "s") + np.timedelta64(round(sec * 1e9), "ns")


def _fields(texts: list[str], width: int, count: int, decimals: int) -> tuple[np.ndarray, np.ndarray]:
    """``count`` strict Fw.d fields at the start of each text, all rows at once (no per-value loop).

    Returns (ok per row and field (rows, count), values (rows, count), NaN where not ok).  A field
    is blanks, one optional sign, digits, the point exactly ``decimals`` from the right, digits.
    """
    n = width * count
    raw = np.array([t[:n].ljust(n).encode("ascii", "replace") for t in texts], dtype=f"S{n}")
    c = raw.view(np.uint8).reshape(len(texts), count, width)
    point = width - decimals - 1
    digit = (c - np.uint8(48)) <= 9                      # uint8 arithmetic wraps below '0'
    lead = c[..., :point]
    kind = np.full(lead.shape, 9, dtype=np.uint8)        # blank 0, sign 1, digit 2: in this order only
    kind[lead == 32] = 0
    kind[(lead == 43) | (lead == 45)] = 1
    kind[digit[..., :point]] = 2
    ok = ((c[..., point] == 46) & digit[..., point + 1:].all(-1) & (kind < 9).all(-1)
          & (kind[..., 1:] >= kind[..., :-1]).all(-1) & ~((kind[..., 1:] == 1) & (kind[..., :-1] == 1)).any(-1))
    # exact: the digits as one integer, divided once by 10^decimals (as float() of the text rounds)
    whole = np.zeros(c.shape[:2], dtype=np.int64)
    for j in (j for j in range(width) if j != point):
        whole *= 10
        whole += np.where(digit[..., j], c[..., j] - np.uint8(48), np.uint8(0))
    negative = (c[..., :point] == 45).any(-1)
    values = np.where(negative, -whole, whole) / 10.0 ** decimals
    return ok, np.where(ok, values, np.nan)


def _grid(start: float, stop: float, step: float, what: str, line: int) -> np.ndarray:
    n = (stop - start) / step
    if step <= 0 or n < 0 or abs(n - round(n)) > 1e-6:
        raise _BlockError(f"{what}: {start:g} .. {stop:g} is not a whole number of steps of {step:g}", line)
    return start + step * np.arange(round(n) + 1)


def _header(lines: list[str], path: Path) -> tuple[dict, int]:
    if not lines or lines[0][60:80].strip() != "ANTEX VERSION / SYST":
        raise FileFormatError("not an ANTEX file: the first line is not 'ANTEX VERSION / SYST'", path, 1,
                              lines[0] if lines else "")
    try:
        version = float(lines[0][:8]) if re.fullmatch(r"\s*\d+\.\d", lines[0][:8]) else None
    except ValueError:
        version = None
    if version not in VERSIONS:
        raise FileFormatError(f"ANTEX version {lines[0][:8].strip()!r} is not read (only 1.3 and 1.4)",
                              path, 1, lines[0])
    header = {"version": version, "system": lines[0][20:21].strip(), "pcv_type": None,
              "reference_antenna": ""}
    for i, text in enumerate(lines[1:], start=2):
        label = text[60:80].strip()
        if label == "PCV TYPE / REFANT":
            if text[0] not in "AR":
                raise FileFormatError("PCV TYPE / REFANT: the type must be A (absolute) or R (relative)",
                                      path, i, text)
            header["pcv_type"] = "absolute" if text[0] == "A" else "relative"
            header["reference_antenna"] = text[20:40].strip()
        elif label == "END OF HEADER":
            if header["pcv_type"] is None:
                raise FileFormatError("ANTEX header without 'PCV TYPE / REFANT'", path, i, text)
            return header, i
        elif label not in ("COMMENT", ""):
            raise FileFormatError(f"unknown ANTEX header record {label!r}", path, i, text)
    raise FileFormatError("ANTEX header without 'END OF HEADER'", path, len(lines))


def _frequency(lines, i, code, zenith, azimuth, what, pending):
    """Read one frequency section from its NORTH / EAST / UP line; returns (pattern, next index)."""
    line_no, text = lines[i]
    if text[60:80].strip() != "NORTH / EAST / UP":
        raise _BlockError(f"{what} {code}: 'NORTH / EAST / UP' expected", line_no)
    offset = np.array([_number(text[10 * k:10 * k + 10], 2, "NORTH / EAST / UP", line_no) for k in range(3)])
    if np.any(np.abs(offset) > MAX_OFFSET_MM):
        raise _BlockError(f"{what} {code}: an offset beyond {MAX_OFFSET_MM / 1000:g} m", line_no)
    rows = []
    i += 1
    while i < len(lines):
        line_no, text = lines[i]
        if text[60:80].strip() == "END OF FREQUENCY" and not text[8:60].strip():
            if text[3:6] != code:
                raise _BlockError(f"END OF FREQUENCY of {text[3:6]!r} closes {code!r}", line_no)
            break
        rows.append((line_no, text))
        i += 1
    else:
        raise _BlockError(f"{what} {code}: no 'END OF FREQUENCY'", line_no)
    if not rows or rows[0][1][3:8] != "NOAZI" or rows[0][1][:3].strip():
        raise _BlockError(f"{what} {code}: the NOAZI row must follow NORTH / EAST / UP",
                          rows[0][0] if rows else line_no)
    if azimuth is not None and len(rows) - 1 != azimuth.size:
        raise _BlockError(f"{what} {code}: {len(rows) - 1} azimuth rows, the DAZI grid has {azimuth.size}",
                          rows[-1][0])
    if azimuth is None and len(rows) > 1:
        raise _BlockError(f"{what} {code}: azimuth rows with DAZI = 0", rows[1][0])
    # the variations are read later, every row of the file at once (_read_variations)
    pending.append((code, rows, zenith.size, azimuth))
    return FrequencyPattern(offset, zenith, np.empty(0), azimuth, None), i + 1


def _block(lines, pending: list) -> Antenna:
    """One antenna block (lines after START OF ANTENNA up to END OF ANTENNA, with numbers); its
    variation rows are appended to ``pending`` (code, rows, n_zen, azimuth grid) unread."""
    first_no, first = lines[0] if lines else (0, "")
    if first[60:80].strip() != "TYPE / SERIAL NO":
        raise _BlockError("'TYPE / SERIAL NO' must follow 'START OF ANTENNA'", first_no)
    kind, serial, svn, cospar = first[:20].strip(), first[20:40].strip(), first[40:50].strip(), first[50:60].strip()
    satellite = bool(SATELLITE_SVN.fullmatch(svn))
    if satellite and not SATELLITE_PRN.fullmatch(serial):
        raise _BlockError(f"satellite antenna: PRN code {serial!r} is not of the form sNN", first_no)
    what = serial if satellite else kind
    info: dict = {}
    frequencies: dict = {}
    i = 1
    while i < len(lines):
        line_no, text = lines[i]
        label = text[60:80].strip()
        if label in ("METH / BY / # / DATE", "SINEX CODE", "COMMENT"):
            info.setdefault(label, True)
        elif label == "DAZI":
            info["dazi"] = _number(text[2:8], 1, "DAZI", line_no)
            if not (info["dazi"] == 0 or (0 < info["dazi"] <= 360 and (360 / info["dazi"]).is_integer())):
                raise _BlockError(f"DAZI {info['dazi']:g} does not divide 360", line_no)
        elif label == "ZEN1 / ZEN2 / DZEN":
            z1, z2, dz = (_number(text[2 + 6 * k:8 + 6 * k], 1, "ZEN1 / ZEN2 / DZEN", line_no) for k in range(3))
            if not (0 <= z1 < z2 <= 180):
                raise _BlockError(f"zenith grid {z1:g} .. {z2:g} outside 0 .. 180 degrees", line_no)
            info["zenith"] = _grid(z1, z2, dz, "ZEN1 / ZEN2 / DZEN", line_no)
        elif label == "# OF FREQUENCIES":
            info["n_freq"] = _integer(text[:6], "# OF FREQUENCIES", line_no)
        elif label in ("VALID FROM", "VALID UNTIL"):
            info[label] = _epoch(text, label, line_no)
        elif label == "START OF FREQUENCY":
            code = text[3:6]
            if not FREQUENCY_CODE.fullmatch(code) or text[:3].strip() or text[6:60].strip():
                raise _BlockError(f"frequency code {text[:8].strip()!r} is not of the form sNN (columns 4-6)",
                                  line_no)
            if "zenith" not in info or "dazi" not in info:
                raise _BlockError("DAZI and ZEN1 / ZEN2 / DZEN must precede the frequencies", line_no)
            if code in frequencies:
                raise _BlockError(f"frequency {code} given twice", line_no)
            dazi = info["dazi"]
            azimuth = _grid(0.0, 360.0, dazi, "DAZI", line_no) if dazi > 0 else None
            frequencies[code], i = _frequency(lines, i + 1, code, info["zenith"], azimuth, what, pending)
            continue
        elif label == "START OF FREQ RMS":
            while i < len(lines) and lines[i][1][60:80].strip() != "END OF FREQ RMS":
                i += 1
            if i == len(lines):
                raise _BlockError("'START OF FREQ RMS' without 'END OF FREQ RMS'", line_no)
        else:
            raise _BlockError(f"unexpected record {label or text[:20].strip()!r} in an antenna block", line_no)
        i += 1
    for needed, label in (("METH / BY / # / DATE", "METH / BY / # / DATE"), ("dazi", "DAZI"),
                          ("zenith", "ZEN1 / ZEN2 / DZEN"), ("n_freq", "# OF FREQUENCIES")):
        if needed not in info:
            raise _BlockError(f"antenna {what}: no '{label}' record", first_no)
    if info["n_freq"] != len(frequencies):
        raise _BlockError(f"antenna {what}: '# OF FREQUENCIES' says {info['n_freq']}, "
                          f"{len(frequencies)} frequency blocks follow", first_no)
    start, until = info.get("VALID FROM"), info.get("VALID UNTIL")
    if start is not None and until is not None and until < start:
        raise _BlockError(f"antenna {what}: VALID UNTIL before VALID FROM", first_no)
    return Antenna(kind, serial, svn if satellite else "", cospar if satellite else "", start, until,
                   frequencies, first_no)


def read_antex(path: str | Path) -> AntexData:
    """Read an ANTEX 1.3/1.4 file (plain or compressed); damaged blocks are skipped and counted."""
    path = Path(path)
    lines = read_text(path).splitlines()
    header, end_of_header = _header(lines, path)
    ledger = Ledger()
    antennas = []
    numbered = [(k + 1, text.rstrip("\r")) for k, text in enumerate(lines)]
    i = end_of_header
    while i < len(numbered):
        line_no, text = numbered[i]
        label = text[60:80].strip()
        if not text.strip():
            i += 1
            continue
        if label != "START OF ANTENNA":
            ledger.warn(f"ANTEX: line outside an antenna block read over ({label or text[:20].strip()!r})",
                        path, line_no)
            i += 1
            continue
        j = i + 1
        while j < len(numbered) and numbered[j][1][60:80].strip() not in ("END OF ANTENNA", "START OF ANTENNA"):
            j += 1
        body = numbered[i + 1:j]
        system = _system_of(body)
        ledger.read(ITEM, system)
        try:
            if j == len(numbered) or numbered[j][1][60:80].strip() != "END OF ANTENNA":
                raise _BlockError("antenna block not closed by 'END OF ANTENNA'", line_no)
            pending: list = []
            antennas.append((_block(body, pending), system, pending))
            ledger.used(ITEM, system)
        except _BlockError as error:
            ledger.drop(ITEM, system, "damaged")
            ledger.warn(f"ANTEX antenna block skipped: {error}", path, error.line)
        i = j + 1 if j < len(numbered) and numbered[j][1][60:80].strip() == "END OF ANTENNA" else j
    antennas = _read_variations(antennas, ledger, path)
    if not antennas:
        raise FileFormatError("no usable antenna block in the ANTEX file"
                              + (f" ({ledger.warnings[0]})" if ledger.warnings else ""), path)
    return AntexData(header, antennas, str(path), ledger)


def _read_variations(found: list, ledger: Ledger, path: Path) -> list:
    """Fill every antenna's variations, all rows of one zenith-grid size at once; an antenna with a
    damaged row is dropped (retired from "used" to "damaged") with a warning naming the line."""
    groups: dict = {}          # n_zen -> [(antenna index, code, row kind, (line, text))]
    for a, (_, _, pending) in enumerate(found):
        for code, rows, n_zen, azimuth in pending:
            group = groups.setdefault(n_zen, [])
            group.append((a, code, -1, rows[0], np.nan))
            group.extend((a, code, k, row, azimuth[k]) for k, row in enumerate(rows[1:]))
    errors: dict = {}
    values: dict = {}
    for n_zen, group in groups.items():
        texts = [item[3][1] for item in group]
        ok, parsed = _fields([text[8:] for text in texts], 8, n_zen, 2)
        good = ok.all(axis=1) & (np.abs(np.where(ok, parsed, 0.0)) <= MAX_VARIATION_MM).all(axis=1)
        expected = np.array([item[4] for item in group])
        grid_rows = np.isfinite(expected)
        if grid_rows.any():
            az_ok, az = _fields([t[:8] for t, g in zip(texts, grid_rows) if g], 8, 1, 1)
            good[grid_rows] &= az_ok[:, 0] & (np.abs(az[:, 0] - expected[grid_rows]) <= 1e-6)
        for k, (a, code, kind, (line_no, text), _) in enumerate(group):
            if not good[k] or text[8 + 8 * n_zen:].strip():
                errors.setdefault(a, (line_no, _row_problem(text, n_zen, kind)))
            values.setdefault((a, code), {})[kind] = parsed[k]
    kept = []
    for a, (antenna, system, pending) in enumerate(found):
        if a in errors:
            ledger.retire(ITEM, system, "damaged")
            ledger.warn(f"ANTEX antenna block skipped: {errors[a][1]}", path, errors[a][0])
            continue
        frequencies = {}
        for code, rows, _, azimuth in pending:
            rows_of = values[(a, code)]
            grid = np.stack([rows_of[k] for k in range(len(rows) - 1)]) if azimuth is not None else None
            frequencies[code] = replace(antenna.frequencies[code], noazi_mm=rows_of[-1], grid_mm=grid)
        kept.append(replace(antenna, frequencies=frequencies))
    return kept


def _row_problem(text: str, n_zen: int, kind: int) -> str:
    """Why a variation row was refused, in words."""
    what = "NOAZI row" if kind < 0 else "azimuth row"
    ok, values = _fields([text[8:]], 8, n_zen, 2)
    if kind >= 0 and not _fields([text[:8]], 8, 1, 1)[0].all():
        return f"{what}: azimuth {text[:8].strip()!r} is not a number of the form F8.1 in its columns"
    if not ok.all():
        bad = int(np.flatnonzero(~ok[0])[0])
        return (f"{what}: value {bad + 1} {text[8 + 8 * bad:16 + 8 * bad].strip()!r} is not a number of the "
                f"form F8.2 in its columns")
    if text[8 + 8 * n_zen:].strip():
        return f"{what}: more than the {n_zen} values of the zenith grid"
    if (np.abs(values) > MAX_VARIATION_MM).any():
        return f"{what}: a variation beyond {MAX_VARIATION_MM:g} mm"
    return f"{what}: azimuth {text[:8].strip()} is not the next step of the DAZI grid"


def _system_of(body) -> str:
    """The satellite's system letter of a block, '-' for a receiver antenna or an unreadable block."""
    if body and body[0][1][60:80].strip() == "TYPE / SERIAL NO":
        serial, svn = body[0][1][20:40].strip(), body[0][1][40:50].strip()
        if SATELLITE_SVN.fullmatch(svn) and SATELLITE_PRN.fullmatch(serial):
            return serial[0]
    return NO_SYSTEM
