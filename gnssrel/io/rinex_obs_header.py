"""Header of a RINEX observation file (versions 2.11, 3.0x, 4.00).

Column layouts follow the RINEX standard: RINEX 2.11 (IGS/RTCM, 2012 rev.) table A1,
RINEX 3.05 (IGS/RTCM-SC104, 2020) table A2, RINEX 4.00 (2021) table A2.  Every header
line holds its content in columns 1-60 and its label in columns 61-80.

:func:`parse_obs_header` returns a plain dict (keys below) and where the body starts;
the body parser (:mod:`gnssrel.io.rinex_obs`) only needs ``version``, ``fields`` (or
``fields_v2``), ``source_time_scale``, ``leap_seconds`` and ``scale_factors``.
"""

from __future__ import annotations

import numpy as np

from gnssrel.errors import FileFormatError
from gnssrel.timescales import check_leap_seconds

LABEL = slice(60, 80)

# RINEX 3.05 table A2 "TIME OF FIRST OBS": the scale names a file may use -> gnssrel's names.
# IRNSS time is aligned to GPST (IRNSS SIS ICD 1.1, 4.2.1; from memory).
# GLO: RINEX 2.11 table A1 and 8.1.1 say "GLO (=UTC time system)": the time tags of GLONASS
# observations are in UTC, not in GLONASS system time (UTC(SU) + 3 h); the GLONASS extension
# of RINEX 2 (Gurtner 1997, 1.1) gives the reason.  RINEX 3.x table A2 keeps the same words
# "GLO (=UTC time system)" (from memory), so the word GLO means UTC in every version.
FILE_TIME_SCALE = {"GPS": "GPST", "GAL": "GST", "GLO": "UTC", "BDT": "BDT",
                   "QZS": "QZSST", "IRN": "GPST"}
FILE_TIME_SCALE_V2 = dict(FILE_TIME_SCALE)

# RINEX 3.05 5.2.3: a file of one system writes its times in that system's scale;
# RINEX 2.11 table A1: GPS or mixed files default to GPS, pure GLONASS files to GLO.
DEFAULT_TIME_SCALE = {"G": "GPS", "R": "GLO", "E": "GAL", "C": "BDT", "J": "QZS",
                      "I": "IRN", "S": "GPS", "M": "GPS", " ": "GPS"}

SUPPORTED_MAJOR_VERSIONS = (2, 3, 4)


def _fail(message, path, index, lines):
    text = lines[index] if 0 <= index < len(lines) else None
    raise FileFormatError(message, path, index + 1, text)


def _floats(text: str, count: int, width: int = 14):
    """``count`` Fw.d floats in fixed ``width`` columns; None when a field is blank or not a plain
    decimal number (no '_', NaN, INF, exponent), or when the blank-separated numbers of columns
    1-60 are not exactly these values (a shifted line: a digit moved into the next field).
    Decimals are not checked: writers differ (F14.3 for F14.4, F11.4 for F10.3: common practice)."""
    out = []
    for i in range(count):
        body = text[i * width:(i + 1) * width].strip()
        if not _plain_decimal(body):
            return None
        out.append(float(body))
    tokens = text[:60].split()
    if len(tokens) != count or not all(_plain_decimal(t) and float(t) == v for t, v in zip(tokens, out)):
        return None
    return out


def _plain_decimal(text: str) -> bool:
    digits = text.lstrip("+-").replace(".", "", 1)
    return digits.isdigit() and digits.isascii() and len(text) - len(text.lstrip("+-")) <= 1


def header_time(text: str) -> np.datetime64 | None:
    """TIME OF FIRST/LAST OBS: 5I6, F13.7 (RINEX 3.05 table A2), as datetime64[ns] on the file's scale.

    None unless every field is a right-aligned number in its columns (a shifted line is not
    read) and the date exists (no 30 February) between 1980 and 2200.
    """
    fields = [text[i * 6:(i + 1) * 6] for i in range(5)]
    if not all(f.strip().isdigit() and f.strip().isascii() and f[-1:] != " " for f in fields):
        return None
    seconds_text = text[30:43]
    if not _plain_decimal(seconds_text.strip()) or seconds_text[-1:] == " ":
        return None
    year, month, day, hour, minute = (int(f) for f in fields)
    seconds = float(seconds_text)
    if not (1980 <= year <= 2200 and hour < 24 and minute < 60 and 0 <= seconds < 61):
        return None
    whole = int(seconds)
    nanos = round((seconds - whole) * 1e9)
    try:
        base = np.datetime64(f"{year:04d}-{month:02d}-{day:02d}T{hour:02d}:{minute:02d}", "ns")
    except ValueError:
        return None
    return base + np.timedelta64(whole * 1_000_000_000 + nanos, "ns")


def split_header(data: bytes, path) -> tuple[list[str], int]:
    """Header lines (text, no line ends) and the byte offset where the body starts."""
    if not data.strip():
        raise FileFormatError("empty file: expected a RINEX observation header", path, 1)
    marker = data.find(b"END OF HEADER")
    if marker < 0:
        n_lines = data.count(b"\n") + (0 if data.endswith(b"\n") else 1)
        last = data.rstrip(b"\r\n").rsplit(b"\n", 1)[-1].decode("ascii", "replace")
        raise FileFormatError("no END OF HEADER line: the file is truncated or not RINEX",
                              path, n_lines, last)
    line_end = data.find(b"\n", marker)
    body_offset = len(data) if line_end < 0 else line_end + 1
    lines = data[:body_offset].decode("ascii", "replace").replace("\r", "").split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    return lines, body_offset


def parse_obs_header(data: bytes, path) -> tuple[dict, int]:
    """Parse the header of a RINEX observation file given as its whole decompressed bytes.

    Returns ``(header, body_offset)``.  ``header`` keys: ``version`` (float),
    ``rinex_type`` ("O"), ``file_system`` (letter in column 41, "M" for mixed),
    ``marker_name``, ``marker_number``, ``receiver`` {number, type, version},
    ``antenna`` {number, type}, ``position`` [x, y, z] m ECEF (or None),
    ``antenna_delta_hen_m`` [h, e, n] (or None), ``fields`` {letter: [codes]}
    (RINEX 3/4) or ``fields_v2`` [codes] (RINEX 2, one list for all systems),
    ``interval_s``, ``time_of_first_obs`` / ``time_of_last_obs`` (datetime64[ns] on
    the file's scale, or None), ``file_time_scale`` (the file's word, e.g. "GPS"),
    ``source_time_scale`` (gnssrel's name, e.g. "GPST", "GLONASST"), ``leap_seconds``
    (GPST - UTC from the header, or None), ``glonass_slots`` {"R01": channel},
    ``scale_factors`` {letter: {code: factor}}, ``receiver_clock_offset_applied``,
    ``header_lines`` (count), ``notes`` [(message, line number)]: optional lines that could
    not be read (misaligned, garbled, implausible) and were left aside, and
    ``unscalable_systems`` (systems whose SYS / SCALE FACTOR line is unreadable: their
    observations cannot be read without it).
    """
    lines, body_offset = split_header(data, path)
    first = lines[0]
    if "RINEX VERSION / TYPE" not in first[LABEL]:
        _fail("first line is not 'RINEX VERSION / TYPE': not a RINEX observation file", path, 0, lines)
    try:
        version = float(first[:9])
    except ValueError:
        _fail("RINEX version (columns 1-9) is not a number", path, 0, lines)
    if int(version) not in SUPPORTED_MAJOR_VERSIONS:
        _fail(f"RINEX version {version:g} is not supported (2.xx, 3.xx, 4.xx are)", path, 0, lines)
    rinex_type = first[20:21]
    if rinex_type.upper() != "O":
        _fail(f"file type {rinex_type!r} in column 21 is not 'O' (observation data)", path, 0, lines)
    file_system = (first[40:41] or " ").upper()

    hdr: dict = {"version": version, "rinex_type": "O", "file_system": file_system.strip() or "G",
                 "marker_name": "", "marker_number": "", "receiver": {}, "antenna": {},
                 "position": None, "antenna_delta_hen_m": None, "interval_s": None,
                 "time_of_first_obs": None, "time_of_last_obs": None, "file_time_scale": None,
                 "leap_seconds": None, "glonass_slots": {}, "scale_factors": {},
                 "receiver_clock_offset_applied": None, "header_lines": len(lines), "notes": [],
                 "unscalable_systems": set()}
    notes = hdr["notes"]
    fields: dict[str, list[str]] = {}
    declared: dict[str, tuple[int, int]] = {}
    fields_v2: list[str] = []
    v2_declared = None
    last_sys = None
    last_scale = None
    for i, line in enumerate(lines[1:], start=1):
        label = line[LABEL].strip()
        body = line[:60]
        if label == "MARKER NAME":
            hdr["marker_name"] = body.strip()
        elif label == "MARKER NUMBER":
            hdr["marker_number"] = body.strip()
        elif label == "REC # / TYPE / VERS":
            hdr["receiver"] = {"number": body[:20].strip(), "type": body[20:40].strip(),
                               "version": body[40:60].strip()}
        elif label == "ANT # / TYPE":
            hdr["antenna"] = {"number": body[:20].strip(), "type": body[20:40].strip()}
        elif label in ("APPROX POSITION XYZ", "ANTENNA: DELTA H/E/N", "INTERVAL"):
            # 3F14.4, 3F14.4, F10.3 (RINEX 3.05 table A2, RINEX 2.11 table A1)
            key, count, width = {"APPROX POSITION XYZ": ("position", 3, 14),
                                 "ANTENNA: DELTA H/E/N": ("antenna_delta_hen_m", 3, 14),
                                 "INTERVAL": ("interval_s", 1, 10)}[label]
            if key == "position" and hdr["position"] is not None:
                continue
            values = _floats(body, count, width)
            if values is None:
                notes.append(((f"{label} is not {count if count > 1 else ''}F{width} numbers in "
                              f"columns 1-{count * width}; line ignored"), i + 1))
            hdr[key] = values if values is None or count > 1 else values[0]
        elif label in ("TIME OF FIRST OBS", "TIME OF LAST OBS"):
            # The body carries every epoch's own time: an unreadable line is left aside.
            key = "time_of_first_obs" if "FIRST" in label else "time_of_last_obs"
            hdr[key] = header_time(body)
            if hdr[key] is None:
                notes.append((f"{label} is not 5I6,F13.7 date and time in columns 1-43; line ignored", i + 1))
            if key == "time_of_first_obs":
                hdr["file_time_scale"] = _time_system_word(body, notes, i + 1)
        elif label == "LEAP SECONDS":
            leap = _strict_int(body[:6])
            reason = "not an integer in columns 1-6" if leap is None else check_leap_seconds(leap)
            if reason:
                notes.append((f"LEAP SECONDS {body[:6].strip()!r}: {reason}; the built-in table is used",
                              i + 1))
            else:
                hdr["leap_seconds"] = leap
                hdr["leap_seconds_line"] = i + 1
        elif label == "RCV CLOCK OFFS APPL":
            hdr["receiver_clock_offset_applied"] = body[:6].strip() == "1"
        elif label == "GLONASS SLOT / FRQ #":
            for k in range(8):
                slot, channel = body[4 + 7 * k:7 + 7 * k], body[8 + 7 * k:10 + 7 * k]
                if slot.strip() and channel.strip().lstrip("-").isdigit():
                    hdr["glonass_slots"][slot.replace(" ", "0")] = int(channel)
        elif label == "SYS / # / OBS TYPES":
            if body[0] != " ":
                last_sys = body[0].upper()
                try:
                    declared[last_sys] = (int(body[3:6]), i)
                except ValueError:
                    _fail("SYS / # / OBS TYPES: number of types (columns 4-6) is not an integer",
                          path, i, lines)
                fields[last_sys] = []
            elif last_sys is None:
                _fail("SYS / # / OBS TYPES continuation line before any system", path, i, lines)
            fields[last_sys] += body[6:60].split()
        elif label == "# / TYPES OF OBSERV":
            if v2_declared is None:
                try:
                    v2_declared = (int(body[:6]), i)
                except ValueError:
                    _fail("# / TYPES OF OBSERV: number of types (columns 1-6) is not an integer",
                          path, i, lines)
            fields_v2 += body[6:60].split()
        elif label == "SYS / SCALE FACTOR":
            last_scale = _scale_factor(hdr, body, path, i, lines, last_scale)
        elif label == "SYS / PHASE SHIFT" and body[6:14].strip() and not _plain_decimal(body[6:14].strip()):
            # A1,1X,A3,1X,F8.5,... (RINEX 3.05 table A2); not used by gnssrel, but not read silently
            notes.append(((f"SYS / PHASE SHIFT value {body[6:14].strip()!r} (columns 7-14) is not a number; "
                           "not used"), i + 1))
        elif label and label not in KNOWN_LABELS:
            shifted = _shifted_label(line)
            if shifted:
                notes.append((f"header label {shifted!r} is not in columns 61-80; line ignored", i + 1))

    if int(version) == 2:
        if v2_declared is None:
            _fail("no '# / TYPES OF OBSERV' line in the header", path, len(lines) - 1, lines)
        if v2_declared[0] != len(fields_v2):
            _fail(f"# / TYPES OF OBSERV declares {v2_declared[0]} types but lists {len(fields_v2)}",
                  path, v2_declared[1], lines)
        hdr["fields_v2"] = fields_v2
    else:
        if not fields:
            _fail("no 'SYS / # / OBS TYPES' line in the header", path, len(lines) - 1, lines)
        for letter, (count, line_index) in declared.items():
            if count != len(fields[letter]):
                # The types of this system are unknown: its records cannot be read, the others can.
                notes.append(((f"SYS / # / OBS TYPES for {letter} declares {count} types but lists "
                              f"{len(fields[letter])}; the satellites of {letter} cannot be read"),
                              line_index + 1))
                del fields[letter]
        if not fields:
            _fail("no readable 'SYS / # / OBS TYPES' line in the header", path, len(lines) - 1, lines)
        hdr["fields"] = fields

    if hdr["leap_seconds"] is not None and hdr["time_of_first_obs"] is not None:
        # Within a second or so of GPST whatever the file's scale: enough to pick the table's value.
        reason = check_leap_seconds(hdr["leap_seconds"], near_gpst=hdr["time_of_first_obs"])
        if reason:
            notes.append((f"{reason}; the built-in table is used", hdr.pop("leap_seconds_line")))
            hdr["leap_seconds"] = None
    hdr.pop("leap_seconds_line", None)
    word = hdr["file_time_scale"] or DEFAULT_TIME_SCALE.get(file_system, "GPS")
    if word not in FILE_TIME_SCALE:
        raise FileFormatError(f"unknown time system {word!r} in TIME OF FIRST OBS "
                              f"(known: {', '.join(FILE_TIME_SCALE)})", path)
    hdr["file_time_scale"] = word
    hdr["source_time_scale"] = (FILE_TIME_SCALE_V2 if int(version) == 2 else FILE_TIME_SCALE)[word]
    return hdr, body_offset


KNOWN_LABELS = frozenset((
    "RINEX VERSION / TYPE", "PGM / RUN BY / DATE", "COMMENT", "MARKER NAME", "MARKER NUMBER",
    "MARKER TYPE", "OBSERVER / AGENCY", "REC # / TYPE / VERS", "ANT # / TYPE", "APPROX POSITION XYZ",
    "ANTENNA: DELTA H/E/N", "ANTENNA: DELTA X/Y/Z", "ANTENNA: PHASECENTER", "ANTENNA: B.SIGHT XYZ",
    "ANTENNA: ZERODIR AZI", "ANTENNA: ZERODIR XYZ", "CENTER OF MASS: XYZ", "DOI", "LICENSE OF USE",
    "STATION INFORMATION", "SYS / # / OBS TYPES", "SIGNAL STRENGTH UNIT", "INTERVAL", "TIME OF FIRST OBS",
    "TIME OF LAST OBS", "RCV CLOCK OFFS APPL", "SYS / DCBS APPLIED", "SYS / PCVS APPLIED",
    "SYS / SCALE FACTOR", "SYS / PHASE SHIFT", "GLONASS SLOT / FRQ #", "GLONASS COD/PHS/BIS",
    "LEAP SECONDS", "# OF SATELLITES", "PRN / # OF OBS", "END OF HEADER", "WAVELENGTH FACT L1/2",
    "# / TYPES OF OBSERV", "DELTA-UTC: A0,A1,T,W", "ION ALPHA", "ION BETA", "CORR TO SYSTEM TIME"))


def _time_system_word(body: str, notes: list, line_number: int) -> str | None:
    """The time system of TIME OF FIRST OBS (columns 49-51), or None when blank (the default applies).

    A known word found a column or two away (a shifted line) is taken, with a note: the word
    is unambiguous.  An unknown word is returned as it is, and refused by the caller.
    """
    word = body[48:51].strip().upper()
    if word in FILE_TIME_SCALE:
        return word
    known = [t for t in body[43:60].upper().split() if t in FILE_TIME_SCALE]
    if len(known) == 1:
        notes.append(((f"TIME OF FIRST OBS: time system {known[0]} is not in columns 49-51; taken "
                      "from where it stands"), line_number))
        return known[0]
    return word or None


def _shifted_label(line: str) -> str | None:
    """A known label that sits a few columns away from 61-80 (a misaligned line), or None."""
    tail = line[50:].strip()
    for label in KNOWN_LABELS:
        if tail.endswith(label) or tail.startswith(label):
            return label
    return None


def _strict_int(text: str) -> int | None:
    """A right-aligned I-format integer (blanks, optional sign, digits only), or None."""
    t = text.strip()
    digits = t[1:] if t[:1] in "+-" else t
    return int(t) if digits.isdigit() and digits.isascii() else None


def _scale_factor(hdr, body, path, i, lines, last):
    """SYS / SCALE FACTOR (RINEX 3.05 table A2): A1, 1X, I4 factor, 2X, I2 count, 12(1X, A3);
    a continuation line (blank system) lists more types of the previous line's factor."""
    if body[0] == " ":
        if last is None:
            _fail("SYS / SCALE FACTOR continuation line before any system", path, i, lines)
        letter, factor = last
    else:
        letter = body[0].upper()
        factor = _strict_int(body[2:6])
        if factor not in (1, 10, 100, 1000):  # RINEX 3.05 table A2: 1, 10, 100 or 1000
            if letter not in "GRECJSI":
                _fail("SYS / SCALE FACTOR: neither system (column 1) nor factor (columns 3-6) "
                      "can be read", path, i, lines)
            hdr["notes"].append(((f"SYS / SCALE FACTOR of {letter}: factor {body[2:6].strip()!r} "
                                 "(columns 3-6) is not 1, 10, 100 or 1000; the observations of "
                                 f"system {letter} cannot be read without it"), i + 1))
            hdr["unscalable_systems"].add(letter)
            return letter, 1
    codes = body[10:60].split()
    per_sys = hdr["scale_factors"].setdefault(letter, {})
    for code in codes:
        per_sys[code] = factor
    if not codes and body[0] != " ":
        per_sys["*"] = factor  # no list: applies to all types of the system
    return letter, factor
