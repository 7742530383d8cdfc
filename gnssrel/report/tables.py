"""The report's tables: pandas DataFrames written as CSV and shown (shortened) in the HTML."""

from __future__ import annotations

import numpy as np
import pandas as pd

from gnssrel.accounting import READ, USED, Ledger
from gnssrel.report.fig_clocks import convention_rows
from gnssrel.report.palette import system_name
from gnssrel.text import fmt_k, in_system_order


def relativity_table(content) -> pd.DataFrame:
    rows = [{"sv": sv, **{k: v for k, v in e.items() if not isinstance(v, (dict, list))}}
            for sv, e in content.relativity_summary["satellites"].items()]
    return pd.DataFrame(rows)


def _median(entries, key) -> float:
    values = [e[key] for e in entries if e.get(key) is not None]
    return float(np.nanmedian(values)) if values else float("nan")


def _max_known(values) -> float:
    known = [v for v in values if v is not None and np.isfinite(v)]
    return max(known) if known else float("nan")


def relativity_by_system(content) -> pd.DataFrame:
    sats = content.relativity_summary["satellites"]
    out = []
    for s in dict.fromkeys(sv[0] for sv in sats):
        group = [e for sv, e in sats.items() if sv[0] == s]
        out.append({"system": system_name(s), "satellites": len(group),
                    "max periodic term (ns)": max(e["periodic_max_abs_ns"] for e in group),
                    # None where the specification form had no broadcast elements (GLONASS)
                    "max |spec − state| (ns)": _max_known(e["icd_vs_state_max_diff_ns"] for e in group),
                    "median velocity (µs/day)": _median(group, "us_per_day_velocity"),
                    "median gravity (µs/day)": _median(group, "us_per_day_gravity"),
                    "median total (µs/day)": _median(group, "us_per_day_total"),
                    "max integral − closed form, with J2 (ns)":
                        max((e.get("integral_vs_closed_form_with_j2_max_ns") or np.nan) for e in group)})
    return pd.DataFrame(out)


def orbit_by_system(content) -> pd.DataFrame | None:
    if not content.orbit_summary:
        return None
    return pd.DataFrame([{"system": system_name(s), "satellites": e["n_sat"],
                          "median 3-D RMS (m)": e["median_rms_3d_m"], "max 3-D RMS (m)": e["max_rms_3d_m"],
                          "coverage (%)": 100 * e["median_coverage"]}
                         for s, e in content.orbit_summary["by_system"].items()])


def sisre_table(content) -> pd.DataFrame | None:
    """Signal-in-space range error per system (orbits/sisre.py; Montenbruck et al. 2015 form)."""
    sisre = (content.orbit_summary or {}).get("sisre")
    if not sisre:
        return None
    return pd.DataFrame([{"system": system_name(s), "satellites": e["n_sat"], "SISRE (m)": e["total_m"],
                          "orbit part (m)": e["orbit_m"], "clock part (m)": e["clock_m"],
                          "median mean radial (m), holds the antenna offset": e["median_mean_radial_m"],
                          "2013-14, Montenbruck et al. 2015 (m)": e.get("published_2013_14_m")}
                         for s, e in sisre.items()])


def clock_by_system(content) -> pd.DataFrame | None:
    if not content.clock_summary:
        return None
    return pd.DataFrame([{"system": system_name(s), "satellites": e["n_sat"],
                          "median std (ns)": e["median_std_ns"], "max std (ns)": e["max_std_ns"],
                          "k": e["convention_k"], "σ(k)": e["convention_k_sigma"],
                          "convention": e["convention"]}
                         for s, e in content.clock_summary["by_system"].items()])


def convention_table(content) -> pd.DataFrame | None:
    rows = convention_rows(content)
    if not rows:
        return None
    return pd.DataFrame([{"clock series": r["series"], "system": system_name(r["system"]), "k": r["k"],
                          "σ(k)": r["sigma"], "convention": r["convention"]} for r in rows])


def _firmware_verdict(r) -> str:
    """One column for the firmware: 'fault: omitted (fixes, satellite clocks)', 'consistent', or 'not judged
    (why)'; never a 'not judged' beside a 'fault: none'."""
    v = r.verdict or {}
    if v.get("faulty") is True:
        fault = v.get("fault") or {}
        where = ", ".join(w.replace("_", " ") for w in fault.get("where", []))
        return f"fault: {fault.get('mode', '?')}" + (f" ({where})" if where else "")
    if v.get("faulty") is False:
        return "consistent with the specifications"
    if r.fixes_path and not ((r.audit_summary or {}).get("receiver_fixes") or {}).get("closest"):
        return "not judged (no fix matched an epoch of the log)"
    if r.fixes_path or r.clocks_path:
        return "not judged (the fixes cannot tell the hypotheses apart)"
    return "not judged (no fixes or clock table given)"


def _fixes_follow(r) -> str:
    fixes = (r.audit_summary or {}).get("receiver_fixes")
    if not fixes:
        return "–"
    if not fixes.get("closest"):
        return "no fix matched an epoch"
    decided = (r.verdict or {}).get("position_hypothesis")
    return decided if decided else f"undetermined (nearest: {fixes['closest']})"


def receivers_table(content) -> pd.DataFrame | None:
    """One row per receiver: the firmware verdict, what its fixes and clock table follow, the k fitted to
    its log per system (with σ and status), its median position errors."""
    if not content.receivers:
        return None
    letters = in_system_order({s for r in content.receivers
                               for s in ((r.audit_summary or {}).get("relativity_k") or {})})
    rows = []
    for r in content.receivers:
        v = r.verdict or {}
        audit = r.audit_summary or {}
        pos = audit.get("position", {})
        fits = audit.get("relativity_k") or {}
        row = {"receiver": r.name, "firmware": _firmware_verdict(r), "fixes follow": _fixes_follow(r),
               "fixes margin (m)": v.get("fixes_margin_m") if (audit.get("receiver_fixes") or {}).get("closest")
               else None,
               "clock table follows": v.get("clock_convention") or "–"}
        for s in letters:
            f = fits.get(s)
            row[f"k in the log, {system_name(s)}"] = (
                f"{fmt_k(f['k'], f.get('sigma'))} ({str(f['status']).partition(':')[0]})" if f else "–")
        row["median 3-D error, term applied (m)"] = pos.get("median_error_3d_m")
        row["median 3-D error, term omitted (m)"] = pos.get("median_error_3d_m_without_periodic")
        rows.append(row)
    return pd.DataFrame(rows)


def accounting_table(content) -> pd.DataFrame | None:
    """Every item read per system: read, used, and the drops by reason (the report's accounting)."""
    if not content.accounting:
        return None
    ledger = Ledger.from_dict(content.accounting)
    rows = []
    for item, systems in ledger.as_dict().items():
        if not isinstance(systems, dict):
            continue
        for system, cell in systems.items():
            drops = {o: n for o, n in cell.items() if o not in (READ, USED)}
            rows.append({"item": item.replace("_", " "), "system": system, "read": cell.get(READ, 0),
                         "used": cell.get(USED, 0),
                         "dropped, by reason": "; ".join(f"{n} {o}" for o, n in
                                                         sorted(drops.items(), key=lambda kv: -kv[1])) or "-"})
    return pd.DataFrame(rows)


def report_tables(content) -> dict[str, tuple[str, pd.DataFrame]]:
    """CSV stem -> (heading, table) for every table the content allows (None ones left out)."""
    tables = {
        "receivers": ("Receivers: verdicts", receivers_table(content)),
        "relativity_by_system": ("Relativity terms per system", relativity_by_system(content)),
        "relativity_per_satellite": ("Relativity terms per satellite", relativity_table(content)),
        "orbits_by_system": ("Broadcast against precise orbits", orbit_by_system(content)),
        "orbits_per_satellite": ("Broadcast against precise orbits, per satellite", content.orbit_table),
        "sisre_by_system": ("Signal-in-space range error (broadcast minus precise, as a user sees it)",
                            sisre_table(content)),
        "clocks_by_system": ("Precise against broadcast clocks", clock_by_system(content)),
        "clock_conventions": ("Convention fits of every clock series", convention_table(content)),
        "accounting": ("Accounting: every record and observation read, used or dropped with a reason",
                       accounting_table(content)),
    }
    for r in content.receivers:
        if r.position_errors is not None:
            tables[f"positions_{r.name}"] = (f"{r.name}: per-epoch 3-D errors", r.position_errors)
    return {k: v for k, v in tables.items() if v[1] is not None and len(v[1])}


SHOWN_IN_HTML = ("receivers", "relativity_by_system", "orbits_by_system", "sisre_by_system", "clocks_by_system", "clock_conventions",
                 "accounting")
"""Tables printed in the HTML; the long ones are linked as CSV only."""
