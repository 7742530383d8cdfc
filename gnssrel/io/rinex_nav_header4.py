"""RINEX 4 STO (system time offset) and EOP (Earth orientation) records into the header model.

Layouts: :mod:`gnssrel.io.rinex_nav_messages` (RINEX 4.00 5.3-5.4, from memory, checked
on BRD400DLR).  Every readable record is kept, with its satellite and message type:

``header["system_time_offsets"]``: one dict per STO record, in file order: ``sv``,
``message`` (``LNAV``, ``CNVX``, ``D1D2``, ``IFNV``, ``FDMA``, ...), ``code`` (``GPUT``,
``GAGP``, ``BDGA``, ``IRGP``, ...), ``sbas_id``, ``utc_id`` (``UTC(NPLI)``...), ``epoch``
(the reference epoch as written, ``yyyy-mm-ddThh:mm:ss``), ``transmission_sow_s``,
``a0_s``, ``a1_s_per_s``, ``a2_s_per_s2``, ``line``.  The first record of each code also
fills ``header["time_corrections"][code]`` (``a0_s``, ``a1_s_per_s``, ``a2_s_per_s2``,
``reference_sow_s``, ``reference_week``: the week and seconds of the epoch on the GPS
week count) where the header has no TIME SYSTEM CORR line of that code (RINEX 4 files
carry none), with ``source`` "STO record".

``header["time_offsets_vs_builtin"]``: for the STO codes between scales gnssrel takes as equal
(GAGP GST-GPST, QZGP QZSST-GPST, IRGP IRNST-GPST: :mod:`gnssrel.timescales` uses 0 s), the
first broadcast a0 beside the built-in 0: {code: {"broadcast_a0_s", "builtin_s", "epoch",
"sv"}} -- the few-nanosecond offsets gnssrel does not apply (reported, not used).

``header["earth_orientation"]``: one dict per EOP record: ``sv``, ``message``, ``epoch``,
``x_pole_arcsec``, ``x_pole_rate_arcsec_per_day``, ``x_pole_rate2_arcsec_per_day2``,
``y_pole_arcsec`` (and rates), ``transmission_sow_s``, ``ut1_utc_s``,
``ut1_utc_rate_s_per_day``, ``ut1_utc_rate2_s_per_day2``, ``line``.
"""

from __future__ import annotations

import numpy as np

from gnssrel import timescales as ts
from gnssrel.errors import FileFormatError
from gnssrel.io import rinex_nav_messages as msgs

NO_SYSTEM = "-"
# STO codes between scales gnssrel treats as one (timescales: GST = QZSST = GPST, IRNST = GPST).
ALIGNED_CODES = ("GAGP", "QZGP", "IRGP")
_EOP_NAMES = ("x_pole_arcsec", "x_pole_rate_arcsec_per_day", "x_pole_rate2_arcsec_per_day2",
              None, "y_pole_arcsec", "y_pole_rate_arcsec_per_day", "y_pole_rate2_arcsec_per_day2",
              "transmission_sow_s", "ut1_utc_s", "ut1_utc_rate_s_per_day", "ut1_utc_rate2_s_per_day2")


def _sv_of(marker):
    """The satellite of a ``> STO Snn TYPE`` marker (its second word; BRD400DLR writes ``E``
    and ``J`` alone for some STO records)."""
    words = marker[1:].split()
    return words[1] if len(words) > 1 else ""


def _reader(path, number):
    def read(text, index, line, what):
        return number(text, path, index + 1, line, what)
    return read


def offsets_from_records(lines, records, header, path, number):
    """Read STO records ``[(marker index, n lines, letter, type)]``; returns the accounting
    outcomes [(system, outcome, line, warning or None)]."""
    found = header.setdefault("system_time_offsets", [])
    read = _reader(path, number)
    outcomes = []
    for start, count, letter, message in records:
        problem = None
        if count != 3:
            problem = f"STO record has {count - 1} lines, expected 2"
        else:
            first = lines[start + 1]
            epoch = msgs.epoch_of(first)
            code = first[24:28].strip()
            if epoch is None or not code:
                problem = "STO record: unreadable epoch or time-offset code"
            else:
                try:
                    values = [read(lines[start + 2][a:a + 19], start + 2, lines[start + 2],
                                   f"STO record (columns {a + 1}-{a + 19})")
                              for a in msgs.CONTINUATION_STARTS]
                except FileFormatError as err:
                    values, problem = None, err.message
                if values is not None and not msgs.finite(values, 2):
                    problem = "STO record: t_tm and a0 must be finite numbers"
        if problem:
            outcomes.append((NO_SYSTEM, "damaged", start + 1, problem))
            continue
        tx, a0, a1, a2 = (np.nan if v is None else v for v in values)
        entry = {"sv": _sv_of(lines[start]), "message": message, "code": code,
                 "sbas_id": first[29:34].strip(), "utc_id": first[35:].strip(), "epoch": epoch,
                 "transmission_sow_s": tx, "a0_s": a0, "a1_s_per_s": a1, "a2_s_per_s2": a2,
                 "line": start + 1}
        found.append(entry)
        if code not in header["time_corrections"]:
            week, sow = ts.to_week_seconds(np.datetime64(epoch, "ns"), "GPST")
            header["time_corrections"][code] = {"a0_s": a0, "a1_s_per_s": a1, "a2_s_per_s2": a2,
                                                "reference_sow_s": float(sow), "reference_week": int(week),
                                                "source": "STO record", "line": start + 1}
        outcomes.append((NO_SYSTEM, "used", start + 1, None))
    checks = header.setdefault("time_offsets_vs_builtin", {})
    for entry in found:
        if entry["code"] in ALIGNED_CODES and entry["code"] not in checks:
            checks[entry["code"]] = {"broadcast_a0_s": entry["a0_s"], "builtin_s": 0.0,
                                     "epoch": entry["epoch"], "sv": entry["sv"]}
    return outcomes


def orientation_from_records(lines, records, header, path, number):
    """Read EOP records into ``header["earth_orientation"]``; outcomes as above."""
    found = header.setdefault("earth_orientation", [])
    read = _reader(path, number)
    outcomes = []
    for start, count, letter, message in records:
        problem = None
        epoch = msgs.epoch_of(lines[start + 1]) if count > 1 else None
        if count != 4:
            problem = f"EOP record has {count - 1} lines, expected 3"
        elif epoch is None:
            problem = "EOP record: unreadable epoch"
        else:
            try:
                values = msgs.values_of(lines, start, count, read)
            except FileFormatError as err:
                problem = err.message
            else:
                named = dict(zip(_EOP_NAMES, values))
                named.pop(None, None)
                if not all(v is not None and msgs.finite([v], 1) for v in named.values()):
                    problem = "EOP record: a pole, UT1-UTC or t_tm field is blank or not finite"
        if problem:
            outcomes.append((NO_SYSTEM, "damaged", start + 1, problem))
            continue
        found.append({"sv": _sv_of(lines[start]), "message": message, "epoch": epoch, **named,
                      "line": start + 1})
        outcomes.append((NO_SYSTEM, "used", start + 1, None))
    return outcomes
