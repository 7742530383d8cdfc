"""The self-contained HTML report: figures as base64 PNG, tables, captions, caution, references."""

from __future__ import annotations

import base64
import html
import math
from importlib import resources
from pathlib import Path

import numpy as np
import pandas as pd

from gnssrel import __version__
from gnssrel.report.findings import CONSISTENT, FAULT, NOT_JUDGED, RESULT, report_findings
from gnssrel.text import fmt_sigma

CAUTION = (
    "gnssrel is an analysis tool. It is not for navigation and not for safety-of-life use. Its results "
    "can be wrong; where they matter, defer to the interface specifications, to local codes and to "
    "licensed surveying practice.")

REFERENCES = (
    "IS-GPS-200 (Navstar GPS Space Segment / Navigation User Interfaces), sections 3.3.1.1 and 20.3.3.3.3.1.",
    "Galileo Open Service Signal-In-Space Interface Control Document (OS SIS ICD), satellite clock correction.",
    ("BeiDou Navigation Satellite System Signal In Space Interface Control Document (BDS-SIS-ICD), "
    "satellite clock correction."),
    "GLONASS Interface Control Document (navigational radiosignal in bands L1, L2), clock and ephemeris terms.",
    "IERS Conventions (2010), IERS Technical Note 36, G. Petit and B. Luzum (eds.), chapters 10 and 11.",
    "N. Ashby (2003), Relativity in the Global Positioning System, Living Reviews in Relativity 6, 1.",
    "J. Kouba (2004), Improved relativistic transformations in GPS, GPS Solutions 8, 170-180.",
    ("O. Montenbruck, P. Steigenberger, A. Hauschild (2015), Broadcast versus precise ephemerides: a "
     "multi-GNSS perspective, GPS Solutions 19, 321-333 (signal-in-space range error)."),
)


def _css() -> str:
    return resources.files("gnssrel.report").joinpath("report.css").read_text(encoding="utf-8")


def _fmt(value) -> str:
    if value is None:
        return "–"
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        v = float(value)
        if math.isnan(v):
            return "–"
        if v != 0 and (abs(v) < 1e-3 or abs(v) >= 1e6):
            return f"{v:.4g}"
        return f"{v:.3f}" if abs(v) < 100 else f"{v:.1f}"
    return html.escape(str(value))


def _column_formatter(name: str, values):
    """One number format per column, so the digits line up: σ columns print '< 0.001' for tiny values."""
    finite = [abs(float(v)) for v in values
              if isinstance(v, (float, np.floating)) and not isinstance(v, bool) and math.isfinite(v)]
    if not finite:
        return _fmt
    big = max(finite)
    if "σ" in name:
        return lambda v: _fmt(v) if not isinstance(v, (float, np.floating)) or math.isnan(v) else html.escape(fmt_sigma(v))
    if big >= 1e6 or (0 < big < 1e-3):
        return lambda v: f"{v:.4g}" if isinstance(v, (float, np.floating)) and math.isfinite(v) else _fmt(v)
    digits = 1 if big >= 100 else 3
    return lambda v: (f"{round(float(v), digits) + 0.0:.{digits}f}"
                      if isinstance(v, (float, np.floating)) and math.isfinite(v) else _fmt(v))


def table_html(df, max_rows: int = 40) -> str:
    cols = list(df.columns)
    text = [not pd.api.types.is_numeric_dtype(df[c]) for c in cols]   # text columns read left-aligned
    cls = [' class="text"' if t else "" for t in text]
    head = "".join(f"<th{k}>{html.escape(str(c))}</th>" for c, k in zip(cols, cls))
    shown = df.head(max_rows)
    formats = [_fmt if t else _column_formatter(str(c), shown[c].tolist()) for c, t in zip(cols, text)]
    body = []
    for row in shown.itertuples(index=False):
        cells = [f"<td{k}>{f(v)}</td>" for v, k, f in zip(row, cls, formats)]
        body.append("<tr>" + "".join(cells) + "</tr>")
    more = f'<p class="csv">{len(df) - max_rows} more rows in the CSV.</p>' if len(df) > max_rows else ""
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>{more}"


FINDING_LOOK = {FAULT: ("faulty", "Fault"), CONSISTENT: ("correct", "Consistent"), RESULT: ("result", "Result"),
                NOT_JUDGED: ("not-judged", "Not judged")}
"""Finding kind -> (CSS class, tag printed before the sentence)."""


def findings_box(content) -> str:
    """The findings box: verdicts, every result computed, then what could not be judged and why."""
    items = []
    for finding in report_findings(content):
        cls, tag = FINDING_LOOK[finding.kind]
        items.append(f'<li class="{cls}"><span class="tag">{tag}.</span>{html.escape(finding.text)}</li>')
    if not items:
        return ""
    return "<h2 id='findings'>Findings</h2><ul class='findings'>" + "".join(items) + "</ul>"


def _inputs_text(inputs: dict) -> str:
    """'navigation: a.rnx, b.rnx; sp3: c.SP3': file names only (no local folders in a shared report)."""
    return "; ".join(f"{kind.replace('_', ' ')}: {', '.join(Path(str(p)).name for p in paths)}"
                     for kind, paths in inputs.items() if paths)


def _accounting_section(content, df) -> str:
    """Every record and observation read: used, or dropped with a reason; and the reader warnings."""
    warnings = list((content.accounting or {}).get("warnings", []))
    more = int((content.accounting or {}).get("warnings_dropped", 0))
    text = ("<h2 id='accounting'>Accounting</h2><p class='csv'>Every navigation, SP3 and clock record and every "
            "observation read is either used or counted here with the reason it was left aside "
            "(read = used + dropped, per item and system).</p>" + table_html(df, max_rows=200)
            + "<p class='csv'>As CSV: <a href='accounting.csv'>accounting.csv</a></p>")
    if warnings:
        items = "".join(f"<li>{html.escape(w)}</li>" for w in warnings[:50])
        extra = len(warnings) - 50 + more
        text += (f"<h3>Warnings ({len(warnings) + more})</h3><ol class='references'>{items}</ol>"
                 + (f"<p class='csv'>... and {extra} more (summary.json lists them).</p>" if extra > 0 else ""))
    return text


def render_html(content, figures: list[tuple], tables: dict, shown_tables=()) -> str:
    """The page.  ``figures``: (ReportFigure, png_bytes, {format: file name}); ``tables``: stem ->
    (heading, DataFrame); ``shown_tables``: the stems printed in full (the others are linked)."""
    t0, t1 = content.time_span
    parts = [(f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
             f"<meta name='viewport' content='width=device-width, initial-scale=1'>"
             f"<title>{html.escape(content.title)}</title><style>{_css()}</style></head><body><main>"),
             "<header class='masthead'>",
             f"<h1>{html.escape(content.title)}</h1>",
             (f"<div class='meta'>{str(t0)[:19].replace('T', ' ')} to {str(t1)[:19].replace('T', ' ')} GPST · "
             f"{content.relativity.sizes['sv']} satellites · gnssrel {__version__}</div></header>"),
             f"<div class='caution'><strong>Caution.</strong> {html.escape(CAUTION)}</div>"]
    if content.description:
        parts.append(f"<p class='lead'>{html.escape(content.description)}</p>")
    parts.append(findings_box(content))
    for note in content.notes:
        parts.append(f"<p class='csv'>Note: {html.escape(note)}</p>")
    parts.append("<nav class='contents'><ol>")
    parts += [f"<li><a href='#{f.key}'>{html.escape(f.title)}</a></li>" for f, _, _ in figures]
    parts.append("<li><a href='#tables'>Tables</a></li>"
                 + ("<li><a href='#accounting'>Accounting</a></li>" if "accounting" in tables else "")
                 + "<li><a href='#references'>References</a></li></ol></nav>")
    parts.append("<h2 id='figures'>Figures</h2>")
    for n, (fig, png, files) in enumerate(figures, start=1):
        data = base64.b64encode(png).decode("ascii")
        links = " · ".join(f"<a href='{html.escape(name)}'>{fmt.upper()}</a>" for fmt, name in files.items())
        parts.append(f"<figure id='{fig.key}'><h3>Figure {n}. {html.escape(fig.title)}</h3>"
                     f"<img alt='{html.escape(fig.title)}' src='data:image/png;base64,{data}'>"
                     f"<figcaption><b>Figure {n}.</b> {html.escape(fig.caption)}"
                     f"<span class='files'>Files: {links}</span></figcaption></figure>")
    parts.append("<h2 id='tables'>Tables</h2>")
    for stem, (heading, df) in tables.items():
        if stem == "accounting":
            continue                      # its own section below
        link = f"<a href='{stem}.csv'>{stem}.csv</a>"
        if stem in shown_tables:
            parts.append(f"<h3>{html.escape(heading)}</h3>{table_html(df)}<p class='csv'>As CSV: {link}</p>")
        else:
            parts.append(f"<p class='csv'>{html.escape(heading)} ({len(df)} rows): {link}</p>")
    if "accounting" in tables:
        parts.append(_accounting_section(content, tables["accounting"][1]))
    parts.append("<h2 id='references'>References</h2><ol class='references'>")
    parts += [f"<li>{html.escape(ref)}</li>" for ref in REFERENCES]
    parts.append("</ol>")
    parts.append(f"<footer>Inputs — {html.escape(_inputs_text(content.inputs))}. Times are GPST throughout. "
                 f"Written by gnssrel {__version__}.</footer></main></body></html>")
    return "\n".join(parts)
