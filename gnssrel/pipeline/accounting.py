"""The accounting of an analysis: one ledger of everything read and what the stages did with it.

Readers attach their own counts (``nav.accounting``, ``ds.attrs["accounting"]``,
``df.attrs["accounting"]``; see :mod:`gnssrel.accounting`).  A command gathers
them into one :class:`~gnssrel.accounting.Ledger` with :func:`gather`, and the
stages retire what they kept aside: navigation records never chosen for a state
(:func:`retire_navigation`), precise records outside the window
(:func:`retire_outside_window`), observations the audit could not use
(:mod:`gnssrel.audit.observables`).  :func:`block_lines` gives the text shown after
a command's table: only the lines with drops, then a total line.

Before a reader counts, its item is counted here from the table it returned
(every row read and kept), so the balance read == used + dropped always holds.
"""

from __future__ import annotations

import numpy as np

from gnssrel.accounting import READ, USED, Ledger
from gnssrel.audit.observables import pseudorange_counts
from gnssrel.audit.positioning import DOP_GATE
from gnssrel.orbits import selection
from gnssrel.orbits.status import STATUS_CODES, STATUS_EXCLUDED

UNHEALTHY = "unhealthy"
EXCLUDED = STATUS_CODES[STATUS_EXCLUDED]            # "excluded by rule", as the state histories say
OUTSIDE_WINDOW = "outside the time window"
SUPERSEDED = "superseded (never the nearest record)"
NOT_REQUESTED = "system not requested"
NOT_ON_STEP = "not on the --step grid"


def ledger_of(obj) -> Ledger | None:
    """The reader's ledger of a NavigationData, Dataset or DataFrame (None when it has none)."""
    if obj is None:
        return None
    found = getattr(obj, "accounting", None)
    if found is None:
        attrs = getattr(obj, "attrs", None)
        found = attrs.get("accounting") if isinstance(attrs, dict) else None
    if found is None:
        return None
    return found if isinstance(found, Ledger) else Ledger.from_dict(found)


def gather(*ledgers) -> Ledger:
    """One new ledger holding the counts of every ledger (or dict, or None) given."""
    out = Ledger()
    for ledger in ledgers:
        out.merge(ledger)
    return out


def _ensure_counted(ledger: Ledger, item: str, system: str, n_kept: int) -> None:
    """Count ``n_kept`` records as read and used when no reader counted this item and system."""
    if n_kept and ledger.count(item, system, READ) == 0:
        ledger.read(item, system, n_kept)
        ledger.used(item, system, n_kept)


def navigation_ledger(nav) -> Ledger:
    """The navigation reader's ledger (a copy), or one counted from the tables."""
    ledger = gather(ledger_of(nav))
    for letter, table in nav.ephemerides.items():
        _ensure_counted(ledger, "navigation_records", letter, len(table))
    return ledger


def used_rows(states_list) -> dict[str, np.ndarray]:
    """{system letter: unique table rows} chosen by any of the state Datasets given."""
    rows: dict[str, list] = {}
    for states in states_list:
        if states is None or "ephemeris_row" not in states:
            continue
        sv = np.asarray(states["sv"].values).astype(str)
        r = np.asarray(states["ephemeris_row"].transpose("time", "sv").values)
        letters = np.array([name[:1] for name in sv])
        for letter in np.unique(letters):
            cols = letters == letter
            chosen = r[:, cols]
            rows.setdefault(str(letter), []).append(np.unique(chosen[chosen >= 0]))
    return {s: np.unique(np.concatenate(v)) for s, v in rows.items()}


def union_rows(*row_dicts) -> dict[str, np.ndarray]:
    """{system: rows} used by any of several stages."""
    out: dict[str, list] = {}
    for rows in row_dicts:
        for letter, r in (rows or {}).items():
            out.setdefault(letter, []).append(np.asarray(r, dtype=np.int64))
    return {s: np.unique(np.concatenate(v)) for s, v in out.items()}


def _validity_s(table, letter: str) -> tuple[np.ndarray, np.ndarray]:
    """Each record's validity after and before its reference time, s (the selection limits;
    4 h either way where the selection module gives none)."""
    n = len(table)
    limits = getattr(selection, "SYSTEM_LIMITS", {}).get(letter)
    own_limits = getattr(selection, "_limits_s", None)
    if limits is None or own_limits is None:
        return np.full(n, 4 * 3600.0), np.full(n, 4 * 3600.0)
    after, before = (np.asarray(v, dtype=float) for v in own_limits(table, limits, ""))
    sv = np.asarray(table["sv"]).astype(str)
    for name, *_ in getattr(limits, "satellite_limits", ()):     # per-satellite limits (E14, E18)
        at = sv == name
        if at.any():
            a, b = own_limits(table[at], limits, name)
            after[at], before[at] = a, b
    return after, before


def _unusable(table, letter: str, include_unhealthy: bool) -> tuple[np.ndarray, np.ndarray]:
    """(unhealthy, excluded by rule) per record, as the selection rules judge them."""
    n = len(table)
    if include_unhealthy:
        return np.zeros(n, bool), np.zeros(n, bool)
    limits = getattr(selection, "SYSTEM_LIMITS", {}).get(letter)
    healthy = getattr(selection, "_healthy", None)
    if limits is not None and healthy is not None:
        unhealthy = ~np.asarray(healthy(table, limits), bool)
    else:
        unhealthy = ~(np.asarray(table["health"], dtype=float) == 0) if "health" in table else np.zeros(n, bool)
    excluded = np.isin(np.asarray(table["sv"]).astype(str), list(getattr(limits, "excluded_svs", ()) or ()))
    return unhealthy & ~excluded, excluded


def retire_navigation(ledger: Ledger, nav, states_list, systems, start, end,
                      include_unhealthy: bool = False) -> None:
    """Retire the navigation records no state used, each with its reason (vectorized per system).

    Reasons, first that applies: the system was not requested; the satellite is
    excluded by rule, or the record unhealthy (and unhealthy records were not asked
    for); its reference time (toe, t_b) lies farther from [start, end] than its
    validity (the selection's limits); else it was superseded (a nearer or
    preferred record served every epoch it could have).
    """
    rows = states_list if isinstance(states_list, dict) else used_rows(states_list)
    wanted = set(systems or "")
    for letter, table in nav.ephemerides.items():
        n = len(table)
        if n == 0:
            continue
        unused = np.ones(n, bool)
        chosen = rows.get(letter, np.array([], dtype=np.int64))
        unused[chosen[(chosen >= 0) & (chosen < n)]] = False
        if not unused.any():
            continue
        if letter not in wanted:
            ledger.retire("navigation_records", letter, NOT_REQUESTED, int(unused.sum()))
            continue
        unhealthy, excluded = _unusable(table, letter, include_unhealthy)
        excluded &= unused
        unhealthy &= unused & ~excluded
        ref = np.asarray(table["toe" if "toe" in table else "toc"]).astype("datetime64[ns]")
        after, before = (np.round(v * 1e9).astype(np.int64).astype("timedelta64[ns]")
                         for v in _validity_s(table, letter))
        outside = np.isnat(ref) | (ref + after < np.datetime64(start, "ns")) | \
            (ref - before > np.datetime64(end, "ns"))
        outside &= unused & ~unhealthy & ~excluded
        superseded = unused & ~unhealthy & ~excluded & ~outside
        for reason, mask in ((EXCLUDED, excluded), (UNHEALTHY, unhealthy), (OUTSIDE_WINDOW, outside),
                             (SUPERSEDED, superseded)):
            ledger.retire("navigation_records", letter, reason, int(mask.sum()))


def precise_ledger(ds, item: str, variable: str) -> Ledger:
    """The SP3/clock reader's ledger (a copy), or one counted from the finite values of ``variable``."""
    ledger = gather(ledger_of(ds))
    if ds is None or variable not in ds:
        return ledger
    counts = _finite_by_system(ds, variable, np.ones(ds.sizes["time"], bool))
    for letter, n in counts.items():
        _ensure_counted(ledger, item, letter, n)
    return ledger


def _finite_by_system(ds, variable: str, time_mask) -> dict[str, int]:
    values = np.asarray(ds[variable].transpose("time", "sv", ...).values, dtype=float)
    finite = np.isfinite(values)
    while finite.ndim > 2:
        finite = finite.all(axis=-1)
    finite = finite[np.asarray(time_mask, bool)]
    per_sv = finite.sum(axis=0)
    sv = np.asarray(ds["sv"].values).astype(str)
    out: dict[str, int] = {}
    for name, n in zip(sv, per_sv):
        out[name[:1]] = out.get(name[:1], 0) + int(n)
    return out


def retire_outside_window(ledger: Ledger, ds, item: str, variable: str, keep_times, systems=None,
                          reason: str = OUTSIDE_WINDOW) -> None:
    """Retire the records of ``ds`` at epochs not in ``keep_times`` (and of systems not requested)."""
    if ds is None or variable not in ds:
        return
    t = np.asarray(ds["time"].values).astype("datetime64[ns]")
    inside = np.isin(t, np.asarray(keep_times).astype("datetime64[ns]"))
    outside_counts = _finite_by_system(ds, variable, ~inside)
    inside_counts = _finite_by_system(ds, variable, inside)
    for letter in set(outside_counts) | set(inside_counts):
        if systems and letter not in systems:
            ledger.retire(item, letter, NOT_REQUESTED,
                          outside_counts.get(letter, 0) + inside_counts.get(letter, 0))
        else:
            ledger.retire(item, letter, reason, outside_counts.get(letter, 0))


# -- the terminal ------------------------------------------------------------------------------

def totals(accounting: dict) -> tuple[int, int, int]:
    """(read, used, dropped) over every item and system of a summary's accounting."""
    ledger = Ledger.from_dict(accounting)
    read = sum(ledger.count(item) for item in ledger.counts)
    used = sum(ledger.count(item, outcome=USED) for item in ledger.counts)
    return read, used, read - used


def block_lines(accounting: dict | None, verbose: bool = False) -> list[str]:
    """The accounting block: lines of the items/systems with drops, a total line, the warnings."""
    if not accounting:
        return []
    ledger = Ledger.from_dict(accounting)
    lines = [f"  {line}" for line in ledger.text_lines() if "; dropped:" in line]
    read, used, dropped = totals(accounting)
    bad = ledger.unbalanced()
    n_warn = len(ledger.warnings) + ledger.warnings_dropped
    total = (f"accounting: {read} records and observations read, {used} used, {dropped} dropped "
             f"with a reason" + ("" if not bad else f"; UNBALANCED: {'; '.join(bad)}"))
    if n_warn:
        total += f"; {n_warn} warning{'s' if n_warn != 1 else ''}" + ("" if verbose else " (-v lists them)")
    out = [total] + lines
    if verbose and n_warn:
        out += [f"  warning: {w}" for w in ledger.warnings]
        if ledger.warnings_dropped:
            out.append(f"  ... and {ledger.warnings_dropped} more warnings")
    return out



DUPLICATE = "duplicate epoch or satellite (first kept)"


def unique_keys(ds, item: str, variable: str):
    """``ds`` with each time and satellite once (the first), times increasing; the records
    left out retired as duplicates in ``ds.attrs["accounting"]``.  Precise products with a
    repeated epoch block would otherwise break the interpolation and the comparisons."""
    if ds is None:
        return ds
    t = np.asarray(ds["time"].values)
    sv = np.asarray(ds["sv"].values)
    _, first_t = np.unique(t, return_index=True)
    _, first_sv = np.unique(sv, return_index=True)
    if first_t.size == t.size and first_sv.size == sv.size and (t.size < 2 or (np.diff(t) > np.timedelta64(0)).all()):
        return ds
    ledger = precise_ledger(ds, item, variable) if variable in ds else gather(ledger_of(ds))
    before = _finite_by_system(ds, variable, np.ones(t.size, bool)) if variable in ds else {}
    out = ds.isel(time=first_t, sv=np.sort(first_sv))
    after = _finite_by_system(out, variable, np.ones(out.sizes["time"], bool)) if variable in out else {}
    for letter, n in before.items():
        ledger.retire(item, letter, DUPLICATE, n - after.get(letter, 0))
    out.attrs = dict(ds.attrs)
    out.attrs["accounting"] = ledger.as_dict()
    return out


def retire_beyond_reach(ledger: Ledger, ds, item: str, variable: str, first, last, reach_s: float,
                        systems=None) -> None:
    """Retire the records of ``ds`` farther than ``reach_s`` outside [first, last] (the epochs an
    interpolation of the window can touch count as used)."""
    if ds is None or variable not in ds:
        return
    t = np.asarray(ds["time"].values).astype("datetime64[ns]")
    reach = np.timedelta64(int(reach_s * 1e9), "ns")
    inside = t[(t >= np.datetime64(first, "ns") - reach) & (t <= np.datetime64(last, "ns") + reach)]
    retire_outside_window(ledger, ds, item, variable, inside, systems)


def sp3_reach_s(sp3) -> float:
    """How far beyond a window the SP3 interpolation reaches: half its 10-node Lagrange window."""
    return 5 * float(sp3.attrs.get("epoch_interval_s") or 900.0)


# -- the audit ---------------------------------------------------------------------------------

NO_POSITION = "no position (too few usable satellites)"
NO_POSITION_DOP = "no position (PDOP above the gate)"
NO_EPOCH = "no epoch of the log at its time"


def observation_ledger(obs_ds) -> Ledger:
    """The observation reader's ledger (a copy), with the pseudoranges and epochs of the Dataset
    counted where the reader did not count them."""
    ledger = gather(ledger_of(obs_ds))
    for letter, n in pseudorange_counts(obs_ds).items():
        _ensure_counted(ledger, "observations", letter, n)
    if ledger.count("epochs") == 0:
        _ensure_counted(ledger, "epochs", "-", int(obs_ds.sizes.get("time", 0)))
    return ledger


def decimate_observations(obs_ds, keep):
    """``obs_ds`` at the epochs of the boolean ``keep``; the pseudoranges and epochs left out are
    retired as not on the --step grid in the result's ``attrs["accounting"]``."""
    ledger = observation_ledger(obs_ds)
    for letter, n in pseudorange_counts(obs_ds, ~keep).items():
        ledger.retire("observations", letter, NOT_ON_STEP, n)
    epoch_system = next(iter(ledger.counts.get("epochs", {"-": 0})), "-")
    ledger.retire("epochs", epoch_system, NOT_ON_STEP, int((~keep).sum()))
    out = obs_ds.isel(time=np.flatnonzero(keep))
    out.attrs = dict(obs_ds.attrs)
    out.attrs["accounting"] = ledger.as_dict()
    return out


def audit_accounting(result, obs_ds, nav, systems, precise=None, fixes=None, receiver_clocks=None,
                     include_unhealthy: bool = False, navigation: bool = True) -> Ledger:
    """One ledger for an audit: navigation records, observations, epochs, precise records,
    fixes and clock-table rows read, and what the audit did with them.  ``navigation=False``
    leaves the navigation records to the caller (a report counts them once for every stage)."""
    ledger = navigation_ledger(nav) if navigation else Ledger()
    obs_ledger = observation_ledger(obs_ds)
    obs_ledger.merge(result.extra.get("observation_drops"))
    epoch_system = next(iter(obs_ledger.counts.get("epochs", {"-": 0})), "-")
    applied = result.positions.get("applied")
    if applied is not None:
        missing = ~np.isfinite(applied["x_m"].to_numpy())
        gated = missing & (applied["no_fix_reason"].to_numpy() == DOP_GATE) if "no_fix_reason" in applied \
            else np.zeros(missing.shape, bool)
        obs_ledger.retire("epochs", epoch_system, NO_POSITION, int((missing & ~gated).sum()))
        if gated.any():                 # issue 13: a fix whose geometry is too poor is not given
            obs_ledger.retire("epochs", epoch_system, NO_POSITION_DOP, int(gated.sum()))
    ledger.merge(obs_ledger)
    times = np.asarray(obs_ds["time"].values).astype("datetime64[ns]")
    if times.size and navigation:
        retire_navigation(ledger, nav, result.extra.get("ephemeris_rows", {}), systems, times.min(), times.max(),
                          include_unhealthy)
    if precise is not None and times.size:
        orbits, clocks = precise.get("orbits"), precise.get("clocks")
        ledger.merge(precise_ledger(orbits, "sp3_records", "position_ecef_m"))
        retire_beyond_reach(ledger, orbits, "sp3_records", "position_ecef_m", times.min(), times.max(),
                            sp3_reach_s(orbits), systems)
        if clocks is not None and clocks is not orbits and "position_ecef_m" not in clocks:
            ledger.merge(precise_ledger(clocks, "clock_records", "clock_s"))
            t = np.asarray(clocks["time"].values).astype("datetime64[ns]")
            step_s = float(np.median(np.diff(t)) / np.timedelta64(1, "s")) if t.size > 1 else 0.0
            retire_beyond_reach(ledger, clocks, "clock_records", "clock_s", times.min(), times.max(), step_s,
                                systems)
    if fixes is not None:
        fix_ledger = gather(ledger_of(fixes))
        _ensure_counted(fix_ledger, "fixes", "-", len(fixes))
        matched = (result.firmware or {}).get("n_matched", {}).get("applied")
        if matched is not None:
            fix_system = next(iter(fix_ledger.counts.get("fixes", {"-": 0})), "-")
            fix_ledger.retire("fixes", fix_system, NO_EPOCH, max(len(fixes) - int(matched), 0))
        ledger.merge(fix_ledger)
    if receiver_clocks is not None:
        ledger.merge(receiver_clock_rows_ledger(receiver_clocks))
    return ledger


def receiver_clock_rows_ledger(receiver_clocks) -> Ledger:
    """The clock-table reader's ledger (a copy), with the rows of the table counted where it did not count them."""
    rows_ledger = gather(ledger_of(receiver_clocks))
    letters = receiver_clocks["sv"].astype(str).str[0].to_numpy()
    for letter in np.unique(letters):
        _ensure_counted(rows_ledger, "receiver_clock_rows", str(letter), int((letters == letter).sum()))
    return rows_ledger
