"""Which broadcast record serves each (epoch, satellite): the rules, as data, per system.

Every system follows the same steps; only the numbers in ``RULES`` differ:

1. A record is *in time* when |t - reference| <= its half-window, the
   reference being toe (Keplerian systems) or t_b (GLONASS, ``toc`` in the
   contract).
2. It must already have been *transmitted* (``transmission_time <= t``) where
   the file gives a transmission time.  Why: the states then are the ones a
   receiver could have computed at t, which is what the receiver-log audit
   needs; it costs nothing in accuracy for GPS/QZSS, whose records go out about
   2 h before their toe, and for Galileo it replaces a future-toe record by the
   current one (about 10 min older).
3. It must be *healthy* (health word 0; Galileo also SISA not "NAPA", i.e.
   ``accuracy_m`` >= 0, Galileo OS SIS ICD 5.1.11-5.1.12), unless
   ``include_unhealthy``.
4. Satellites on the rule's exclusion list are left out unless ``include_unhealthy``.
5. Among the records left, the preferred message type wins (Galileo I/NAV over
   F/NAV: I/NAV is the message of the E1/E5b dual-frequency service, and in a
   single station's file it is refreshed as often), then the nearest reference
   time, then the later record in the table (a re-upload with the same toe).

Windows (why):

* GPS: half the record's fit interval (``fit_interval_h``, 4 h when the file
  gives none): IS-GPS-200 20.3.3.4.3.1 / 20.3.4.4 (curve-fit interval, toe at its middle).
* QZSS: half the fit interval, 2 h when the flag is 0 (IS-QZSS-PNT 4.1.2.4).
* Galileo: |t - toe| <= 1 h.  The message is valid for 4 h, but accuracy
  falls off quickly with age (on 2020-06-25 at MOJN: ~1 m median 3D RMS with
  records within 1 h, ~7 m with records up to 3 h old, from a first independent
  computation; common practice is the freshest record).  E14 and E18 (in
  eccentric orbits after their 2014 launch, flagged unhealthy) are excluded.
* BeiDou: |t - toe| <= 1 h (D1 records are renewed hourly, BDS-SIS-ICD-B1I 5.2.4.1).
* GLONASS: |t - t_b| <= 15 min (GLONASS ICD 2008 A.3.1.2: the simplified
  algorithm holds within 15 min of t_b; t_b every 30 min).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

STATUS_CODES = {
    0: "ok",
    1: "no ephemeris within fit interval",
    2: "unhealthy",
    3: "excluded by rule",
    4: "ephemeris not yet transmitted",
    5: "satellite not in navigation data",
}
"""Status of each (epoch, satellite) state; the DEVELOPERS.md contract codes."""

STATUS_OK, STATUS_NO_EPHEMERIS, STATUS_UNHEALTHY, STATUS_EXCLUDED, STATUS_NOT_TRANSMITTED, \
    STATUS_NO_SATELLITE = range(6)


@dataclass(frozen=True)
class SelectionRule:
    reference_column: str                 # toe or toc (t_b)
    default_half_window_s: float          # |t - reference| limit when the record gives none
    use_fit_interval: bool = False        # half-window = fit_interval_h / 2 where given
    require_transmitted: bool = True
    preferred_nav_types: tuple = ()       # earlier = preferred
    excluded_svs: tuple = ()
    napa_is_unhealthy: bool = False       # Galileo SISA "no accuracy prediction available"


RULES = {
    "G": SelectionRule("toe", 2 * 3600.0, use_fit_interval=True),
    "J": SelectionRule("toe", 1 * 3600.0, use_fit_interval=True),
    "E": SelectionRule("toe", 1 * 3600.0, preferred_nav_types=("INAV", "FNAV"),
                       excluded_svs=("E14", "E18"), napa_is_unhealthy=True),
    "C": SelectionRule("toe", 1 * 3600.0),
    "R": SelectionRule("toc", 15 * 60.0, require_transmitted=False),
}


def _half_window_s(rows: pd.DataFrame, rule: SelectionRule) -> np.ndarray:
    half = np.full(len(rows), rule.default_half_window_s)
    if rule.use_fit_interval and "fit_interval_h" in rows:
        fit_h = rows["fit_interval_h"].to_numpy(dtype=np.float64)
        # RINEX 2 writes 0 for "4 h" (a flag); only hour counts >= 2 are read as hours.
        half = np.where(np.isfinite(fit_h) & (fit_h >= 2.0), fit_h * 1800.0, half)
    return half


def _healthy(rows: pd.DataFrame, rule: SelectionRule) -> np.ndarray:
    health = rows["health"].to_numpy(dtype=np.float64) if "health" in rows else np.zeros(len(rows))
    ok = health == 0
    if rule.napa_is_unhealthy and "accuracy_m" in rows:
        ok &= ~(rows["accuracy_m"].to_numpy(dtype=np.float64) < 0)
    return ok


def _ns(values) -> np.ndarray:
    return np.asarray(values).astype("datetime64[ns]").astype(np.int64)


def select_ephemerides(table: pd.DataFrame, svs, times, system: str, include_unhealthy: bool = False):
    """Choose a record per (epoch, satellite) for one system.

    table: the system's ephemeris DataFrame (contract columns, RangeIndex).
    svs: satellite names (n_sv); times: datetime64[ns] GPST (n_time).
    Returns (row_index (n_time, n_sv) int64, the table row or -1 for none;
    status (n_time, n_sv) int8, codes in ``STATUS_CODES``).
    Loops over satellites only; epochs are handled as arrays.
    """
    rule = RULES[system]
    t_ns = _ns(times)
    n_time, svs = t_ns.size, list(svs)
    row_index = np.full((n_time, len(svs)), -1, dtype=np.int64)
    status = np.full((n_time, len(svs)), STATUS_NO_SATELLITE, dtype=np.int8)
    if table is None or len(table) == 0:
        return row_index, status
    sv_col = table["sv"].to_numpy()
    for j, sv in enumerate(svs):
        if sv in rule.excluded_svs and not include_unhealthy:
            status[:, j] = STATUS_EXCLUDED
            continue
        rows_at = np.flatnonzero(sv_col == sv)[::-1]  # reversed: ties go to the later record
        if rows_at.size == 0:
            continue
        rows = table.iloc[rows_at]
        dt_s = (t_ns[:, None] - _ns(rows[rule.reference_column])[None, :]) / 1e9
        in_time = np.abs(dt_s) <= _half_window_s(rows, rule)[None, :]
        transmitted = np.ones_like(in_time)
        if rule.require_transmitted and "transmission_time" in rows:
            tx = np.asarray(rows["transmission_time"]).astype("datetime64[ns]")
            transmitted = np.isnat(tx)[None, :] | (tx.astype(np.int64)[None, :] <= t_ns[:, None])
        healthy = _healthy(rows, rule)[None, :] | include_unhealthy
        usable = in_time & transmitted & healthy
        rank = np.zeros(rows_at.size)
        if rule.preferred_nav_types and "nav_type" in rows:
            kinds = rows["nav_type"].to_numpy()
            for k, kind in enumerate(rule.preferred_nav_types):
                rank = np.where(kinds == kind, k, rank)
            rank = np.where(np.isin(kinds, rule.preferred_nav_types), rank,
                            len(rule.preferred_nav_types))
        score = np.where(usable, rank[None, :] * 1e7 + np.abs(dt_s), np.inf)
        best = np.argmin(score, axis=1)
        found = np.isfinite(score[np.arange(n_time), best])
        row_index[:, j] = np.where(found, rows_at[best], -1)
        status[:, j] = np.select(
            [found, (in_time & transmitted).any(axis=1), in_time.any(axis=1)],
            [STATUS_OK, STATUS_UNHEALTHY, STATUS_NOT_TRANSMITTED], STATUS_NO_EPHEMERIS)
    return row_index, status


def take_rows(table, column: str, rows) -> np.ndarray:
    """Values of ``column`` at the selected ``rows`` (any shape); NaN / NaT / False where a row is -1."""
    rows = np.asarray(rows, dtype=np.int64)
    values = table[column].to_numpy()
    ok = rows >= 0
    if values.dtype.kind == "M" or column in ("toe", "toc", "transmission_time"):
        out = np.full(rows.shape, np.datetime64("NaT"), dtype="datetime64[ns]")
        out[ok] = values.astype("datetime64[ns]")[rows[ok]]
    elif values.dtype == bool:
        out = np.zeros(rows.shape, bool)
        out[ok] = values[rows[ok]]
    else:
        out = np.full(rows.shape, np.nan)
        out[ok] = values.astype(float)[rows[ok]]
    return out

