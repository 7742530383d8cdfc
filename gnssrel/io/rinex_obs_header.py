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

LABEL = slice(60, 80)

# RINEX 3.05 table A2 "TIME OF FIRST OBS": the scale names a file may use -> gnssrel's names.
# IRNSS time is aligned to GPST (IRNSS SIS ICD 1.1, 4.2.1; from memory).
FILE_TIME_SCALE = {"GPS": "GPST", "GAL": "GST", "GLO": "GLONASST", "BDT": "BDT",
                   "QZS": "QZSST", "IRN": "GPST"}

# RINEX 3.05 5.2.3: a file of one system writes its times in that system's scale;
# RINEX 2.11 table A1: GPS or mixed files default to GPS, pure GLONASS files to GLO.
DEFAULT_TIME_SCALE = {"G": "GPS", "R": "GLO", "E": "GAL", "C": "BDT", "J": "QZS",
                      "I": "IRN", "S": "GPS", "M": "GPS", " ": "GPS"}

SUPPORTED_MAJOR_VERSIONS = (2, 3, 4)


def _fail(message, path, index, lines):
    text = lines[index] if 0 <= index < len(lines) else None
    raise FileFormatError(message, path, index + 1, text)


def _floats(text: str, count: int, width: int = 14):
    """``count`` floats in fixed ``width`` columns; None when any is blank or not a number."""
    try:
        return [float(text[i * width:(i + 1) * width]) for i in range(count)]
    except ValueError:
        return None


def header_time(text: str) -> np.datetime64 | None:
    """TIME OF FIRST/LAST OBS: 5I6, F13.7 (RINEX 3.05 table A2), as datetime64[ns] on the file's scale."""
    try:
        year, month, day, hour, minute = (int(text[i * 6:(i + 1) * 6]) for i in range(5))
        seconds = float(text[30:43])
    except ValueError:
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
    ``header_lines`` (count).
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
                 "receiver_clock_offset_applied": None, "header_lines": len(lines)}
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
        elif label == "APPROX POSITION XYZ" and hdr["position"] is None:
            hdr["position"] = _floats(body, 3)
        elif label == "ANTENNA: DELTA H/E/N":
            hdr["antenna_delta_hen_m"] = _floats(body, 3)
        elif label == "INTERVAL":
            hdr["interval_s"] = _floats(body, 1, 10)[0] if _floats(body, 1, 10) else None
        elif label in ("TIME OF FIRST OBS", "TIME OF LAST OBS"):
            key = "time_of_first_obs" if "FIRST" in label else "time_of_last_obs"
            hdr[key] = header_time(body)
            if hdr[key] is None:
                _fail(f"{label}: expected 5I6,F13.7 date and time", path, i, lines)
            if key == "time_of_first_obs" and body[48:51].strip():
                hdr["file_time_scale"] = body[48:51].strip().upper()
        elif label == "LEAP SECONDS":
            try:
                hdr["leap_seconds"] = int(body[:6])
            except ValueError:
                _fail("LEAP SECONDS: expected an integer in columns 1-6", path, i, lines)
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
                _fail(f"SYS / # / OBS TYPES for {letter} declares {count} types but lists "
                      f"{len(fields[letter])}", path, line_index, lines)
        hdr["fields"] = fields

    word = hdr["file_time_scale"] or DEFAULT_TIME_SCALE.get(file_system, "GPS")
    if word not in FILE_TIME_SCALE:
        raise FileFormatError(f"unknown time system {word!r} in TIME OF FIRST OBS "
                              f"(known: {', '.join(FILE_TIME_SCALE)})", path)
    hdr["file_time_scale"] = word
    hdr["source_time_scale"] = FILE_TIME_SCALE[word]
    return hdr, body_offset


def _scale_factor(hdr, body, path, i, lines, last):
    """SYS / SCALE FACTOR (RINEX 3.05 table A2): A1, 1X, I4 factor, 2X, I2 count, 12(1X, A3);
    a continuation line (blank system) lists more types of the previous line's factor."""
    if body[0] == " ":
        if last is None:
            _fail("SYS / SCALE FACTOR continuation line before any system", path, i, lines)
        letter, factor = last
    else:
        letter = body[0].upper()
        try:
            factor = int(body[2:6])
        except ValueError:
            _fail("SYS / SCALE FACTOR: factor (columns 3-6) is not an integer", path, i, lines)
    codes = body[10:60].split()
    per_sys = hdr["scale_factors"].setdefault(letter, {})
    for code in codes:
        per_sys[code] = factor
    if not codes and body[0] != " ":
        per_sys["*"] = factor  # no list: applies to all types of the system
    return letter, factor
