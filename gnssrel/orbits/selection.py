"""Which broadcast record serves each (epoch, satellite): two named rules, with per-system limits as data.

Rules (``rule=`` keyword, ``--rule`` option; :data:`RULE_NAMES`):

* ``"post"`` (post-processing, the default): the nearest valid record whatever its
  transmission time -- a record broadcast after t describes the orbit at t as well
  as an older one (better, when the older one is near the end of its fit), and a
  post-processor has the whole file.
* ``"receiver"``: only records already transmitted at t (``transmission_time <= t``
  where the file gives one), as a receiver in real time would have them; for judging
  what a receiver's firmware could have done.  Galileo records go out ~12 min after
  their toe, GPS ones ~2 h before (MOJN 2020-177), so this costs Galileo a fresher record.

Both rules follow the same steps; only ``require_transmitted`` differs:

1. A record is *in time* when t - reference lies within the system's limits of
   ``SYSTEM_LIMITS``: up to ``max_age_after_s`` after the reference time (toe for
   Keplerian systems, t_b = ``toc`` for GLONASS) and up to ``max_age_before_s``
   before it; GPS/QZSS take half the record's fit interval on each side.
2. Receiver rule only: it must already have been *transmitted*.
3. It must be *healthy* (health word 0; Galileo also SISA not "NAPA", i.e.
   ``accuracy_m`` >= 0, Galileo OS SIS ICD 5.1.11-5.1.12), unless ``include_unhealthy``.
   GPS and QZSS CNAV records carry one health bit per carrier, and only the bits of the
   carriers the use needs count (:data:`SIGNAL_HEALTH_BITS`, :func:`healthy_records`): by
   default the L1/L2 pair the broadcast clock refers to, so an L5-only flag leaves the record
   healthy for orbits, relativity and clocks.
4. Satellites on the system's exclusion list are left out unless ``include_unhealthy``.
5. Among the records left, the preferred message type wins (Galileo I/NAV over
   F/NAV: I/NAV is the message of the E1/E5b dual-frequency service, and in a
   single station's file it is refreshed as often), then the nearest reference
   time, nearness being |t - reference| in units of the limit on its side where
   the two limits differ (Galileo: 5 min before toe counts as 30 min after it, as
   the error grows faster before toe; plain |t - reference| for GPS, QZSS,
   GLONASS); a tie (two records equally near, or a re-upload with the same
   reference) goes to the newer record: later reference time, then later
   transmission, then later in the table.

Limits (why).  Measured on MOJN 2020-177 broadcast vs GRG final (GRG0MGXFIN 2020-176/177
SP3, 15 min, Lagrange-interpolated to a 5-min grid): every healthy record (Galileo I/NAV,
SISA not NAPA, E14/E18 left out) evaluated at every epoch within 5 h of its reference
time, 3-D distance to the SP3 position, binned by t - reference.  No antenna-offset
correction (broadcast: antenna phase centre; SP3: centre of mass; for GPS ~1 m, in every
bin alike).  Median / 95th percentile 3-D error in metres, by age of the record used, t before
or after its reference time (650-4600 samples per bin; F/NAV gives nearly the same figures):

    age (h)      GPS LNAV             Galileo I/NAV        GLONASS
                 before    after      before    after      before     after
    0-0.25       1.34/2.16 (both)     0.87/1.12 (both)     2.82/5.60 (both)
    0.25-0.5     1.30/2.12 1.33/2.09  0.94/1.29 0.87/1.12  3.13/5.99  3.36/6.06
    0.5-0.75     1.26/2.07 1.30/2.06  1.14/1.97 0.87/1.11  4.17/7.97  4.79/8.48
    0.75-1       1.27/2.06 1.31/2.09  1.62/3.26 0.88/1.12  6.97/12.9  7.72/13.7
    1-1.5        1.28/2.07 1.33/2.16  3.07/6.87 0.89/1.12  14.4/30.4  15.2/29.8
    1.5-2        1.28/2.10 1.34/2.17  6.89/13.9 0.88/1.11  33.2/63.6  33.1/61.3
    2-2.5        1.86/4.70 1.90/4.57  13.4/25.0 0.88/1.11  63.9/116   61.0/111
    2.5-3        5.11/12.5 4.89/12.3  23.1/42.0 0.90/1.16  109/194    102/188
    3-3.5        11.8/26.0 11.3/25.6  36.6/66.9 1.08/2.08  170/305    156/295
    3.5-4        22.5/47.8 21.3/45.5  53.8/101  2.16/5.06  248/456    227/441

Bound: the largest age (15-min steps) up to which every bin keeps its median within 1.5x and
its 95th percentile within 2x the fresh-record figures of the system.  It gives GPS 2.25 h
both sides (we keep the ICD's half fit interval, 2 h for a 4-h fit: IS-GPS-200 20.3.3.4.3.1 /
20.3.4.4, toe at its middle); Galileo 3.25 h after toe (kept: 3 h) and 0.75 h before it (the
Galileo fit runs forward from toe, so age before toe costs far more; kept: 30 min); GLONASS
0.75 h before t_b and 0.5 h after (kept: 20 min both sides; records every 30 min, GLONASS ICD
2008 A.3.1.2 promises 15 min of t_b, so 20 min bridges a record that comes late).  The kept
limits are shorter than the bound allows so that the whole-day broadcast-vs-final comparison does
not get worse where the new rule covers more epochs (MOJN 2020-177 vs GRG, 15-min epochs, median
over satellites of the per-satellite 3-D RMS, post rule; old rule in brackets): GPS 1.36 m
(1.36), Galileo 0.88 m (0.88) with 64 % of the precise epochs covered (38 %), GLONASS 2.83 m
(2.84); with Galileo 45 min before toe it was 0.92 m, with GLONASS 30 min 2.91 m, and with
Galileo records ranked by plain |t - toe| (step 5) 0.89 m.

E14 and E18 (e ~ 0.16; used only with ``include_unhealthy``), measured the same way on their
I/NAV records: 0.96/1.21 m within 15 min after toe, flat to 1.5 h after (1.5-2 h: 1.49/5.98,
2-2.5 h: 12.4/43.4), but 1.88/4.53 m already within 15 min before toe (0.5-0.75 h before:
17.2/43.9): 1.5 h after toe, none before.

BeiDou has no precise product in refdata: its limits come from the ICD's 1-h update interval
(BDS-SIS-ICD-B1I 5.2.4, from memory): up to 2 h after toe (one missed update) and 1 h before.
A check without truth, measured here on the same MOJN file: a record evaluated at the toe of a
later (or earlier) record of the same satellite differs from that record by median 0.08 / 0.28 /
2.45 m at 1 / 2 / 3 h after its toe and 0.14 / 2.75 m at 1 / 2 h before (MEO/IGSO, 256/199/149
pairs; GEO 0.37 / 0.56 / 0.79 m after, 0.42 / 4.32 m before).  QZSS (no product either): half
the fit interval, 2 h when the flag is 0 (IS-QZSS-PNT 4.1.2.4).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from gnssrel.orbits.status import (
    BROADCAST_CODES,
    STATUS_EXCLUDED,
    STATUS_NO_EPHEMERIS,
    STATUS_NO_SATELLITE,
    STATUS_NOT_TRANSMITTED,
    STATUS_OK,
    STATUS_UNHEALTHY,
    codes_of,
)
from gnssrel.systems import system_model

SIGNAL_HEALTH_BITS = {("G", "CNAV"): {"L1": 0b100, "L2": 0b010, "L5": 0b001},
                      ("J", "CNAV"): {"L1": 0b100, "L2": 0b010, "L5": 0b001}}
"""The health word of a record type that holds one bit per carrier: {carrier: bit} (1 = that
carrier's signals are bad or unavailable).  GPS CNAV: Message Type 10 bits 52, 53, 54 are the
L1, L2 and L5 health (IS-GPS-200 30.3.3.1.1.2), and the RINEX 4 field holds them as one number
with L1 the most significant bit, L5 the least (RINEX 4.00 Table A32 note, from memory; the
order is confirmed by BRD400DLR 2023-071: every CNAV record of the 25 satellites, the seven
Block IIR-M ones without any L5 signal among them, holds 1 = L5 unavailable, while their LNAV
health is 0).  QZSS CNAV: the same three bits (IS-QZSS-PNT 5.4.1, from memory).  Record types
not listed here (LNAV, CNV2 with its single L1C bit, BeiDou, Galileo, ...) are healthy only with
a health word of 0."""

DEFAULT_HEALTH_SIGNALS = ("L1", "L2")
"""The carriers whose health counts by default: the pair the GPS/QZSS broadcast clock refers to
(IS-GPS-200 20.3.3.3.3.2: L1 P(Y)/L2 P(Y)), the pair of orbits, relativity, clocks and the
dual-frequency audit; a use of other carriers passes its own to :func:`healthy_records`."""

RULE_NAMES = ("post", "receiver")
DEFAULT_RULE = "post"
RULE_HELP = ("which broadcast record serves each epoch: 'post' (default) the nearest valid record, "
             "whatever its transmission time; 'receiver' only records already transmitted, as a "
             "receiver in real time would have them")
"""The ``--rule`` option's help text, the same in every command."""

STATUS_CODES = codes_of(BROADCAST_CODES)
"""Status of each (epoch, satellite) state: the broadcast rows of the one table of codes,
:data:`gnssrel.orbits.status.STATUS_CODES`; code 4 happens under the receiver rule only.
:func:`status_codes` gives the texts with the limits of the systems at hand."""


@dataclass(frozen=True)
class SystemLimits:
    max_age_after_s: float                # t - reference <= this (t at or after the reference)
    max_age_before_s: float               # reference - t <= this (t before the reference)
    use_fit_interval: bool = False        # both limits = fit_interval_h / 2 where the record gives one
    preferred_nav_types: tuple = ()       # earlier = preferred
    excluded_svs: tuple = ()
    napa_is_unhealthy: bool = False       # Galileo SISA "no accuracy prediction available"
    limit_text: str = ""                  # for the status text
    satellite_limits: tuple = ()          # (sv, max_age_after_s, max_age_before_s) overrides


SYSTEM_LIMITS = {
    # issue 14: LNAV (D1/D2) records stay preferred, the RINEX 4 CNAV/CNV1/CNV2 ones serve the
    # epochs no legacy record covers (results on files without them are unchanged).
    "G": SystemLimits(2 * 3600.0, 2 * 3600.0, use_fit_interval=True, preferred_nav_types=("LNAV", "CNAV", "CNV2"),
                      limit_text="GPS within half the fit interval of toe (2 h for 4 h)"),
    "J": SystemLimits(1 * 3600.0, 1 * 3600.0, use_fit_interval=True, preferred_nav_types=("LNAV", "CNAV", "CNV2"),
                      limit_text="QZSS within half the fit interval of toe (1 h for 2 h)"),
    "E": SystemLimits(3 * 3600.0, 0.5 * 3600.0, preferred_nav_types=("INAV", "FNAV"),
                      excluded_svs=("E14", "E18"), napa_is_unhealthy=True,
                      limit_text="Galileo 3 h after toe, 30 min before (E14, E18: 1.5 h after, none before)",
                      satellite_limits=(("E14", 1.5 * 3600.0, 0.0), ("E18", 1.5 * 3600.0, 0.0))),
    "C": SystemLimits(2 * 3600.0, 1 * 3600.0, preferred_nav_types=("D1", "D2", "CNV1", "CNV2"),
                      limit_text="BeiDou 2 h after toe, 1 h before"),
    "R": SystemLimits(20 * 60.0, 20 * 60.0, limit_text="GLONASS within 20 min of t_b"),
    # issue 14, both from memory: NavIC ephemerides are refreshed every 2 h (IRNSS SPS ICD 1.1);
    # the SBAS GEO navigation message times out after a few minutes (RTCA DO-229 A.4.4.11).
    "I": SystemLimits(2 * 3600.0, 2 * 3600.0, limit_text="NavIC within 2 h of toe"),
    "S": SystemLimits(6 * 60.0, 6 * 60.0, limit_text="SBAS within 6 min of t_0"),
}
"""Per-system limits shared by both rules (figures and sources in the module text), counted
from each record's reference time (``reference_column`` of :data:`gnssrel.systems.SYSTEM_MODELS`).
E14 and E18 (in eccentric orbits after their 2014 launch, flagged unhealthy) are excluded, and
when asked for (``include_unhealthy``) kept to their own, shorter limits (module text)."""


@dataclass(frozen=True)
class SelectionRule:
    name: str
    require_transmitted: bool             # only records with transmission_time <= t (where given)


RULES = {"post": SelectionRule("post", require_transmitted=False),
         "receiver": SelectionRule("receiver", require_transmitted=True)}


def excluded_satellites(systems=None) -> set[str]:
    """The satellites the rules exclude (:data:`SYSTEM_LIMITS` ``excluded_svs``) for ``systems``
    (letters; None: every system)."""
    return {sv for s in (systems or SYSTEM_LIMITS) if s in SYSTEM_LIMITS for sv in SYSTEM_LIMITS[s].excluded_svs}


def get_rule(rule: str) -> SelectionRule:
    """The named rule; a clear error for an unknown name."""
    try:
        return RULES[rule]
    except (KeyError, TypeError):
        raise ValueError(f"unknown selection rule {rule!r}; use one of {', '.join(RULE_NAMES)}") from None


def status_codes(rule: str = DEFAULT_RULE, systems: str = "GJECR") -> dict:
    """``STATUS_CODES`` with code 1 naming the limits of ``systems`` and code 4 the rule."""
    get_rule(rule)
    codes = dict(STATUS_CODES)
    texts = [SYSTEM_LIMITS[s].limit_text for s in "GJECRIS" if s in systems and s in SYSTEM_LIMITS]
    if texts:
        codes[1] = f"no record within the maximum age ({'; '.join(texts)})"
    if rule == "post":
        codes[4] += " (receiver rule only; not used by the post rule)"
    return codes


def _limits_s(rows: pd.DataFrame, limits: SystemLimits, sv: str) -> tuple[np.ndarray, np.ndarray]:
    own = {name: (a, b) for name, a, b in limits.satellite_limits}
    after_s, before_s = own.get(sv, (limits.max_age_after_s, limits.max_age_before_s))
    after = np.full(len(rows), after_s)
    before = np.full(len(rows), before_s)
    if limits.use_fit_interval and "fit_interval_h" in rows:
        fit_h = rows["fit_interval_h"].to_numpy(dtype=np.float64)
        # RINEX 2 writes 0 for "4 h" (a flag); only hour counts >= 2 are read as hours.
        given = np.isfinite(fit_h) & (fit_h >= 2.0)
        after = np.where(given, fit_h * 1800.0, after)
        before = np.where(given, fit_h * 1800.0, before)
    return after, before


def healthy_records(rows: pd.DataFrame, system: str, signals=DEFAULT_HEALTH_SIGNALS) -> np.ndarray:
    """Per record: healthy for a use of the carriers ``signals`` (module text, step 3)."""
    return _healthy(rows, SYSTEM_LIMITS[system], signals, system)


def _healthy(rows: pd.DataFrame, limits: SystemLimits, signals=DEFAULT_HEALTH_SIGNALS,
             system: str | None = None) -> np.ndarray:
    health = rows["health"].to_numpy(dtype=np.float64) if "health" in rows else np.zeros(len(rows))
    ok = health == 0
    if system is None and len(rows) and "sv" in rows:
        system = str(rows["sv"].iloc[0])[:1]
    kinds = rows["nav_type"].to_numpy() if "nav_type" in rows else None
    for (letter, kind), bits in SIGNAL_HEALTH_BITS.items():
        if letter != system or kinds is None:
            continue
        mask = sum(bits.get(signal, 0) for signal in signals)
        of_kind = kinds == kind
        if of_kind.any():
            word = health[of_kind]
            whole = np.isfinite(word) & (word >= 0) & (word == np.floor(word))
            ok[of_kind] = whole & ((np.where(whole, word, 0).astype(np.int64) & mask) == 0)
    if limits.napa_is_unhealthy and "accuracy_m" in rows:
        ok &= ~(rows["accuracy_m"].to_numpy(dtype=np.float64) < 0)
    return ok


def _ns(values) -> np.ndarray:
    return np.asarray(values).astype("datetime64[ns]").astype(np.int64)


def _newest_first(table: pd.DataFrame, rows_at: np.ndarray, reference_column: str) -> np.ndarray:
    """``rows_at`` ordered newest first (reference time, then transmission time, then table
    order, all descending), so that ``argmin`` gives ties to the newer record."""
    keys = [rows_at]
    if "transmission_time" in table:
        tx = np.asarray(table["transmission_time"].to_numpy()[rows_at]).astype("datetime64[ns]")
        keys.append(np.where(np.isnat(tx), np.iinfo(np.int64).min, tx.astype(np.int64)))
    keys.append(_ns(table[reference_column].to_numpy()[rows_at]))
    return rows_at[np.lexsort(keys)][::-1]


def select_ephemerides(table: pd.DataFrame, svs, times, system: str, include_unhealthy: bool = False,
                       rule: str = DEFAULT_RULE):
    """Choose a record per (epoch, satellite) for one system.

    table: the system's ephemeris DataFrame (contract columns, RangeIndex).
    svs: satellite names (n_sv); times: datetime64[ns] GPST (n_time).
    rule: ``"post"`` (default) or ``"receiver"`` (module text).
    Returns (row_index (n_time, n_sv) int64, the table row or -1 for none;
    status (n_time, n_sv) int8, codes in ``STATUS_CODES``).
    Loops over satellites only; epochs are handled as arrays.
    """
    chosen_rule = get_rule(rule)
    limits = SYSTEM_LIMITS[system]
    reference = system_model(system).reference_column
    t_ns = _ns(times)
    n_time, svs = t_ns.size, list(svs)
    row_index = np.full((n_time, len(svs)), -1, dtype=np.int64)
    status = np.full((n_time, len(svs)), STATUS_NO_SATELLITE, dtype=np.int8)
    if table is None or len(table) == 0:
        return row_index, status
    sv_col = table["sv"].to_numpy()
    for j, sv in enumerate(svs):
        if sv in limits.excluded_svs and not include_unhealthy:
            status[:, j] = STATUS_EXCLUDED
            continue
        rows_at = np.flatnonzero(sv_col == sv)
        if rows_at.size == 0:
            continue
        rows_at = _newest_first(table, rows_at, reference)
        rows = table.iloc[rows_at]
        dt_s = (t_ns[:, None] - _ns(rows[reference])[None, :]) / 1e9
        after, before = _limits_s(rows, limits, sv)
        # nearness: |t - reference| in units of the limit on its side (in time when <= 1); where the
        # limits are equal on both sides it orders the records as plain |t - reference| does
        if np.array_equal(after, before):
            nearness = np.abs(dt_s)
            in_time = nearness <= after[None, :]
        else:
            with np.errstate(divide="ignore", invalid="ignore"):    # a zero limit: never in time
                nearness = np.where(dt_s >= 0, dt_s / after[None, :], -dt_s / before[None, :])
            in_time = nearness <= 1.0
        transmitted = np.ones_like(in_time)
        if chosen_rule.require_transmitted and "transmission_time" in rows:
            tx = np.asarray(rows["transmission_time"]).astype("datetime64[ns]")
            transmitted = np.isnat(tx)[None, :] | (tx.astype(np.int64)[None, :] <= t_ns[:, None])
        healthy = _healthy(rows, limits, system=system)[None, :] | include_unhealthy
        usable = in_time & transmitted & healthy
        rank = np.zeros(rows_at.size)
        if limits.preferred_nav_types and "nav_type" in rows:
            kinds = rows["nav_type"].to_numpy()
            for k, kind in enumerate(limits.preferred_nav_types):
                rank = np.where(kinds == kind, k, rank)
            rank = np.where(np.isin(kinds, limits.preferred_nav_types), rank,
                            len(limits.preferred_nav_types))
        score = np.where(usable, rank[None, :] * 1e7 + nearness, np.inf)
        best = np.argmin(score, axis=1)
        found = np.isfinite(score[np.arange(n_time), best])
        row_index[:, j] = np.where(found, rows_at[best], -1)
        # The reason: a healthy record in time that is not chosen was not yet transmitted.
        status[:, j] = np.select(
            [found, (in_time & healthy).any(axis=1), in_time.any(axis=1)],
            [STATUS_OK, STATUS_NOT_TRANSMITTED, STATUS_UNHEALTHY], STATUS_NO_EPHEMERIS)
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

