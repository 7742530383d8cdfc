"""The findings of an analysis as sentences: every result computed, then what could not be judged and why.

:func:`report_findings` reads a :class:`~gnssrel.pipeline.results.ReportContent` and
returns :class:`Finding` records in reading order:

1. each receiver's firmware verdict where its fixes or clock table allowed one
   (``fault`` / ``consistent``);
2. every number computed (``result``): per receiver, the factor k of the periodic
   term fitted to its pseudoranges (per system, with the jackknife sigma) and the
   median position errors with the term applied and omitted; the precise-minus-broadcast
   clock comparison (k per system); the broadcast-against-precise orbit comparison;
3. what could not be judged, and why (``not-judged``).

The HTML findings box (:mod:`gnssrel.report.html`) and the terminal end of
``gnssrel report``/``demo`` (:mod:`gnssrel.jobs.report`) print the same list.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from gnssrel.text import fmt_k, in_system_order

FAULT, CONSISTENT, RESULT, NOT_JUDGED = "fault", "consistent", "result", "not-judged"

SYSTEM_NAMES = {"G": "GPS", "E": "Galileo", "C": "BeiDou", "J": "QZSS", "R": "GLONASS"}


@dataclass(frozen=True)
class Finding:
    kind: str                     # FAULT, CONSISTENT, RESULT or NOT_JUDGED
    text: str
    receiver: str | None = None


def _name(letter: str) -> str:
    return SYSTEM_NAMES.get(letter, letter)


def _short_status(status: str) -> str:
    return str(status).partition(":")[0].strip()


def _k_sentence(name: str, fits: dict) -> str | None:
    parts = []
    for s in in_system_order(fits):
        f = fits[s]
        if f.get("k") is None or not np.isfinite(f["k"]):
            continue
        expected = "" if f.get("expected_k", 1.0) == 1.0 else f", expected {f['expected_k']:g}"
        parts.append(f"{_name(s)} k = {fmt_k(f['k'], f.get('sigma'))} ({_short_status(f['status'])}{expected}, "
                     f"{f.get('n_sat', '?')} satellites)")
    if not parts:
        return None
    return (f"{name} log: factor k of the periodic relativistic term in the pseudoranges "
            f"(k = 1: as specified; jackknife σ): " + "; ".join(parts) + ".")


def _position_sentence(name: str, pos: dict) -> str | None:
    if not pos or pos.get("median_error_3d_m") is None:
        return None
    reference = pos.get("reference", "header")
    note = " (the header position is approximate)" if reference == "header" else ""
    solved = pos.get("n_epochs_solved")
    return (f"{name} positions: median 3-D error against the {reference} position{note} "
            f"{pos['median_error_3d_m']:.2f} m with the periodic term applied, "
            f"{pos['median_error_3d_m_without_periodic']:.2f} m with it omitted"
            + (f" ({solved} epochs solved)." if solved is not None else "."))


_SIGMA_STATUS = re.compile(r"^undetermined: sigma ([0-9.]+) > ([0-9.]+) \((.*)\)$")


def _undetermined_text(fits: dict, letters: list[str]) -> str:
    """'Galileo (σ 0.35), BeiDou (σ 2.64): σ above 0.25, the periodic term is too small ...', one
    clause per reason."""
    by_reason: dict[str, list[str]] = {}
    for s in letters:
        status = str(fits[s]["status"])
        match = _SIGMA_STATUS.match(status)
        if match:
            reason = f"σ above {match.group(2)}: {match.group(3)}"
            label = f"{_name(s)} (σ {match.group(1)})"
        else:
            reason, label = status.partition(":")[2].strip() or status, _name(s)
        by_reason.setdefault(reason, []).append(label)
    return "; ".join(f"{', '.join(labels)}: {reason}" for reason, labels in by_reason.items())


def _receiver_findings(r) -> tuple[list[Finding], list[Finding]]:
    """(verdict and results, not judged) of one receiver."""
    out, later = [], []
    v = r.verdict or {}
    if v.get("faulty") is True:
        out.append(Finding(FAULT, v.get("verdict", r.name), r.name))
    elif v.get("faulty") is False:
        out.append(Finding(CONSISTENT, v.get("verdict", r.name), r.name))
    audit = r.audit_summary or {}
    fits = audit.get("relativity_k") or {}
    for text in (_k_sentence(r.name, fits), _position_sentence(r.name, audit.get("position") or {})):
        if text:
            out.append(Finding(RESULT, text, r.name))
    if v.get("faulty") is None:
        fixes = audit.get("receiver_fixes") or {}
        if r.fixes_path and not fixes.get("closest"):
            why = "none of its fixes matched an epoch of the log"
        elif r.fixes_path or r.clocks_path:
            why = "its fixes cannot tell the hypotheses apart (margin too small)"
        else:
            why = "no receiver fixes (--receiver-fixes) or satellite-clock table (--receiver-clocks) were given"
        later.append(Finding(NOT_JUDGED, f"{r.name} firmware: {why} (the k of its log checks the physics: the "
                             "satellites' clocks, not the firmware).", r.name))
    undetermined = [s for s in in_system_order(fits) if str(fits[s].get("status", "")).startswith("undetermined")]
    if undetermined:
        later.append(Finding(NOT_JUDGED, f"{r.name} log, k undetermined: {_undetermined_text(fits, undetermined)}.",
                             r.name))
    pos = audit.get("position") or {}
    if pos and pos.get("median_error_3d_m") is None:
        later.append(Finding(NOT_JUDGED, f"{r.name} positions: not computed: "
                             f"{pos.get('why_none') or 'no epoch could be solved'}.", r.name))
    return out, later


def _clock_sentence(content) -> str | None:
    summary = content.clock_summary
    if not summary or not summary.get("by_system"):
        return None
    by = summary["by_system"]
    parts = [f"{_name(s)} k = {fmt_k(by[s]['convention_k'], by[s]['convention_k_sigma'])} "
             f"({by[s]['convention']}; median std {by[s]['median_std_ns']:.2f} ns, {by[s]['n_sat']} satellites)"
             for s in in_system_order(by)]
    source = f" ({content.clock_source})" if content.clock_source else ""
    return ("Precise minus broadcast clocks" + source + ", factor k of the periodic term they hold "
            "(0: excludes it, as the broadcast polynomial): " + "; ".join(parts) + ".")


def _orbit_sentence(content) -> str | None:
    summary = content.orbit_summary
    if not summary or not summary.get("by_system"):
        return None
    by = summary["by_system"]
    parts = []
    for s in in_system_order(by):
        e = by[s]
        radial = e.get("median_mean_radial_m")
        parts.append(f"{_name(s)} median 3-D RMS {e['median_rms_3d_m']:.2f} m (max {e['max_rms_3d_m']:.2f} m"
                     + (f", median mean radial {round(radial, 2) + 0.0:+.2f} m".replace("+0.00", "0.00")
                        if radial is not None else "")
                     + f", {e['n_sat']} satellites)")
    return ("Broadcast against precise orbits: " + "; ".join(parts) + ". The broadcast orbits refer to the "
            "antenna phase centre, the precise ones to the centre of mass (no antenna offsets applied).")


def report_findings(content) -> list[Finding]:
    """Every finding of ``content`` in reading order (see the module text)."""
    verdicts, results, later = [], [], []
    for r in content.receivers:
        first, last = _receiver_findings(r)
        verdicts += [f for f in first if f.kind in (FAULT, CONSISTENT)]
        results += [f for f in first if f.kind == RESULT]
        later += last
    for text in (_clock_sentence(content), _orbit_sentence(content)):
        if text:
            results.append(Finding(RESULT, text))
    clocks = (content.clock_summary or {}).get("by_system", {})
    open_k = [s for s in in_system_order(clocks) if clocks[s].get("convention") == "undetermined"]
    if open_k:
        later.append(Finding(NOT_JUDGED, "Precise clocks: convention undetermined for "
                             + ", ".join(f"{_name(s)} (σ {clocks[s]['convention_k_sigma']:.2f})" for s in open_k)
                             + ": the fitted k cannot tell 'includes the periodic term' (1) from 'excludes it' (0)."))
    inputs = content.inputs or {}
    if not content.clock_summary:
        why = ("the precise files do not cover the span" if inputs.get("sp3") or inputs.get("clock")
               else "no precise clock or SP3 file was given (--precise)")
        later.append(Finding(NOT_JUDGED, f"Broadcast against precise clocks: not computed: {why}."))
    if not content.orbit_summary:
        why = ("the SP3 epochs do not cover the span" if inputs.get("sp3")
               else "no SP3 file was given (--precise)")
        later.append(Finding(NOT_JUDGED, f"Broadcast against precise orbits: not computed: {why}."))
    return verdicts + results + later
