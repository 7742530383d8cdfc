"""A receiver's verdict, from the analysis only: its fixes, its clock table, its raw log.

Two of a receiver's own outputs can reveal a firmware fault:

* its position fixes, compared with gnssrel's positions under each hypothesis
  (``gnssrel.audit.firmware``): the closest hypothesis names how the firmware
  treated the periodic term (or the Earth-rotation correction);
* its satellite-clock table, whose fitted factor k (``gnssrel.clocks.firmware``)
  says whether the correction includes the periodic term (k = 1, as specified),
  leaves it out (k = 0), reverses (-1) or doubles (2) it.

The raw observations carry the satellites' true clocks whatever the firmware
does, so their k (near 1) checks the physics, not the firmware.
"""

from __future__ import annotations

import math

import numpy as np

from gnssrel.text import fmt_k, in_system_order

CONVENTION_TO_HYPOTHESIS = {"includes-periodic": "applied", "excludes-periodic": "omitted",
                            "reversed-periodic": "reversed", "doubled-periodic": "doubled"}
"""What a receiver clock table's convention means for how the firmware treats the term."""
STATUS_TO_HYPOTHESIS = {"as specified": "applied", "fault: periodic term missing": "omitted",
                        "fault: periodic term reversed": "reversed", "fault: periodic term doubled": "doubled",
                        "fault: periodic term applied to GLONASS": "added-to-glonass",
                        "fault: periodic term added where the rule says none": "added-where-none"}
FAULT_WORDS = {"omitted": "omits the periodic relativistic term",
               "reversed": "applies the periodic relativistic term with the wrong sign",
               "doubled": "applies the periodic relativistic term twice",
               "sagnac-omitted": "omits the Earth-rotation (Sagnac) correction",
               "added-to-glonass": "adds the periodic term to GLONASS clocks, which already hold it",
               "added-where-none": "adds the periodic term where the system's rule says none"}


def combined_k(fits: dict) -> tuple[float, float]:
    """Inverse-variance mean of per-system k (jackknife sigmas); NaN when no sigma is finite."""
    ks = np.array([f["k"] for f in fits.values() if f.get("sigma") and math.isfinite(f["sigma"])])
    sig = np.array([f["sigma"] for f in fits.values() if f.get("sigma") and math.isfinite(f["sigma"])])
    if ks.size == 0:
        return float("nan"), float("nan")
    w = 1.0 / sig**2
    return float((w * ks).sum() / w.sum()), float(1.0 / np.sqrt(w.sum()))


def _plain(value: float, digits: int = 3) -> float:
    """Rounded, without the minus sign of a negative zero (-0.000 reads as a fault sign)."""
    return round(float(value), digits) + 0.0


def _clock_convention(check: dict | None) -> tuple[str | None, dict]:
    if not check:
        return None, {}
    per = {s: e["convention"] for s, e in check["by_system"].items()}
    decided = {c for c in per.values() if c != "undetermined"}
    overall = decided.pop() if len(decided) == 1 else ("undetermined" if not decided else "mixed")
    return overall, per


def _clock_hypotheses(check: dict | None) -> set[str]:
    if not check:
        return set()
    return {STATUS_TO_HYPOTHESIS[e["status"]] for e in check["by_system"].values()
            if e["status"] in STATUS_TO_HYPOTHESIS}


def receiver_verdict(name: str, audit_summary: dict | None, clock_check: dict | None) -> dict:
    """The verdict block of one receiver for ``summary.json`` (keys below), and its sentence."""
    fixes = (audit_summary or {}).get("receiver_fixes")
    position_hypothesis = fixes.get("closest") if fixes else None
    margin = fixes.get("margin_m") if fixes else None
    if fixes and not fixes.get("decided", isinstance(margin, float) and margin >= 0.5):
        position_hypothesis = None                     # the fixes cannot tell the hypotheses apart
    margin_sigma = fixes.get("margin_sigma_m") if fixes else None
    clock_convention, clock_by_system = _clock_convention(clock_check)
    obs_k, obs_sigma = combined_k((audit_summary or {}).get("relativity_k", {}))
    findings = set(_clock_hypotheses(clock_check))
    if position_hypothesis:
        findings.add(position_hypothesis)
    series = (audit_summary or {}).get("receiver_clock_series")
    series_hypothesis = series.get("closest") if series and series.get("decided") else None
    if series_hypothesis:
        findings.add(series_hypothesis)
    faults = sorted(findings - {"applied"})
    tested = bool(findings)
    faulty = bool(faults) if tested else None
    where = []
    if position_hypothesis and position_hypothesis != "applied":
        where.append("fixes")
    if _clock_hypotheses(clock_check) - {"applied"}:
        where.append("satellite_clocks")
    if series_hypothesis and series_hypothesis != "applied":
        where.append("receiver_clock")
    fault = None
    if faults:
        fault = {"term": "sagnac" if faults == ["sagnac-omitted"] else "periodic",
                 "mode": faults[0] if len(faults) == 1 else "inconsistent: " + ", ".join(faults),
                 "where": where}
    parts = []
    if fixes and fixes.get("closest"):
        sigma = f" ± {margin_sigma:.2f} m" if isinstance(margin_sigma, float) and math.isfinite(margin_sigma) else ""
        parts.append(f"fixes {'closest to' if position_hypothesis else 'undetermined, nearest'} "
                     f"'{fixes['closest']}', margin {margin:.2f} m{sigma}")
    if series and series.get("closest"):
        parts.append(f"receiver clock {'closest to' if series_hypothesis else 'undetermined, nearest'} "
                     f"'{series['closest']}', margin {series['margin_ns'] or 0:.1f} ns "
                     f"± {series.get('margin_sigma_ns') or 0:.1f} ns")
    if clock_check:
        ks = ", ".join(f"{s} {fmt_k(clock_check['by_system'][s]['convention_k'], clock_check['by_system'][s]['convention_k_sigma'])}"
                       for s in in_system_order(clock_check["by_system"]))
        parts.append(f"clock table k = {ks}")
    detail = f" ({'; '.join(parts)})" if parts else ""
    if faulty is None:
        sentence = f"{name}: no fixes or clock table to judge the firmware by{detail}"
    elif faulty:
        words = " and ".join(FAULT_WORDS.get(f, f) for f in faults)
        sentence = f"{name}: firmware {words}{detail}"
    else:
        sentence = f"{name}: firmware consistent with the specifications{detail}"
    return {"faulty": faulty, "fault": fault, "position_hypothesis": position_hypothesis,
            "fixes_margin_m": margin, "fixes_margin_sigma_m": margin_sigma,
            "receiver_clock_hypothesis": series_hypothesis, "clock_convention": clock_convention,
            "clock_convention_by_system": clock_by_system,
            "observations_relativity_k": obs_k, "observations_relativity_k_sigma": obs_sigma,
            "verdict": sentence}


def firmware_at_fault(audit_summary: dict | None, clock_check: dict | None = None) -> bool:
    """True when a receiver's fixes or clock table follow a wrong hypothesis (the verdict's ``faulty``);
    False when consistent or not judged (no fixes, no clock table, fixes too close to call)."""
    return receiver_verdict("", audit_summary, clock_check)["faulty"] is True
