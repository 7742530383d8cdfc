"""Declared column tables of RINEX navigation files (2.x, 3.0x, 4.00), and the header reader.

A record is an epoch line (satellite, time of clock, three clock fields) and
continuation lines of four fixed-width numeric fields each (format D19.12).
The tables below name every field slot in reading order (``None`` = spare);
:mod:`gnssrel.io.rinex_nav` cuts all records of a system into one array of
19-character fields and converts them at once.

Sources: RINEX 3.04/3.05 (IGS/RTCM, Tables A6-A14), RINEX 2.11 (Tables A4, A11),
RINEX 2.12 (Galileo, Table A16), RINEX 4.00 (section 5 and Tables A5-A35).
"""

from __future__ import annotations

import math
import re

from gnssrel.errors import FileFormatError
from gnssrel.io import rinex_nav_messages as msgs

FIELD_WIDTH = 19
LINE_WIDTH = 80

# First column of the numeric fields.  RINEX 3/4: epoch line "Gnn yyyy mm dd hh mm ss"
# (A1,I2.2,1X,I4,5(1X,I2.2)) then 3D19.12 from column 23; continuation 4X,4D19.12.
# RINEX 2: "nn yy mm dd hh mm ss.s" (I2,5I3,F5.1) then 3D19.12 from column 22; 3X,4D19.12.
FIELD_STARTS = {
    3: ((23, 42, 61), (4, 23, 42, 61)),
    2: ((22, 41, 60), (3, 22, 41, 60)),
}

# Epoch columns (start, stop) on the first line.
EPOCH_COLUMNS = {
    3: {"sv": (0, 3), "year": (4, 8), "month": (9, 11), "day": (12, 14),
        "hour": (15, 17), "minute": (18, 20), "second": (21, 23)},
    2: {"prn": (0, 2), "year": (2, 5), "month": (5, 8), "day": (8, 11),
        "hour": (11, 14), "minute": (14, 17), "second": (17, 22)},
}

# Keplerian systems share lines 0-4 (RINEX 3.04 Tables A6 (GPS), A8 (Galileo),
# A10 (QZSS), A12 (BeiDou)).
_KEPLER_HEAD = (
    ("clock_bias_s", "clock_drift_s_per_s", "clock_drift_rate_s_per_s2"),
    ("iode", "crs_m", "delta_n_rad_per_s", "mean_anomaly_rad"),
    ("cuc_rad", "eccentricity", "cus_rad", "sqrt_a_sqrt_m"),
    ("toe_sow_s", "cic_rad", "omega0_rad", "cis_rad"),
    ("inclination_rad", "crc_m", "perigee_argument_rad", "omega_dot_rad_per_s"),
)

RECORD_FIELDS = {
    # GPS LNAV (RINEX 3.04 Table A6; RINEX 2.11 Table A4).
    "G": _KEPLER_HEAD + (
        ("idot_rad_per_s", "l2_codes", "week", "l2p_data_flag"),
        ("accuracy_m", "health", "tgd_s", "iodc"),
        ("transmission_sow_s", "fit_interval_h", None, None),
    ),
    # QZSS LNAV (RINEX 3.04 Table A10): like GPS, the last field is a fit-interval flag.
    "J": _KEPLER_HEAD + (
        ("idot_rad_per_s", "l2_codes", "week", "l2p_data_flag"),
        ("accuracy_m", "health", "tgd_s", "iodc"),
        ("transmission_sow_s", "fit_interval_flag", None, None),
    ),
    # Galileo I/NAV or F/NAV (RINEX 3.04 Table A8; RINEX 2.12 Table A16).
    "E": _KEPLER_HEAD + (
        ("idot_rad_per_s", "data_sources", "week", None),
        ("accuracy_m", "health", "bgd_e5a_e1_s", "bgd_e5b_e1_s"),
        ("transmission_sow_s", None, None, None),
    ),
    # BeiDou D1/D2 (RINEX 3.04 Table A12): AODE in the IODE slot.
    "C": _KEPLER_HEAD + (
        ("idot_rad_per_s", None, "week", None),
        ("accuracy_m", "health", "tgd1_b1_b3_s", "tgd2_b2_b3_s"),
        ("transmission_sow_s", "aodc", None, None),
    ),
    # GLONASS FDMA (RINEX 3.04 Table A11; 3.05/4.00 add the fifth line).
    "R": (
        ("clock_bias_s", "relative_frequency_bias", "message_frame_time_s"),
        ("x_m", "vx_m_per_s", "ax_m_per_s2", "health"),
        ("y_m", "vy_m_per_s", "ay_m_per_s2", "frequency_channel"),
        ("z_m", "vz_m_per_s", "az_m_per_s2", "age_days"),
        ("status_flags", "group_delay_l1_l2_s", "urai", "health_flags"),
    ),
    # NavIC LNAV and SBAS (RINEX 3.04 / 4.00; layouts in rinex_nav_messages).
    "I": msgs.NAVIC_FIELDS,
    "S": msgs.SBAS_FIELDS,
}

# Lines a record of each system may have (the epoch line included).
RECORD_LINES = {"G": (8,), "J": (8,), "E": (8,), "C": (8,), "R": (4, 5), "S": (4,), "I": (8,)}


def record_lines(version):
    """Lines per record of each system in a file of ``version``: GLONASS records have
    4 lines before RINEX 3.05 and 5 from 3.05 on (Table A11 adds BROADCAST ORBIT - 4).
    Exact counts matter: a deleted line in a 5-line record must not pass as a 4-line one
    (its fields would be read one line off)."""
    out = dict(RECORD_LINES)
    out["R"] = (5,) if version >= 3.05 - 1e-9 else (4,)
    return out

# GLONASS positions, velocities and accelerations are in km, km/s, km/s^2 in the file.
KILOMETRE_FIELDS = frozenset(("x_m", "y_m", "z_m", "vx_m_per_s", "vy_m_per_s", "vz_m_per_s",
                              "ax_m_per_s2", "ay_m_per_s2", "az_m_per_s2"))

# Fields that must hold an integer (refused when blank: without them the record is unusable).
INTEGER_FIELDS = {"G": ("week",), "J": ("week",), "E": ("week", "data_sources"),
                  "C": ("week",), "R": ("frequency_channel",), "I": ("week",)}


def layout_of(letter, message=None):
    """(fields by line, integer fields) of a record of ``letter`` and RINEX 4 message type
    ``message`` (None: the system's legacy record, also in RINEX 2/3)."""
    key = (letter, message)
    if key in msgs.MESSAGE_FIELDS:
        return msgs.MESSAGE_FIELDS[key], ()
    return RECORD_FIELDS[letter], INTEGER_FIELDS.get(letter, ())


def lines_of(letter, message, allowed):
    """Numbers of lines a RINEX 4 record of this letter and message type may have."""
    fields = msgs.MESSAGE_FIELDS.get((letter, message))
    return (len(fields),) if fields else allowed[letter]

# RINEX 2 file type letter (column 21 of the first line) -> system letter.
RINEX2_FILE_SYSTEM = {"N": "G", "G": "R", "E": "E", "H": "S", "J": "J"}

# RINEX 4.00 EPH message types read into tables (others are counted in header["skipped"]).
RINEX4_TABLE_TYPES = {("G", "LNAV"), ("J", "LNAV"), ("E", "INAV"), ("E", "FNAV"),
                      ("C", "D1"), ("C", "D2"), ("R", "FDMA"), ("I", "LNAV"), ("S", "SBAS")} \
    | set(msgs.MESSAGE_FIELDS)

# Klobuchar / NeQuick-G coefficient names of RINEX 4 ION records (RINEX 4.00 Tables A32-A34)
# mapped to the RINEX 3 header codes.
RINEX4_ION_CODES = {"G": ("GPSA", "GPSB"), "J": ("QZSA", "QZSB"), "C": ("BDSA", "BDSB"),
                    "I": ("IRNA", "IRNB"), "E": ("GAL",)}

# Unknown-value marker written in several fields (e.g. 0.999999999999E+09).
UNKNOWN_VALUE_THRESHOLD = 9.0e8


# ---------------------------------------------------------------- header
# Header lines: label in columns 61-80 (RINEX 3.04 Table A5, RINEX 2.11 Table A3).
LABEL_COLUMNS = (60, 80)
# "IONOSPHERIC CORR": A4,1X,4D12.4 (RINEX 3.04 Table A5).
IONO3_COLUMNS = ((5, 17), (17, 29), (29, 41), (41, 53))
# "ION ALPHA" / "ION BETA": 2X,4D12.4 (RINEX 2.11 Table A3).
IONO2_COLUMNS = ((2, 14), (14, 26), (26, 38), (38, 50))
# "TIME SYSTEM CORR": A4,1X,D17.10,D16.9,I7,I5 (RINEX 3.04 Table A5).
TIME_CORR3_COLUMNS = {"a0_s": (5, 22), "a1_s_per_s": (22, 38), "reference_sow_s": (38, 45),
                      "reference_week": (45, 50)}
# "DELTA-UTC: A0,A1,T,W": 3X,2D19.12,2I9 (RINEX 2.11 Table A3).
TIME_CORR2_COLUMNS = {"a0_s": (3, 22), "a1_s_per_s": (22, 41), "reference_sow_s": (41, 50),
                      "reference_week": (50, 59)}
SUPPORTED_VERSIONS = ((2.0, 2.12), (3.0, 3.05), (4.0, 4.02))


_STRICT_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)(E[+-]?\d+)?$")


def _number(text, path, line_no, line, what):
    text = text.strip().replace("D", "E").replace("d", "E").replace("e", "E")
    if not text:
        return None
    if not _STRICT_NUMBER.match(text):  # Python's float() takes "1_0", "nan", "inf": refused
        raise FileFormatError(f"garbled number {text!r} in {what}", path, line_no, line)
    value = float(text)
    if not math.isfinite(value):        # "1E400" overflows to inf: no value of any header field
        raise FileFormatError(f"number {text!r} beyond any value in {what}", path, line_no, line)
    return value


def read_header(lines, path, warn=None):
    """Header values of a navigation file and the index of its first body line.

    ``warn(message, line)`` receives the problems of optional lines (a garbled
    IONOSPHERIC CORR, TIME SYSTEM CORR or LEAP SECONDS): such a line is skipped, the
    rest of the file is read.  A LEAP SECONDS value that cannot be true (negative,
    or far above the built-in table, :func:`gnssrel.timescales.check_leap_seconds`)
    is refused with a warning and ``header["leap_seconds"]`` stays None (the table
    is used).  Raises FileFormatError when the file is not a readable navigation
    header (first line, version, kind, no END OF HEADER).
    """
    from gnssrel.timescales import check_leap_seconds

    warn = warn or (lambda message, line: None)
    if not any(ln.strip() for ln in lines):
        raise FileFormatError("empty file: expected a RINEX navigation header", path, 1)
    first = lines[0]
    if first[60:80].strip() != "RINEX VERSION / TYPE" and "RINEX VERSION / TYPE" in first:
        raise FileFormatError("not a navigation file (its header label is not in columns 61-80, "
                              "as in RINEX clock 3.04 files)", path, 1, first)
    if first[60:80].strip() != "RINEX VERSION / TYPE":
        raise FileFormatError("not a RINEX file: line 1 must be labelled 'RINEX VERSION / TYPE' "
                              "in columns 61-80", path, 1, first)
    version = _number(first[0:9], path, 1, first, "RINEX VERSION / TYPE (columns 1-9)")
    if version is None or not any(lo - 1e-9 <= version <= hi + 1e-9 for lo, hi in SUPPORTED_VERSIONS):
        raise FileFormatError(f"unknown RINEX version {first[0:9].strip()!r} (this reader knows "
                              f"2.00-2.12, 3.00-3.05, 4.00-4.02)", path, 1, first)
    kind = first[20:21]
    if int(version) == 2:
        if kind not in RINEX2_FILE_SYSTEM:
            raise FileFormatError(f"not a navigation file (RINEX 2 file type {kind!r} in column 21; "
                                  f"expected N, G, E or H)", path, 1, first)
        file_system = RINEX2_FILE_SYSTEM[kind]
    else:
        if kind != "N":
            raise FileFormatError(f"not a navigation file (file type {kind!r} in column 21; "
                                  f"expected N)", path, 1, first)
        file_system = first[40:41].strip() or "M"
    header = {"version": version, "file_system": file_system, "leap_seconds": None,
              "ionosphere": {}, "time_corrections": {}}
    for i in range(1, len(lines)):
        line = lines[i]
        label = line[60:80].strip()
        if label == "END OF HEADER":
            return header, i + 1
        try:
            _header_line(header, label, line, i, path, file_system, check_leap_seconds, warn)
        except FileFormatError as err:
            warn(f"{err.message}; header line skipped", i + 1)
    raise FileFormatError("no END OF HEADER line (file truncated or not RINEX)", path,
                          len(lines), lines[-1])


def _header_line(header, label, line, i, path, file_system, check_leap_seconds, warn):
    if label == "LEAP SECONDS" and line[0:6].strip():
        value = _number(line[0:6], path, i + 1, line, "LEAP SECONDS (columns 1-6)")
        if value != int(value):
            raise FileFormatError(f"LEAP SECONDS {value} is not a whole number", path, i + 1, line)
        problem = check_leap_seconds(int(value))
        if problem:
            warn(f"{problem}: refused, the built-in leap-second table is used", i + 1)
            header["leap_seconds_refused"] = int(value)
            return
        header["leap_seconds"] = int(value)
        header["leap_seconds_line"] = i + 1
    elif label == "IONOSPHERIC CORR":
        code = line[0:4].strip()
        values = [_number(line[a:b], path, i + 1, line, f"IONOSPHERIC CORR (columns {a + 1}-{b})")
                  for a, b in IONO3_COLUMNS]
        values = [v for v in values if v is not None][:3 if code == "GAL" else 4]
        header["ionosphere"].setdefault(code, values)
    elif label in ("ION ALPHA", "ION BETA"):
        values = [_number(line[a:b], path, i + 1, line, f"{label} (columns {a + 1}-{b})")
                  for a, b in IONO2_COLUMNS]
        values = [v for v in values if v is not None]
        code = "GAL" if file_system == "E" else ("GPSA" if label == "ION ALPHA" else "GPSB")
        header["ionosphere"].setdefault(code, values[:3] if code == "GAL" else values)
    elif label in ("TIME SYSTEM CORR", "DELTA-UTC: A0,A1,T,W"):
        table = TIME_CORR3_COLUMNS if label == "TIME SYSTEM CORR" else TIME_CORR2_COLUMNS
        code = line[0:4].strip() if label == "TIME SYSTEM CORR" else \
            {"G": "GPUT", "E": "GAUT"}.get(file_system, "UTC")
        entry = {key: _number(line[a:b], path, i + 1, line, f"{label} (columns {a + 1}-{b})")
                 for key, (a, b) in table.items()}
        header["time_corrections"].setdefault(code, entry)
    elif label == "CORR TO SYSTEM TIME":  # RINEX 2.11 GLONASS: -tau_c (Table A10)
        value = _number(line[21:40], path, i + 1, line, "CORR TO SYSTEM TIME (columns 22-40)")
        header["time_corrections"].setdefault("GLUT", {"a0_s": value})


# RINEX 4.00 ION records (section 5.5, from memory): the message type says which model the
# numbers belong to.  Klobuchar: GPS/QZSS LNAV and CNAV (CNVX), BeiDou D1/D2 (D1D2), NavIC
# LNAV; NeQuick-G: Galileo I/NAV-F/NAV (IFNV); BDGIM: BeiDou CNVX (nine coefficients alpha1-9,
# BDS-SIS-ICD-B1C 1.0, 7.x, from memory), kept in the header, not used yet.
ION_MODELS = {("G", "LNAV"): "klobuchar", ("G", "CNVX"): "klobuchar",
              ("J", "LNAV"): "klobuchar", ("J", "CNVX"): "klobuchar",
              ("C", "D1D2"): "klobuchar", ("I", "LNAV"): "klobuchar",
              ("E", "IFNV"): "nequick_g", ("C", "CNVX"): "bdgim"}


def ionosphere_from_records(lines, records, header, path):
    """Read RINEX 4 ION records into the header.

    ``records``: [(marker line index, n lines, system letter, message type)].
    RINEX 4.00 5.5: the epoch line (4X, epoch, 3D19.12) then 4X,4D19.12 lines; Klobuchar
    alpha0-3, beta0-3, region; NeQuick-G ai0-ai2, disturbance flags; BDGIM alpha1-9.
    Every readable record is kept in ``header["ionosphere_records"]`` (``line``, ``marker``,
    ``system``, ``message``, ``model``, ``epoch``, ``values``); the first of each (system,
    message type) in ``header["ionosphere_models"]["<letter> <type>"]``, and the first
    Klobuchar/NeQuick-G of a system fills ``header["ionosphere"]`` (GPSA/GPSB, QZSA/QZSB,
    BDSA/BDSB, IRNA/IRNB, GAL) where the header gave none.
    Returns [(system, outcome, line, warning or None)] for the accounting: ``used``
    (kept), ``not read: ION <letter> <type>`` (a type RINEX 4.00 does not define),
    ``not read: empty ION record`` (a marker without lines), ``damaged`` (garbled number,
    too few values).
    """
    found = header.setdefault("ionosphere_records", [])
    models = header.setdefault("ionosphere_models", {})
    outcomes = []
    for start, count, letter, msg in records:
        model = ION_MODELS.get((letter, msg))
        system = "-"  # ION records belong to no satellite's table (counted apart, like STO/EOP)
        if model is None:
            outcomes.append((system, f"not read: ION {letter} {msg}", start + 1, None))
            continue
        if count <= 1:
            outcomes.append((system, "not read: empty ION record", start + 1, None))
            continue
        try:
            values = msgs.values_of(lines, start, count, lambda text, i, line, what: _number(
                text, path, i + 1, line, f"ION record ({what})"))
        except FileFormatError as err:
            outcomes.append((system, "damaged", start + 1, err.message))
            continue
        need = msgs.ION_COEFFICIENTS[model]
        if not msgs.finite(values, need):
            outcomes.append((system, "damaged", start + 1,
                             f"ION {letter} {msg} record: {need} finite coefficients expected"))
            continue
        entry = {"line": start + 1, "marker": lines[start].strip(), "system": letter, "message": msg,
                 "model": model, "epoch": msgs.epoch_of(lines[start + 1]), "values": values}
        found.append(entry)
        models.setdefault(f"{letter} {msg}", entry)
        codes = RINEX4_ION_CODES.get(letter, ())
        if model == "klobuchar" and codes[0] not in header["ionosphere"]:
            header["ionosphere"][codes[0]] = values[0:4]
            header["ionosphere"][codes[1]] = values[4:8]
        elif model == "nequick_g" and codes[0] not in header["ionosphere"]:
            header["ionosphere"][codes[0]] = values[0:3]
        outcomes.append((system, "used", start + 1, None))
    return outcomes
