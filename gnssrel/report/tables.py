"""The report's tables: pandas DataFrames written as CSV and shown (shortened) in the HTML."""

from __future__ import annotations

import numpy as np
import pandas as pd

from gnssrel.accounting import READ, USED, Ledger
from gnssrel.report.fig_clocks import convention_rows
from gnssrel.report.palette import system_name


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


def receivers_table(content) -> pd.DataFrame | None:
    if not content.receivers:
        return None
    rows = []
    for r in content.receivers:
        v = r.verdict
        pos = (r.audit_summary or {}).get("position", {})
        rows.append({"receiver": r.name, "firmware faulty": {True: "yes", False: "no", None: "not judged"}
                     [v.get("faulty")],
                     "fault": (v.get("fault") or {}).get("mode", "none") if v.get("faulty") else "none",
                     "fixes closest to": v.get("position_hypothesis") or "–",
                     "fixes margin (m)": v.get("fixes_margin_m"),
                     "clock-table convention": v.get("clock_convention") or "–",
                     "log k (periodic term)": v.get("observations_relativity_k"),
                     "σ(k)": v.get("observations_relativity_k_sigma"),
                     "median 3-D error, term applied (m)": pos.get("median_error_3d_m"),
                     "median 3-D error, term omitted (m)": pos.get("median_error_3d_m_without_periodic")})
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
        "clocks_by_system": ("Precise against broadcast clocks", clock_by_system(content)),
        "clock_conventions": ("Convention fits of every clock series", convention_table(content)),
        "accounting": ("Accounting: every record and observation read, used or dropped with a reason",
                       accounting_table(content)),
    }
    for r in content.receivers:
        if r.position_errors is not None:
            tables[f"positions_{r.name}"] = (f"{r.name}: per-epoch 3-D errors", r.position_errors)
    return {k: v for k, v in tables.items() if v[1] is not None and len(v[1])}


SHOWN_IN_HTML = ("receivers", "relativity_by_system", "orbits_by_system", "clocks_by_system", "clock_conventions",
                 "accounting")
"""Tables printed in the HTML; the long ones are linked as CSV only."""
