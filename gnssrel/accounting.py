"""Where every record and observation went: used, or dropped with a counted reason.

The promise of gnssrel: every observation and every navigation, SP3 or clock
record read is either used or counted with a reason.  A :class:`Ledger` holds
those counts, per *item* (what is counted), per *system* letter and per
*outcome*, plus the warnings (``"file:line: message"``) that name where a
damaged record was.

The counts of one item and system balance::

    read == used + sum(every other outcome)

which :meth:`Ledger.unbalanced` checks (the tests call it on every summary).

Items used across gnssrel (the names are a contract: summaries and the report
show them):

``navigation_records``  broadcast records of a navigation file
``sp3_records``         satellite position records of an SP3 file
``clock_records``       satellite clock records of a RINEX clock file
``observations``        pseudoranges (one per satellite, signal and epoch)
``epochs``              observation epochs
``fixes``               receiver position fixes (NMEA GGA, CSV)
``receiver_clock_rows`` rows of a receiver clock table (its satellite clock corrections)
``receiver_clock_series_rows`` rows of a receiver's own clock bias/drift series (system "-")
``antenna_blocks``      antenna blocks of an ANTEX file (system: the satellite's letter, "-" for
                        receiver antennas)

Outcomes are short phrases (``"used"``, ``"damaged"``, ``"not read: SBAS"``,
``"no satellite state"`` ...); ``"read"`` is the total and ``"used"`` what went
on to the results.  System ``"-"`` stands for a count that belongs to no system
(a damaged line whose satellite cannot be told).

A ledger is a plain dictionary underneath (:meth:`as_dict`), so it can sit in
``Dataset.attrs["accounting"]`` or a summary's ``"accounting"`` key and be read
back with :meth:`from_dict`.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field

READ, USED = "read", "used"
NO_SYSTEM = "-"
MAX_WARNINGS = 200
"""Warnings kept in full; beyond this only their number grows (``warnings_dropped``)."""

ITEMS = ("navigation_records", "sp3_records", "clock_records", "epochs", "observations",
         "fixes", "receiver_clock_rows", "receiver_clock_series_rows", "antenna_blocks")


@dataclass
class Ledger:
    """Counts of what was read, used and dropped (by reason), and the warnings behind them."""

    counts: dict = field(default_factory=lambda: defaultdict(lambda: defaultdict(dict)))
    warnings: list = field(default_factory=list)
    warnings_dropped: int = 0

    # -- recording ---------------------------------------------------------------------------
    def add(self, item: str, system: str, outcome: str, n: int = 1) -> None:
        """Add ``n`` to one count (``outcome`` may be ``"read"``, ``"used"`` or a reason)."""
        n = int(n)
        if n == 0:
            return
        cell = self.counts[item][system or NO_SYSTEM]
        cell[outcome] = cell.get(outcome, 0) + n

    def read(self, item: str, system: str, n: int = 1) -> None:
        self.add(item, system, READ, n)

    def used(self, item: str, system: str, n: int = 1) -> None:
        self.add(item, system, USED, n)

    def drop(self, item: str, system: str, reason: str, n: int = 1) -> None:
        """Count ``n`` of ``item`` dropped for ``reason`` (they were counted as read before)."""
        if reason in (READ, USED):
            raise ValueError(f"a drop needs a reason, not {reason!r}")
        self.add(item, system, reason, n)

    def retire(self, item: str, system: str, reason: str, n: int = 1) -> None:
        """Move ``n`` from "used" to a drop reason: a later stage did not use what a reader kept.

        Readers count every record they keep as used; a stage that then leaves some
        of them aside (outside the time window, unhealthy, never the nearest record)
        retires them with its reason, so the balance still holds.
        """
        if reason in (READ, USED):
            raise ValueError(f"a drop needs a reason, not {reason!r}")
        self.add(item, system, USED, -int(n))
        self.add(item, system, reason, n)

    def warn(self, message: str, path=None, line: int | None = None) -> None:
        """Keep a warning naming the file and line (``"file:line: message"``)."""
        where = ""
        if path is not None:
            where = f"{path}:{line}: " if line is not None else f"{path}: "
        if len(self.warnings) < MAX_WARNINGS:
            self.warnings.append(f"{where}{message}")
        else:
            self.warnings_dropped += 1

    def merge(self, other: Ledger | dict | None) -> Ledger:
        """Add another ledger's counts and warnings to this one; returns self."""
        if other is None:
            return self
        if isinstance(other, dict):
            other = Ledger.from_dict(other)
        for item, systems in other.counts.items():
            for system, outcomes in systems.items():
                for outcome, n in outcomes.items():
                    self.add(item, system, outcome, n)
        for w in other.warnings:
            if len(self.warnings) < MAX_WARNINGS:
                self.warnings.append(w)
            else:
                self.warnings_dropped += 1
        self.warnings_dropped += other.warnings_dropped
        return self

    # -- reading -----------------------------------------------------------------------------
    def count(self, item: str, system: str | None = None, outcome: str = READ) -> int:
        """One count; ``system=None`` sums over systems."""
        systems = self.counts.get(item, {})
        if system is not None:
            return int(systems.get(system, {}).get(outcome, 0))
        return int(sum(cell.get(outcome, 0) for cell in systems.values()))

    def dropped(self, item: str, system: str | None = None) -> dict[str, int]:
        """{reason: n} of one item (and system, or all systems)."""
        out: dict[str, int] = {}
        for s, cell in self.counts.get(item, {}).items():
            if system is not None and s != system:
                continue
            for outcome, n in cell.items():
                if outcome not in (READ, USED):
                    out[outcome] = out.get(outcome, 0) + n
        return out

    def unbalanced(self) -> list[str]:
        """Cells where read != used + dropped: each a one-line description (empty = balanced)."""
        bad = []
        for item, systems in self.counts.items():
            for system, cell in systems.items():
                read = cell.get(READ, 0)
                rest = sum(n for o, n in cell.items() if o != READ)
                if read != rest:
                    bad.append(f"{item} {system}: read {read} but used + dropped = {rest} ({dict(cell)})")
        return bad

    def as_dict(self) -> dict:
        """``{item: {system: {outcome: n}}, "warnings": [...], "warnings_dropped": n}`` (JSON-ready)."""
        out: dict = {}
        for item in sorted(self.counts, key=_item_order):
            systems = self.counts[item]
            out[item] = {s: {o: int(n) for o, n in _outcome_order(systems[s])} for s in
                         sorted(systems, key=_system_order)}
        out["warnings"] = list(self.warnings)
        if self.warnings_dropped:
            out["warnings_dropped"] = int(self.warnings_dropped)
        return out

    @classmethod
    def from_dict(cls, data: dict | None) -> Ledger:
        ledger = cls()
        for item, systems in (data or {}).items():
            if item == "warnings":
                ledger.warnings = list(systems)[:MAX_WARNINGS]
                continue
            if item == "warnings_dropped":
                ledger.warnings_dropped = int(systems)
                continue
            for system, outcomes in systems.items():
                for outcome, n in outcomes.items():
                    ledger.add(item, system, outcome, n)
        return ledger

    def text_lines(self) -> list[str]:
        """The accounting for the terminal: one line per item and system with a drop."""
        lines = []
        for item in sorted(self.counts, key=_item_order):
            for system in sorted(self.counts[item], key=_system_order):
                cell = self.counts[item][system]
                drops = {o: n for o, n in cell.items() if o not in (READ, USED)}
                label = item.replace("_", " ") + ("" if system == NO_SYSTEM else f" {system}")
                text = f"{label}: {cell.get(USED, 0)} used of {cell.get(READ, 0)} read"
                if drops:
                    text += "; dropped: " + ", ".join(f"{n} {o}" for o, n in
                                                      sorted(drops.items(), key=lambda kv: -kv[1]))
                lines.append(text)
        return lines


def _item_order(item: str) -> tuple:
    return (ITEMS.index(item) if item in ITEMS else len(ITEMS), item)


def _system_order(system: str) -> tuple:
    order = "GECJRIS"
    return (order.index(system) if system in order else len(order), system)


def _outcome_order(cell: dict):
    first = [(o, cell[o]) for o in (READ, USED) if o in cell]
    return first + sorted(((o, n) for o, n in cell.items() if o not in (READ, USED)), key=lambda kv: kv[0])
