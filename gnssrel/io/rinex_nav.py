"""Read RINEX navigation files (2.x, 3.0x, 4.00) into per-system ephemeris tables.

All records of one system are cut into one array of 19-character fields
(the column tables are in :mod:`gnssrel.io.rinex_nav_layout`) and converted
to numbers in one go; times are converted to GPST here, at the edge.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from gnssrel import timescales as ts
from gnssrel.constants import BEIDOU_GEO_PRNS
from gnssrel.errors import FileFormatError, GnssrelInputError
from gnssrel.io import rinex_nav_layout as lay
from gnssrel.io.opening import read_text

TABLE_SYSTEMS = "GECJR"
KNOWN_SYSTEMS = "GECJRSI"
_NS = ts.NS_PER_S
_HALF_WEEK_S = ts.SECONDS_PER_WEEK / 2


@dataclass
class NavigationData:
    """Broadcast ephemerides of one or more navigation files.

    ``ephemerides[letter]``: one pandas DataFrame per system present, one row
    per broadcast record, sorted by (``sv``, ``toc``), RangeIndex.  ``header``:
    dict of file-level values.  ``path``: the file read (the first one after
    :meth:`merge`).
    """

    ephemerides: dict[str, pd.DataFrame]
    header: dict
    path: Path | None = None

    @property
    def systems(self) -> str:
        """Letters of the systems with at least one record, in gnssrel order (GECJR)."""
        return "".join(s for s in TABLE_SYSTEMS if s in self.ephemerides and len(self.ephemerides[s]))

    @classmethod
    def merge(cls, items: list[NavigationData]) -> NavigationData:
        """Concatenate several files' tables, drop records that are exact duplicates
        (every column but ``line``), and sort again by (``sv``, ``toc``).

        The header is the first file's, with ``merged_from`` listing every path and
        ``skipped`` counts summed.
        """
        items = list(items)
        if not items:
            raise GnssrelInputError("NavigationData.merge needs at least one NavigationData")
        tables = {}
        for letter in TABLE_SYSTEMS:
            parts = [n.ephemerides[letter] for n in items if letter in n.ephemerides]
            if not parts:
                continue
            frame = pd.concat(parts, ignore_index=True)
            compare = [c for c in frame.columns if c != "line"]
            frame = frame.drop_duplicates(subset=compare, keep="first")
            tables[letter] = _sorted(frame)
        header = dict(items[0].header)
        header["merged_from"] = [str(n.path) for n in items]
        skipped: dict[str, int] = {}
        for n in items:
            for key, count in n.header.get("skipped", {}).items():
                skipped[key] = skipped.get(key, 0) + count
        header["skipped"] = skipped
        return cls(tables, header, items[0].path)


def read_navigation(path, systems=None) -> NavigationData:
    """Read a RINEX 2.x / 3.0x / 4.00 navigation file (plain or compressed).

    Parameters
    ----------
    path : the file; any compression :func:`gnssrel.io.opening.read_text` handles.
    systems : letters to keep, a string such as ``"GE"`` or an iterable of letters
        (G GPS, E Galileo, C BeiDou, J QZSS, R GLONASS); ``None`` keeps all.

    Returns
    -------
    NavigationData with

    * ``ephemerides[letter]``: a DataFrame per system present (keys among G E C J R),
      one row per record, sorted by (``sv``, ``toc``), RangeIndex.  Columns of every
      system: ``sv`` (``G05``), ``toc`` (datetime64[ns], GPST), ``clock_bias_s``,
      ``clock_drift_s_per_s``, ``clock_drift_rate_s_per_s2``, ``nav_type``
      (``LNAV``, ``INAV``, ``FNAV``, ``D1``, ``D2``, ``FDMA``), ``health`` (as in the
      file; 0 = healthy), ``line`` (1-based line of the record's epoch line).
      Keplerian systems (G E C J) add ``toe`` and ``transmission_time`` (GPST),
      ``week`` and ``toe_sow_s`` (system week and seconds as in the file), ``iode``
      (BeiDou AODE, Galileo IODnav), the orbit elements (``crs_m``,
      ``delta_n_rad_per_s``, ``mean_anomaly_rad``, ``cuc_rad``, ``eccentricity``,
      ``cus_rad``, ``sqrt_a_sqrt_m``, ``cic_rad``, ``omega0_rad``, ``cis_rad``,
      ``inclination_rad``, ``crc_m``, ``perigee_argument_rad``,
      ``omega_dot_rad_per_s``, ``idot_rad_per_s``), ``accuracy_m`` (GPS/QZSS SV
      accuracy, Galileo SISA, BeiDou URA, metres) and ``transmission_sow_s``;
      G/J: ``tgd_s``, ``iodc``, ``fit_interval_h``, ``l2_codes``, ``l2p_data_flag``
      (J also ``fit_interval_flag``); E: ``data_sources`` (int bits),
      ``bgd_e5a_e1_s``, ``bgd_e5b_e1_s``, ``clock_frequency_pair`` (``E1,E5a`` /
      ``E1,E5b``); C: ``tgd1_b1_b3_s``, ``tgd2_b2_b3_s``, ``aodc``, ``is_geo``.
      GLONASS (R): ``toc`` is t_b in GPST, ``clock_bias_s`` the file's -tau_n,
      ``relative_frequency_bias`` (+gamma_n, also given as ``clock_drift_s_per_s``;
      drift rate 0), ``message_frame_time_s``, ``x_m`` ... ``az_m_per_s2``
      (PZ-90, converted from km), ``frequency_channel``, ``age_days`` and, from
      RINEX 3.05 on, ``status_flags``, ``group_delay_l1_l2_s``, ``urai``,
      ``health_flags`` (NaN when absent).  Blank fields are NaN; the marker value
      0.999999999999E+09 is NaN in ``transmission_time`` and ``group_delay_l1_l2_s``.
    * ``header``: ``version`` (float), ``file_system`` (``M``, ``G``, ...),
      ``leap_seconds`` (int or None), ``ionosphere`` ({"GPSA": [4], "GPSB": [4],
      "GAL": [3], "BDSA": ...}; from RINEX 4 ION records when the header has none),
      ``time_corrections`` ({"GPUT": {"a0_s", "a1_s_per_s", "reference_sow_s",
      "reference_week"}, ...}), ``skipped`` ({"S SBAS": 2168, "EPH G CNAV": 3,
      "STO": 2, ...}: records this reader does not tabulate), ``n_records``.
    * ``path``: the file.

    Time rules: BeiDou epochs are BDT (GPST = BDT + 14 s), BDT weeks count from
    2006-01-01; GLONASS t_b is UTC (header LEAP SECONDS, else the built-in table);
    Galileo weeks in RINEX are aligned to GPS weeks (RINEX 3.04 Table A8);
    the week is made unambiguous near toc with
    :func:`gnssrel.timescales.resolve_week_rollover`.  ``transmission_time`` is
    (week, transmission_sow_s) shifted by one week when it lands more than half
    a week from toe (files give it relative to the toe week even when sent in
    the week before).

    Raises :class:`gnssrel.errors.FileFormatError` naming file and line for
    empty, truncated, garbled, non-navigation or unknown-version files.
    """
    path = Path(path)
    wanted = _wanted_systems(systems)
    lines = read_text(path).splitlines()
    header, first_body = lay.read_header(lines, path)
    version = header["version"]
    while lines and not lines[-1].strip():
        lines.pop()
    groups, skipped = _group_records(lines, first_body, header, path)
    if int(version) == 4:
        lay.ionosphere_from_records(lines, groups.pop("ION", []), header, path)
    header["skipped"] = skipped
    tables = {}
    for letter in TABLE_SYSTEMS:
        if letter not in wanted or not groups.get(letter):
            continue
        tables[letter] = _build_table(letter, groups[letter], lines, header, path)
    header["n_records"] = {s: len(t) for s, t in tables.items()}
    return NavigationData(tables, header, path)


def _wanted_systems(systems) -> str:
    if systems is None:
        return TABLE_SYSTEMS
    letters = "".join(systems).upper() if not isinstance(systems, str) else systems.upper()
    bad = sorted(set(letters) - set(KNOWN_SYSTEMS))
    if bad:
        raise GnssrelInputError(f"unknown system letter(s) {''.join(bad)!r}; use letters of "
                                f"{TABLE_SYSTEMS} (G GPS, E Galileo, C BeiDou, J QZSS, R GLONASS)")
    return letters


def _group_records(lines, first, header, path):
    """Cut the body into records: {letter: [(line index, n lines, nav type)]}, skipped counts."""
    version = header["version"]
    groups: dict[str, list] = {}
    skipped: dict[str, int] = {}
    n = len(lines)
    if int(version) == 4:
        starts = [i for i in range(first, n) if lines[i].startswith(">")]
        if first < n and (not starts or starts[0] != first):
            raise FileFormatError("expected a record marker '> EPH|STO|EOP|ION ...'", path,
                                  first + 1, lines[first])
        for k, i in enumerate(starts):
            stop = starts[k + 1] if k + 1 < len(starts) else n
            words = lines[i][1:].split()
            kind = words[0] if words else ""
            if kind == "ION" and len(words) >= 2:
                groups.setdefault("ION", []).append((i, stop - i, words[1][:1]))
                continue
            if kind in ("STO", "EOP", "ION"):
                skipped[kind] = skipped.get(kind, 0) + 1
                continue
            if kind != "EPH" or len(words) < 3:
                raise FileFormatError("record marker must read '> EPH Gnn TYPE' (or STO/EOP/ION)",
                                      path, i + 1, lines[i])
            letter, nav_type = words[1][:1], words[2]
            if (letter, nav_type) not in lay.RINEX4_TABLE_TYPES:
                key = f"EPH {letter} {nav_type}"
                skipped[key] = skipped.get(key, 0) + 1
                continue
            _check_length(letter, stop - i - 1, i + 1, lines, path)
            groups.setdefault(letter, []).append((i + 1, stop - i - 1, nav_type))
        return groups, skipped
    if int(version) == 2:
        file_letter = header["file_system"]
        starts = [i for i in range(first, n) if lines[i][:2].strip()]
    else:
        file_letter = None
        starts = [i for i in range(first, n) if lines[i][:1] not in (" ", "")]
    if first < n and (not starts or starts[0] != first):
        raise FileFormatError("expected a record's first line (satellite and epoch)", path,
                              first + 1, lines[first])
    for k, i in enumerate(starts):
        stop = starts[k + 1] if k + 1 < len(starts) else n
        letter = file_letter or lines[i][0]
        if letter not in lay.RECORD_LINES:
            raise FileFormatError(f"unknown satellite system letter {letter!r} at a record start",
                                  path, i + 1, lines[i])
        _check_length(letter, stop - i, i, lines, path)
        if letter in lay.RECORD_FIELDS:
            groups.setdefault(letter, []).append((i, stop - i, None))
        else:
            key = f"{letter} {'SBAS' if letter == 'S' else 'LNAV'}"
            skipped[key] = skipped.get(key, 0) + 1
    return groups, skipped


def _check_length(letter, count, start, lines, path):
    allowed = lay.RECORD_LINES.get(letter, (count,))
    if count in allowed:
        return
    if count < min(allowed):
        last = start + count - 1
        raise FileFormatError(f"truncated {letter} record: {count} of {min(allowed)} lines "
                              f"(record starts at line {start + 1})", path, last + 1,
                              lines[last] if 0 <= last < len(lines) else None)
    raise FileFormatError(f"{letter} record has {count} lines, expected "
                          f"{' or '.join(map(str, allowed))} (record starts at line {start + 1})",
                          path, start + max(allowed) + 1, lines[start + max(allowed)])


def _char_matrix(records, lines, n_lines):
    """(n_records, n_lines * 80) uint8 array of the records' text, lines padded to 80."""
    pad = " " * lay.LINE_WIDTH
    rows = []
    for start, count, _ in records:
        rows.extend(f"{ln:<80.80}" for ln in lines[start:start + count])
        rows.extend(pad for _ in range(n_lines - count))
    buf = "".join(rows).encode("ascii", "replace")
    return np.frombuffer(buf, dtype=np.uint8).reshape(len(records), n_lines * lay.LINE_WIDTH).copy()


def _field_columns(major, n_lines):
    first, other = lay.FIELD_STARTS[2 if major == 2 else 3]
    starts = list(first)
    for k in range(1, n_lines):
        starts.extend(k * lay.LINE_WIDTH + c for c in other)
    return np.asarray(starts)


def _convert(chars, starts, records, lines, path, width=lay.FIELD_WIDTH, kind=np.float64,
             right_aligned=False):
    """Convert the fields starting at ``starts`` (all records at once); blank -> NaN.

    ``right_aligned``: the fields are Fortran D19.12 (RINEX 3.05 A.2; 2.11 Table A4), which
    always end in their last column; a filled field ending early was cut (a truncated file).
    """
    cols = starts[:, None] + np.arange(width)
    block = np.ascontiguousarray(chars[:, cols])  # (n_rec, n_field, width)
    if right_aligned:
        cut = (block[..., -1] == 32) & (block != 32).any(axis=-1)
        if cut.any():
            r, f = (int(i[0]) for i in np.nonzero(cut))
            line_no = records[r][0] + int(starts[f]) // lay.LINE_WIDTH
            column = int(starts[f]) % lay.LINE_WIDTH + 1
            raise FileFormatError(f"number in columns {column}-{column + width - 1} ends early "
                                  f"(truncated line or misaligned field)", path, line_no + 1,
                                  lines[line_no] if line_no < len(lines) else None)
    block[(block == 68) | (block == 100)] = 69  # Fortran 'D'/'d' exponent -> 'E'
    blank = (block == 32).all(axis=-1)
    block[blank, width - 1] = 48  # '0', masked below
    text = block.reshape(-1).view(f"S{width}").reshape(blank.shape)
    try:
        values = text.astype(kind)
    except ValueError:
        _raise_garbled(text, starts, records, lines, path, kind)
    if kind is np.float64:
        values[blank] = np.nan
    return values, blank


def _raise_garbled(text, starts, records, lines, path, kind):
    for r in range(text.shape[0]):
        for f in range(text.shape[1]):
            try:
                kind(text[r, f].decode("ascii", "replace"))
            except ValueError:
                line_no = records[r][0] + int(starts[f]) // lay.LINE_WIDTH
                column = int(starts[f]) % lay.LINE_WIDTH + 1
                raise FileFormatError(
                    f"garbled number {text[r, f].decode('ascii', 'replace').strip()!r} in "
                    f"columns {column}-{column + text.dtype.itemsize - 1} (expected a "
                    f"D19.12 number)", path, line_no + 1, lines[line_no]) from None
    first = records[0][0]
    raise FileFormatError("unreadable number in a record", path, first + 1, lines[first])


def _epochs(chars, major, records, lines, path):
    cols = lay.EPOCH_COLUMNS[2 if major == 2 else 3]

    def ints(name):
        a, b = cols[name]
        v, blank = _convert(chars, np.array([a]), records, lines, path, b - a, np.int64)
        if blank.any():
            r = int(np.flatnonzero(blank[:, 0])[0])
            raise FileFormatError(f"blank {name} in the epoch (columns {a + 1}-{b})", path,
                                  records[r][0] + 1, lines[records[r][0]])
        return v[:, 0]

    year, month, day = ints("year"), ints("month"), ints("day")
    hour, minute = ints("hour"), ints("minute")
    a, b = cols["second"]
    sec, _blank = _convert(chars, np.array([a]), records, lines, path, b - a)
    sec = sec[:, 0]
    if major == 2:
        year = np.where(year < 80, year + 2000, year + 1900)  # RINEX 2.11 6.4: 80-99 -> 19xx
    bad = (month < 1) | (month > 12) | (day < 1) | (day > 31) | (hour > 23) | (minute > 59) \
        | ~(sec >= 0) | (sec > 60.0)
    if bad.any():
        r = int(np.flatnonzero(bad)[0])
        raise FileFormatError("impossible epoch (month, day, hour, minute or second out of "
                              "range)", path, records[r][0] + 1, lines[records[r][0]])
    months = ((year - 1970) * 12 + month - 1).astype("datetime64[M]")
    days = months.astype("datetime64[D]") + (day - 1).astype("timedelta64[D]")
    ns = (hour * 3600 + minute * 60) * _NS + np.round(sec * _NS).astype(np.int64)
    return days.astype("datetime64[ns]") + ns.astype("timedelta64[ns]")


def _sv_names(chars, major, letter):
    if major == 2:
        prn = chars[:, 0:2].copy()
        prn[prn == 32] = 48
        return np.char.add(letter, prn.reshape(-1).view("S2").astype(str))
    sv = chars[:, 0:3].copy()
    sv[sv == 32] = 48  # "G 7" -> "G07"
    return sv.reshape(-1).view("S3").astype(str)


def _build_table(letter, records, lines, header, path):
    major = int(header["version"])
    n_lines = max(lay.RECORD_LINES[letter])
    chars = _char_matrix(records, lines, n_lines)
    layout = lay.RECORD_FIELDS[letter][:n_lines]
    names = [name for row in layout for name in row]
    starts = _field_columns(major, n_lines)
    keep = [k for k, name in enumerate(names) if name is not None]
    values, blank = _convert(chars, starts[keep], records, lines, path, right_aligned=True)
    cols = {}
    for j, k in enumerate(keep):
        name = names[k]
        cols[name] = values[:, j] * (1000.0 if name in lay.KILOMETRE_FIELDS else 1.0)
        if name in lay.INTEGER_FIELDS.get(letter, ()):
            if blank[:, j].any():
                r = int(np.flatnonzero(blank[:, j])[0])
                line_no = records[r][0] + int(starts[k]) // lay.LINE_WIDTH
                raise FileFormatError(f"blank {name} field in a {letter} record", path,
                                      line_no + 1, lines[line_no])
            cols[name] = np.round(cols[name]).astype(np.int64)
    sv = _sv_names(chars, major, letter)
    toc_file = _epochs(chars, major, records, lines, path)
    frame = {"sv": sv}
    if letter == "R":
        frame.update(_glonass_columns(cols, toc_file, header))
    else:
        frame.update(_kepler_columns(letter, cols, toc_file, sv, records))
    frame["line"] = np.array([r[0] + 1 for r in records], dtype=np.int64)
    return _sorted(pd.DataFrame(frame))


def _glonass_columns(cols, toc_utc, header):
    out = {"toc": ts.to_gpst(toc_utc, "UTC", header.get("leap_seconds"))}  # RINEX 3.04 A11: UTC
    out["clock_bias_s"] = cols.pop("clock_bias_s")
    out["clock_drift_s_per_s"] = cols["relative_frequency_bias"]
    out["clock_drift_rate_s_per_s2"] = np.zeros_like(out["clock_bias_s"])
    out["nav_type"] = np.full(len(out["toc"]), "FDMA", dtype=object)
    delay = cols["group_delay_l1_l2_s"]
    cols["group_delay_l1_l2_s"] = np.where(np.abs(delay) >= lay.UNKNOWN_VALUE_THRESHOLD, np.nan, delay)
    out.update(cols)
    return out


def _kepler_columns(letter, cols, toc_file, sv, records):
    scale = "BDT" if letter == "C" else "GPST"  # Galileo weeks are GPS-aligned in RINEX
    toc = ts.to_gpst(toc_file, "BDT") if letter == "C" else toc_file
    modulus = 8192 if letter == "C" else 1024
    week = ts.resolve_week_rollover(cols["week"], toc, modulus=modulus, scale=scale)
    toe = ts.from_week_seconds(week, cols["toe_sow_s"], scale)
    tx_sow = cols["transmission_sow_s"]
    unknown = ~np.isfinite(tx_sow) | (np.abs(tx_sow) >= lay.UNKNOWN_VALUE_THRESHOLD)
    tx = ts.from_week_seconds(week, np.where(unknown, 0.0, tx_sow), scale)
    gap_s = ts.seconds_between(tx, toe)
    shift = np.where(gap_s > _HALF_WEEK_S, -1, np.where(gap_s < -_HALF_WEEK_S, 1, 0))
    tx = tx + (shift * ts.SECONDS_PER_WEEK * _NS).astype("timedelta64[ns]")
    tx[unknown] = np.datetime64("NaT")
    prn = np.array([int(s[1:]) for s in sv], dtype=np.int64)
    given = [r[2] for r in records]
    if letter == "E":
        bits = cols["data_sources"]
        derived = np.where(bits & 0b010, "FNAV", np.where(bits & 0b101, "INAV", "UNKNOWN"))
        cols["clock_frequency_pair"] = np.where(bits & 0x100, "E1,E5a",
                                                np.where(bits & 0x200, "E1,E5b", ""))
    elif letter == "C":
        is_geo = np.isin(prn, list(BEIDOU_GEO_PRNS))
        derived = np.where(is_geo, "D2", "D1")
        cols["is_geo"] = is_geo
    else:
        derived = np.full(len(sv), "LNAV")
    if letter == "J":
        # QZSS fit-interval flag 0 = 2 hours (IS-QZSS-PNT, from memory); 1 = longer, unknown.
        flag = cols["fit_interval_flag"]
        cols["fit_interval_h"] = np.where(flag == 0, 2.0, np.nan)
    nav_type = np.array([g if g else d for g, d in zip(given, derived)], dtype=object)
    out = {"toc": toc, "toe": toe, "transmission_time": tx}
    for name in ("clock_bias_s", "clock_drift_s_per_s", "clock_drift_rate_s_per_s2"):
        out[name] = cols.pop(name)
    out["nav_type"] = nav_type
    out.update(cols)
    return out


def _sorted(frame: pd.DataFrame) -> pd.DataFrame:
    return frame.sort_values(["sv", "toc"], kind="stable").reset_index(drop=True)
