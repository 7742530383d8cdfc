"""Read RINEX navigation files (2.x, 3.0x, 4.00) into per-system ephemeris tables.

The body is cut into records (:mod:`gnssrel.io.rinex_nav_records`); all records
of one system are read at once from declared column tables
(:mod:`gnssrel.io.rinex_nav_tables`, :mod:`gnssrel.io.rinex_nav_layout`); times
are converted to GPST here, at the edge.  Every record is accounted for in
``NavigationData.accounting``: tabulated, or left out with a counted reason.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from gnssrel import timescales as ts
from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError, GnssrelInputError
from gnssrel.io import rinex_nav_checks as checks
from gnssrel.io import rinex_nav_header4 as header4
from gnssrel.io import rinex_nav_layout as lay
from gnssrel.io import rinex_nav_messages as msgs
from gnssrel.io import rinex_nav_records as rec
from gnssrel.io.opening import read_text
from gnssrel.io.rinex_nav_tables import build_table, sorted_table

log = logging.getLogger(__name__)

TABLE_SYSTEMS = "GECJRIS"
KNOWN_SYSTEMS = "GECJRIS"
ITEM = rec.ITEM
FAR_FROM_BULK = "refused: epoch far from the file's other records"
DUPLICATE = "duplicate of another file's record"
_LOGGED_WARNINGS = 5
_MERGED_KEYS = (("ionosphere", "ionosphere_sources"), ("time_corrections", "time_correction_sources"))


@dataclass
class NavigationData:
    """Broadcast ephemerides of one or more navigation files.

    ``ephemerides[letter]``: one pandas DataFrame per system present, one row
    per broadcast record, sorted by (``sv``, ``toc``), RangeIndex.  ``header``:
    dict of file-level values.  ``path``: the file read (the first one after
    :meth:`merge`).  ``accounting``: the :class:`~gnssrel.accounting.Ledger` of the
    records read (item ``navigation_records``).
    """

    ephemerides: dict[str, pd.DataFrame]
    header: dict
    path: Path | None = None
    accounting: Ledger = field(default_factory=Ledger)

    @property
    def systems(self) -> str:
        """Letters of the systems with at least one record, in gnssrel order (GECJRIS)."""
        return "".join(s for s in TABLE_SYSTEMS if s in self.ephemerides and len(self.ephemerides[s]))

    @classmethod
    def merge(cls, items: list[NavigationData]) -> NavigationData:
        """Concatenate several files' tables, drop records that are exact duplicates
        (every column but ``line``), and sort again by (``sv``, ``toc``).

        Header: the first file's, with the ionosphere coefficients, time corrections
        and leap seconds of every file (the first file that gives a value wins; a
        later file giving another value is warned about); ``ionosphere_sources``,
        ``time_correction_sources`` and ``leap_seconds_source`` name the file each
        came from, ``merged_from`` lists every path, ``skipped`` counts are summed.
        The ledgers are merged; duplicates are moved from "used" to
        "duplicate of another file's record".
        """
        items = list(items)
        if not items:
            raise GnssrelInputError("NavigationData.merge needs at least one NavigationData")
        ledger = Ledger()
        for n in items:
            ledger.merge(n.accounting)
        tables = {}
        for letter in TABLE_SYSTEMS:
            parts = [n.ephemerides[letter] for n in items if letter in n.ephemerides]
            if not parts:
                continue
            frame = pd.concat(parts, ignore_index=True)
            compare = [c for c in frame.columns if c != "line"]
            # records of equal sv and toc from several files: one order whatever the order of the files
            frame = _content_order(frame, compare).drop_duplicates(subset=compare, keep="first")
            duplicates = sum(len(p) for p in parts) - len(frame)
            duplicates = min(duplicates, ledger.count(ITEM, letter, "used"))
            if duplicates > 0:
                ledger.retire(ITEM, letter, DUPLICATE, duplicates)
            tables[letter] = sorted_table(frame)
        header = _merged_header(items, ledger)
        return cls(tables, header, items[0].path, ledger)


def _content_order(frame: pd.DataFrame, columns: list[str]) -> pd.DataFrame:
    """The rows sorted by their content (every column of ``columns``), so that a merge does not
    depend on the order of its files; object columns of mixed types are ordered by their text."""
    try:
        return frame.sort_values(columns, kind="stable")
    except TypeError:
        text = frame[columns].astype(str).agg("\x1f".join, axis=1).to_numpy()
        return frame.iloc[np.argsort(text, kind="stable")]


def _merged_header(items, ledger):
    header = dict(items[0].header)
    for key, source_key in _MERGED_KEYS:
        values, sources = {}, {}
        for n in items:
            name = Path(str(n.path)).name
            for code, value in n.header.get(key, {}).items():
                if code not in values:
                    values[code], sources[code] = value, name
                elif value != values[code]:
                    ledger.warn(f"{key.replace('_', ' ')} {code} differs from the one in "
                                f"{sources[code]} ({value} against {values[code]}); the one of "
                                f"{sources[code]} is used", n.path)
        header[key], header[source_key] = values, sources
    header["leap_seconds"], header["leap_seconds_source"] = None, None
    for n in items:
        value = n.header.get("leap_seconds")
        if value is None:
            continue
        if header["leap_seconds"] is None:
            header["leap_seconds"], header["leap_seconds_source"] = value, Path(str(n.path)).name
        elif value != header["leap_seconds"]:
            ledger.warn(f"LEAP SECONDS {value} differs from {header['leap_seconds']} in "
                        f"{header['leap_seconds_source']}; that one is used", n.path)
    header["merged_from"] = [str(n.path) for n in items]
    skipped: dict[str, int] = {}
    for n in items:
        for key, count in n.header.get("skipped", {}).items():
            skipped[key] = skipped.get(key, 0) + count
    header["skipped"] = skipped
    return header


def read_navigation(path, systems=None) -> NavigationData:
    """Read a RINEX 2.x / 3.0x / 4.00 navigation file (plain or compressed).

    Parameters
    ----------
    path : the file; any compression :func:`gnssrel.io.opening.read_text` handles.
    systems : letters to keep, a string such as ``"GE"`` or an iterable of letters
        (G GPS, E Galileo, C BeiDou, J QZSS, R GLONASS, I NavIC, S SBAS); ``None`` keeps all.

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
      RINEX 4 CNAV-type records (``nav_type`` ``CNAV``, ``CNV2`` for G/J, ``CNV1``,
      ``CNV2`` for C; layouts in :mod:`gnssrel.io.rinex_nav_messages`) share the Keplerian
      columns (``sqrt_a_sqrt_m`` = sqrt(A_ref + Delta A), ``omega_dot_rad_per_s`` the full
      rate) and add ``a_dot_m_per_s``, ``delta_n_dot_rad_per_s2``, ``prediction_sow_s``
      (t_op); their toe is the epoch for G/J (t_oe = t_oc) and ``week`` the week of toc;
      G/J: ``urai_ed``, ``urai_ned0``-``urai_ned2``, ``tgd_s``, ``isc_l1ca_s``, ``isc_l2c_s``,
      ``isc_l5i5_s``, ``isc_l5q5_s`` (CNV2 also ``isc_l1cd_s``, ``isc_l1cp_s``),
      ``transmission_week``; C: ``satellite_type`` (1 GEO, 2 IGSO, 3 MEO; ``is_geo`` only
      where the orbit is geosynchronous too), ``sisai_oe``, ``sisai_ocb``, ``sisai_oc1``,
      ``sisai_oc2``, ``sismai``, ``integrity_flags``, ``iodc``, ``iode``, ``isc_b1cd_s``
      (CNV1) or ``isc_b2ad_s`` (CNV2), ``tgd_b1cp_s``, ``tgd_b2ap_s``.  Columns a record
      type lacks are NaN in the rows of the other types.
      NavIC (I, ``LNAV``): the Keplerian columns, ``iode`` (IODEC), ``week`` (GPS-aligned),
      ``accuracy_m``, ``tgd_s``.  SBAS (S, ``SBAS``): ``toc`` = t_0 (GPST),
      ``clock_bias_s`` = a_Gf0, ``clock_drift_s_per_s`` = a_Gf1, ``x_m`` ... ``az_m_per_s2``
      (WGS-84, converted from km), ``accuracy_code`` (URA), ``iodn``, ``health`` (the RINEX
      bit mask; 0 healthy), ``transmission_sow_s``.
      GLONASS ``relative_frequency_bias`` (+gamma_n, also given as ``clock_drift_s_per_s``;
      drift rate 0), ``message_frame_time_s``, ``x_m`` ... ``az_m_per_s2``
      (PZ-90, converted from km), ``frequency_channel``, ``age_days`` and, from
      RINEX 3.05 on, ``status_flags``, ``group_delay_l1_l2_s``, ``urai``,
      ``health_flags`` (NaN when absent).  Blank fields are NaN (a blank week, clock
      bias, orbit element or GLONASS position/velocity costs the record); the marker
      value 0.999999999999E+09 is NaN in ``transmission_time`` and ``group_delay_l1_l2_s``.
    * ``header``: ``version`` (float), ``file_system`` (``M``, ``G``, ...),
      ``leap_seconds`` (int or None), ``ionosphere`` ({"GPSA": [4], "GPSB": [4],
      "GAL": [3], "BDSA": ...}; from RINEX 4 ION records when the header has none),
      ``time_corrections`` ({"GPUT": {"a0_s", "a1_s_per_s", "reference_sow_s",
      "reference_week"}, ...}; RINEX 4: from the first STO record of each code, with
      ``a2_s_per_s2``, ``source`` "STO record" and ``line``), ``skipped`` (records of a
      kind this reader does not tabulate: since issue 14 none of RINEX 2-4.00; kept for
      a later version's message types), ``n_records``,
      RINEX 4 only: ``ionosphere_records`` (every ION record: ``line``, ``marker``,
      ``system``, ``message``, ``model`` klobuchar / nequick_g / bdgim, ``epoch``,
      ``values``), ``ionosphere_models`` ({"G LNAV": the first record of that system and
      message type, ...; "C CNVX" is BDGIM with its 9 coefficients, not used yet}),
      ``system_time_offsets`` (every STO record: ``sv``, ``message``, ``code``,
      ``sbas_id``, ``utc_id``, ``epoch``, ``transmission_sow_s``, ``a0_s``, ``a1_s_per_s``,
      ``a2_s_per_s2``, ``line``), ``earth_orientation`` (every EOP record: pole x/y and
      rates in arcsec and per day, ``ut1_utc_s`` and rates, ``epoch``, ``message``;
      :mod:`gnssrel.io.rinex_nav_header4`),
      ``ionosphere_sources`` / ``time_correction_sources`` / ``leap_seconds_source``
      (the file each value came from).
    * ``path``: the file.
    * ``accounting``: a :class:`gnssrel.accounting.Ledger`, item
      ``navigation_records`` per system: ``read``, ``used`` (rows of the tables) and
      the records left out with their reason (``damaged``, ``refused: impossible
      date``, ``refused: <field> out of range``, ``refused: week disagrees with the
      epoch``, ``refused: epoch far from the file's other records``, ``not read:
      <type>`` for a message type RINEX 4.00 does not define; system ``-`` for STO, EOP,
      ION records and unreadable markers), with a warning naming file and line for
      every damaged or refused record.

    Time rules: BeiDou epochs are BDT (GPST = BDT + 14 s), BDT weeks count from
    2006-01-01; GLONASS t_b is UTC (header LEAP SECONDS, else the built-in table);
    Galileo weeks in RINEX are aligned to GPS weeks (RINEX 3.04 Table A8);
    the week is made unambiguous near toc with
    :func:`gnssrel.timescales.resolve_week_rollover`.  ``transmission_time`` is
    (week, transmission_sow_s) shifted by one week when it lands more than half
    a week from toe (files give it relative to the toe week even when sent in
    the week before).

    A damaged record costs that record only (see ``accounting``).  Raises
    :class:`gnssrel.errors.FileFormatError` naming file and line when nothing can
    be used: an empty file, an unreadable header, another kind of file, an unknown
    version, or records none of which can be read.
    """
    path = Path(path)
    wanted = _wanted_systems(systems)
    lines = read_text(path).splitlines()
    ledger = Ledger()
    header, first_body = lay.read_header(lines, path, lambda msg, line: ledger.warn(msg, path, line))
    while lines and not lines[-1].strip():
        lines.pop()
    body = rec.cut_records(lines, first_body, header, wanted)
    if int(header["version"]) == 4:
        _header_records(lines, body, header, path)
    header["skipped"] = body.skipped
    tables = {}
    for letter in TABLE_SYSTEMS:
        if body.groups.get(letter):
            tables[letter] = _system_table(letter, body, lines, header)
    _refuse_far_records(tables, body)
    _check_leap_seconds(header, tables, ledger, path)
    for (system, outcome), n in sorted(body.counts.items()):
        ledger.add(ITEM, system, outcome, n)
    for letter, table in tables.items():
        ledger.used(ITEM, letter, len(table))
    for message, line in sorted(body.warnings, key=lambda w: w[1] or 0):
        ledger.warn(message, path, line)
    _log_warnings(ledger, path)
    _raise_if_nothing_usable(tables, body, path, lines)
    tables = {s: t for s, t in tables.items() if len(t)}
    header["n_records"] = {s: len(t) for s, t in tables.items()}
    name = path.name
    header["ionosphere_sources"] = {code: name for code in header["ionosphere"]}
    header["time_correction_sources"] = {code: name for code in header["time_corrections"]}
    header["leap_seconds_source"] = name if header["leap_seconds"] is not None else None
    return NavigationData(tables, header, path, ledger)


def _header_records(lines, body, header, path):
    """RINEX 4 ION, STO and EOP records into the header, each counted under system ``-``."""
    outcomes = lay.ionosphere_from_records(lines, body.ion, header, path)
    outcomes += header4.offsets_from_records(lines, body.sto, header, path, lay._number)
    outcomes += header4.orientation_from_records(lines, body.eop, header, path, lay._number)
    for system, outcome, line, message in outcomes:
        body.counts[(system, "read")] += 1
        body.counts[(system, outcome)] += 1
        if message:
            body.warnings.append((message, line))


def _system_table(letter, body, lines, header):
    """One system's table from its records of every message type (one layout each)."""
    by_type: dict = {}
    for record in body.groups[letter]:
        message = record[2] if (letter, record[2]) in msgs.MESSAGE_FIELDS else None
        by_type.setdefault(message, []).append(record)
    parts = []
    for message, records in by_type.items():
        table, drops = build_table(letter, records, lines, header, message)
        parts.append(table)
        for reason, line, text in drops:
            body.counts[(letter, reason)] += 1
            body.warnings.append((text, line))
    if len(parts) == 1:
        return parts[0]
    return sorted_table(pd.concat([p for p in parts if len(p)] or parts[:1], ignore_index=True))


def _wanted_systems(systems) -> str:
    if systems is None:
        return TABLE_SYSTEMS
    letters = "".join(systems).upper() if not isinstance(systems, str) else systems.upper()
    bad = sorted(set(letters) - set(KNOWN_SYSTEMS))
    if bad:
        raise GnssrelInputError(f"unknown system letter(s) {''.join(bad)!r}; use letters of "
                                f"{TABLE_SYSTEMS} (G GPS, E Galileo, C BeiDou, J QZSS, R GLONASS)")
    return letters


def _refuse_far_records(tables, body):
    """Drop records whose toc lies far outside the bulk of the file's records (a garbled
    week or year): :func:`gnssrel.io.rinex_nav_checks.far_from_bulk`."""
    letters = [s for s in tables if len(tables[s])]
    if not letters:
        return
    tocs = np.concatenate([tables[s]["toc"].to_numpy().astype("datetime64[ns]").astype(np.int64)
                           for s in letters])
    far = checks.far_from_bulk(tocs)
    if not far.any():
        return
    offset = 0
    for s in letters:
        table = tables[s]
        mine = far[offset:offset + len(table)]
        offset += len(table)
        for r in np.flatnonzero(mine):
            body.counts[(s, FAR_FROM_BULK)] += 1
            message = (f"{table['sv'].iat[r]} record of {table['toc'].iat[r]} lies more than "
                       f"{checks.OUTLIER_MARGIN_S / 86400:.0f} days outside the span of the file's "
                       f"other records; record skipped")
            body.warnings.append((message, int(table["line"].iat[r])))
        tables[s] = table[~mine].reset_index(drop=True)


def _check_leap_seconds(header, tables, ledger, path):
    """Warn when the header's LEAP SECONDS disagrees with the built-in table at the
    file's epochs (the header's value is still used for GLONASS t_b)."""
    value = header.get("leap_seconds")
    tocs = [t["toc"].to_numpy() for t in tables.values() if len(t)]
    if value is None or not tocs:
        return
    near = np.datetime64(int(np.median(np.concatenate(tocs).astype("datetime64[ns]").astype(np.int64))),
                         "ns")
    problem = ts.check_leap_seconds(value, near)
    if problem:
        ledger.warn(problem, path, header.get("leap_seconds_line"))


def _log_warnings(ledger, path):
    for w in ledger.warnings[:_LOGGED_WARNINGS]:
        log.warning("%s", w)
    more = len(ledger.warnings) + ledger.warnings_dropped - _LOGGED_WARNINGS
    if more > 0:
        log.warning("%s: %d more warning(s) (see the accounting)", path, more)


def _raise_if_nothing_usable(tables, body, path, lines):
    """FileFormatError when records were there but every one was damaged or refused
    (records merely not tabulated -- SBAS, STO, another system -- are no failure)."""
    if any(len(t) for t in tables.values()):
        return
    outcomes = {o for (_, o), n in body.counts.items() if n and o != "read"}
    if not body.warnings or not outcomes or \
            not all(o == rec.DAMAGED or o.startswith("refused") for o in outcomes):
        return
    message, line = min(body.warnings, key=lambda w: w[1] or 0)
    n = sum(n for (s, o), n in body.counts.items() if o == "read")
    raise FileFormatError(f"no readable navigation record ({n} read, none usable); first problem: "
                          f"{message}", path, line,
                          lines[line - 1] if line and 0 < line <= len(lines) else None)
