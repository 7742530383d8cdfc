"""Build one system's ephemeris table from its records, all records at once.

Every record is cut into fields from the declared column tables
(:mod:`gnssrel.io.rinex_nav_layout`) and read strictly
(:mod:`gnssrel.io.rinex_nav_fields`); the records that cannot be read or hold an
impossible value are found with numpy masks and dropped, each with a reason and
a message naming its line:

``damaged``                               a garbled number, satellite or epoch field,
                                          a blank required field
``refused: impossible date``              30 February, hour 25, a year before GPS
``refused: <field> out of range``         outside the physical range of the field
                                          (:mod:`gnssrel.io.rinex_nav_checks`)
``refused: week disagrees with the epoch``  toe more than two days from toc
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from gnssrel import timescales as ts
from gnssrel.constants import BEIDOU_GEO_PRNS
from gnssrel.io import rinex_nav_checks as checks
from gnssrel.io import rinex_nav_fields as fld
from gnssrel.io import rinex_nav_layout as lay
from gnssrel.io import rinex_nav_messages as msgs

_NS = ts.NS_PER_S
_HALF_WEEK_S = ts.SECONDS_PER_WEEK / 2
DAMAGED = "damaged"
IMPOSSIBLE_DATE = "refused: impossible date"
SATELLITE_00 = "refused: satellite number 00"
WEEK_DISAGREES = "refused: week disagrees with the epoch"

# Fields without which a record cannot give a state: blank is refused ("damaged").
REQUIRED = {
    "K": ("clock_bias_s", "sqrt_a_sqrt_m", "eccentricity", "toe_sow_s", "mean_anomaly_rad",
          "omega0_rad", "inclination_rad", "perigee_argument_rad"),
    "R": ("clock_bias_s", "x_m", "y_m", "z_m", "vx_m_per_s", "vy_m_per_s", "vz_m_per_s"),
}
# BeiDou GEO by its own elements (GEO sqrt(A) 6493.4 m^0.5, i < 5 deg; MEO 5282.6): bounds with margin.
GEO_SQRT_A_MIN, GEO_INCLINATION_MAX = 6000.0, 0.2
# Years a broadcast record can carry: none before the GPS epoch (1980).
YEARS = (1980, 2099)


class _Refusals:
    """Per-record reason of refusal (first reason wins) and the warnings behind them."""

    def __init__(self, n):
        self.reason = np.full(n, None, dtype=object)
        self.items = []  # (reason, 1-based line, message)

    def mark(self, mask, reason, describe):
        if not mask.any():
            return
        for r in np.flatnonzero(mask & np.equal(self.reason, None)):
            self.reason[r] = reason
            line, message = describe(int(r))
            self.items.append((reason, line, message))

    @property
    def good(self):
        return np.equal(self.reason, None)


def build_table(letter, records, lines, header, message=None):
    """(DataFrame of the good records sorted by (sv, toc), [(reason, line, message)]).

    ``message``: the RINEX 4 message type of every record (None: the system's legacy
    record); it chooses the layout (:func:`gnssrel.io.rinex_nav_layout.layout_of`)."""
    major = int(header["version"])
    layout, integers = lay.layout_of(letter, message)
    n_lines = len(layout) if (letter, message) in msgs.MESSAGE_FIELDS else max(lay.RECORD_LINES[letter])
    chars = fld.char_matrix(records, lines, n_lines, lay.LINE_WIDTH)
    layout = layout[:n_lines]
    names = [name for row in layout for name in row]
    starts = _field_columns(major, n_lines)
    keep = [k for k, name in enumerate(names) if name is not None]
    block = fld.field_block(chars, starts[keep], lay.FIELD_WIDTH)
    values, blank, bad = fld.parse_numbers(block)
    refused = _Refusals(len(records))

    def at(j, what):
        def describe(r):
            line0 = records[r][0] + int(starts[keep[j]]) // lay.LINE_WIDTH
            col = int(starts[keep[j]]) % lay.LINE_WIDTH + 1
            text = bytes(block[r, j]).decode("ascii", "replace").strip()
            return line0 + 1, (f"{letter} record: {what} {text!r} in columns {col}-"
                               f"{col + lay.FIELD_WIDTH - 1}; record skipped")
        return describe

    for j in np.flatnonzero(bad.any(axis=0)):
        refused.mark(bad[:, j], DAMAGED, at(j, "garbled number (expected a right-aligned D19.12)"))
    required = set(REQUIRED["R" if letter in "RS" else "K"]) | set(integers)
    if (letter, message) in msgs.TOE_FROM_EPOCH:
        required.discard("toe_sow_s")
    for j, k in enumerate(keep):
        if names[k] in required:
            refused.mark(blank[:, j], DAMAGED, at(j, f"blank {names[k]} field"))
    sv, prn, toc_file = _epochs(chars, major, letter, records, lines, refused)
    cols = {names[k]: values[:, j] * (1000.0 if names[k] in lay.KILOMETRE_FIELDS else 1.0)
            for j, k in enumerate(keep)}
    index = {names[k]: j for j, k in enumerate(keep)}
    healthy = ~(np.abs(np.nan_to_num(cols["health"], nan=0.0)) > 0)
    for name, mask in checks.out_of_range(letter, cols, healthy).items():
        refused.mark(mask, f"refused: {name} out of range", at(index[name], f"{name} out of range:"))
    good = refused.good
    cols = {name: v[good] for name, v in cols.items()}
    for name in integers:
        cols[name] = np.round(cols[name]).astype(np.int64)
    kept = [records[r] for r in np.flatnonzero(good)]
    frame = {"sv": sv[good]}
    if letter == "R":
        frame.update(_glonass_columns(cols, toc_file[good], header))
    elif letter == "S":
        frame.update(_sbas_columns(cols, toc_file[good]))
    else:
        frame.update(_kepler_columns(letter, cols, toc_file[good], prn[good], kept, message))
    frame["line"] = np.array([r[0] + 1 for r in kept], dtype=np.int64)
    drops = list(refused.items)
    if letter not in "RS" and len(kept):
        far = np.abs(ts.seconds_between(frame["toe"], frame["toc"])) > checks.MAX_TOE_TOC_S
        far &= ~(np.abs(np.nan_to_num(frame["health"])) > 0)  # as out_of_range: healthy only
        for r in np.flatnonzero(far):
            message = (f"{letter} record: week {frame['week'][r]} and toe "
                       f"{frame['toe_sow_s'][r]:.0f} s put toe at {frame['toe'][r]}, far "
                       f"from the epoch {frame['toc'][r]}; record skipped")
            drops.append((WEEK_DISAGREES, int(frame["line"][r]), message))
        if far.any():
            frame = {name: np.asarray(v)[~far] for name, v in frame.items()}
    return sorted_table(pd.DataFrame(frame)), drops


def sorted_table(frame: pd.DataFrame) -> pd.DataFrame:
    """Rows sorted by (sv, toc), stable (the order of ``frame.sort_values(["sv", "toc"],
    kind="stable")``, found by numpy's lexsort: several times faster on the object column)."""
    if len(frame) == 0:
        return frame.reset_index(drop=True)
    toc = np.asarray(frame["toc"]).astype("datetime64[ns]").astype(np.int64)
    order = np.lexsort((toc, np.asarray(frame["sv"]).astype(str)))
    if np.array_equal(order, np.arange(len(frame))):
        return frame.reset_index(drop=True)
    return frame.take(order).reset_index(drop=True)


def _field_columns(major, n_lines):
    first, other = lay.FIELD_STARTS[2 if major == 2 else 3]
    starts = list(first)
    for k in range(1, n_lines):
        starts.extend(k * lay.LINE_WIDTH + c for c in other)
    return np.asarray(starts)


def _epochs(chars, major, letter, records, lines, refused):
    """Satellite names, PRNs and epochs (datetime64[ns], the file's time scale)."""
    cols = lay.EPOCH_COLUMNS[2 if major == 2 else 3]

    def line_of(r):
        i = records[r][0]
        return i + 1, lines[i]

    def describe(what):
        return lambda r: (line_of(r)[0], (f"{letter} record: {what} in {line_of(r)[1][:23]!r}; "
                                          f"record skipped"))

    a, b = cols["prn"] if major == 2 else (1, 3)
    prn, bad = fld.parse_integers(chars, a, b)
    if major != 2:   # RINEX 3/4: satellite number A1,I2.2, so G05, never G 5 (RINEX 3.05 table A6)
        bad |= chars[:, 1] == fld.BLANK
    refused.mark(bad, DAMAGED, describe("garbled satellite number"))
    # No system has a satellite number 00 (PRNs and slots start at 1).
    refused.mark(prn < 1, SATELLITE_00, describe("satellite number 00"))
    # Fields of one width are read together: RINEX 3 month ... second (I2.2), RINEX 2
    # year ... minute (I3).
    names = ("month", "day", "hour", "minute", "second") if major != 2 else \
        ("year", "month", "day", "hour", "minute")
    width = cols[names[0]][1] - cols[names[0]][0]
    values, bad = fld.integer_fields(fld.field_block(chars, [cols[n][0] for n in names], width))
    parts = {n: values[:, k] for k, n in enumerate(names)}
    bad = bad.any(axis=1)
    if major == 2:
        sec, bad_sec = fld.parse_seconds_f51(chars, *cols["second"])
        bad |= bad_sec
        parts["year"] = np.where(parts["year"] < 80, parts["year"] + 2000, parts["year"] + 1900)
    else:  # A1,I2.2,1X,I4,5(1X,I2.2): the separators are blank (RINEX 3.05 Table A6)
        parts["year"], bad_year = fld.parse_integers(chars, *cols["year"])
        sec = parts["second"]
        bad |= bad_year | (chars[:, [3, 8, 11, 14, 17, 20]] != fld.BLANK).any(axis=1)
    refused.mark(bad, DAMAGED, describe("garbled epoch"))
    year, month, day = parts["year"], parts["month"], parts["day"]
    impossible = (year < YEARS[0]) | (year > YEARS[1]) | (day < 1) \
        | (day > fld.days_in_month(year, month)) | (parts["hour"] > 23) \
        | (parts["minute"] > 59) | ~(sec >= 0) | (sec >= 60.0)
    refused.mark(impossible, IMPOSSIBLE_DATE, describe("impossible epoch"))
    ok = refused.good
    year, month, day = (np.where(ok, v, d) for v, d in ((year, 2000), (month, 1), (day, 1)))
    months = ((year - 1970) * 12 + month - 1).astype("datetime64[M]")
    days = months.astype("datetime64[D]") + (day - 1).astype("timedelta64[D]")
    ns = (parts["hour"] * 3600 + parts["minute"] * 60) * _NS + np.round(sec * _NS).astype(np.int64)
    epochs = days.astype("datetime64[ns]") + ns.astype("timedelta64[ns]")
    sv = np.char.add(letter, np.char.zfill(prn.astype(str), 2)).astype(object)
    return sv, prn, epochs


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


def _sbas_columns(cols, toc):
    """SBAS: epoch t_0 in GPST (RINEX 3.04 / 4.00 SBAS record); a_Gf0, a_Gf1 as the
    clock polynomial (no a2); position, velocity, acceleration already in metres."""
    out = {"toc": toc}
    for name in ("clock_bias_s", "clock_drift_s_per_s"):
        out[name] = cols.pop(name)
    out["clock_drift_rate_s_per_s2"] = np.zeros_like(out["clock_bias_s"])
    out["nav_type"] = np.full(len(toc), "SBAS", dtype=object)
    out.update(cols)
    return out


def _week_and_toe(letter, cols, toc, scale, message):
    """(full week, toe) in GPST.  Legacy records and NavIC: the week of the file (mod 1024
    or 8192) resolved near toc.  CNAV-type records (:mod:`gnssrel.io.rinex_nav_messages`):
    the week of toc, and toe = toc for GPS/QZSS (t_oe = t_oc) or the BeiDou toe of that
    week moved by a week where it lands more than half a week from toc."""
    if (letter, message) not in msgs.NO_WEEK_FIELD:
        modulus = 8192 if letter == "C" else 1024
        week = ts.resolve_week_rollover(cols["week"], toc, modulus=modulus, scale=scale)
        return week, ts.from_week_seconds(week, cols["toe_sow_s"], scale)
    week, sow = ts.to_week_seconds(toc, scale)
    week = np.asarray(week, dtype=np.int64)
    if (letter, message) in msgs.TOE_FROM_EPOCH:
        cols["toe_sow_s"] = sow
        return week, np.asarray(toc).astype("datetime64[ns]")
    gap = np.asarray(cols["toe_sow_s"]) - sow
    week = week + np.where(gap > _HALF_WEEK_S, -1, np.where(gap < -_HALF_WEEK_S, 1, 0))
    return week, ts.from_week_seconds(week, cols["toe_sow_s"], scale)


def _kepler_columns(letter, cols, toc_file, prn, records, message=None):
    scale = "BDT" if letter == "C" else "GPST"  # Galileo and NavIC weeks are GPS-aligned in RINEX
    toc = ts.to_gpst(toc_file, "BDT") if letter == "C" else toc_file
    week, toe = _week_and_toe(letter, cols, toc, scale, message)
    if (letter, message) in msgs.NO_WEEK_FIELD:
        cols["week"] = week   # the record has none: the week of toc, on the system's count
    tx_sow = cols["transmission_sow_s"]
    unknown = ~np.isfinite(tx_sow) | (np.abs(tx_sow) >= lay.UNKNOWN_VALUE_THRESHOLD)
    tx = ts.from_week_seconds(week, np.where(unknown, 0.0, tx_sow), scale)
    gap_s = ts.seconds_between(tx, toe)
    shift = np.where(gap_s > _HALF_WEEK_S, -1, np.where(gap_s < -_HALF_WEEK_S, 1, 0))
    tx = tx + (shift * ts.SECONDS_PER_WEEK * _NS).astype("timedelta64[ns]")
    tx[unknown] = np.datetime64("NaT")
    given = [r[2] for r in records]
    if letter == "E":
        bits = cols["data_sources"]
        derived = np.where(bits & 0b010, "FNAV", np.where(bits & 0b101, "INAV", "UNKNOWN"))
        cols["clock_frequency_pair"] = np.where(bits & 0x100, "E1,E5a",
                                                np.where(bits & 0x200, "E1,E5b", ""))
    elif letter == "C":
        is_geo = np.isin(prn, list(BEIDOU_GEO_PRNS))
        derived = np.where(is_geo, "D2", "D1")
        if "satellite_type" in cols:
            # CNV1/CNV2 say it themselves (1 GEO, 2 IGSO, 3 MEO), but type 1 is believed only
            # where the record's own orbit is geosynchronous (sqrt(A) above GEO_SQRT_A_MIN, i below
            # GEO_INCLINATION_MAX): BRD400DLR 2023-071 carries 289 CNV2 records of MEO satellites
            # (C19-C37, sqrt(A) 5282.6) typed 1 from 12:00 on, which the GEO rotation would put
            # thousands of km away.
            is_geo = (cols["satellite_type"] == 1) & (cols["sqrt_a_sqrt_m"] > GEO_SQRT_A_MIN) \
                & (cols["inclination_rad"] < GEO_INCLINATION_MAX)
        cols["is_geo"] = is_geo
    else:
        derived = np.full(len(prn), "LNAV")
    if letter == "J" and "fit_interval_flag" in cols:
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
