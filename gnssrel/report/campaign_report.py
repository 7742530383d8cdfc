"""The campaign report: ``DIR/report/`` with report.html and every figure as PNG and SVG.

:func:`write_campaign_report` reads what a campaign run wrote into its folder (``campaign.parquet``,
``summary.json``, ``tasks/*/summary.json`` and ``corrections.parquet``, ``network/*/relativity.parquet``)
so it depends on the files only, not on the code that ran the tasks.  The report folder is staged
beside the target and renamed into place at the end, as the single-log report does: a failure
leaves no folder (and an earlier report stays until the new one is complete).
"""

from __future__ import annotations

import base64
import html
import json
from pathlib import Path

import pandas as pd

from gnssrel import __version__
from gnssrel.report.builder import write_folder_atomically
from gnssrel.report.campaign_figures import (
    accounting_figure,
    k_figure,
    position_figure,
    pseudorange_residuals_m,
    satellite_figure,
    station_day_labels,
)
from gnssrel.report.figures import FIGURE_FORMATS, page_png, save_figure
from gnssrel.report.html import CAUTION, _css, table_html
from gnssrel.report.palette import gnssrel_style

__all__ = ["REPORT_FOLDER", "build_campaign_figures", "write_campaign_report"]

REPORT_FOLDER = "report"
RESIDUAL_COLUMNS = ["time", "sv", "system", "pseudorange_m", "satellite_clock_s", "periodic_s", "periodic_in_clock", "j2_s",
                    "geometric_range_m", "troposphere_m", "ionosphere_m", "group_delay_m", "shapiro_m"]


def _read_json(path: Path):
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None


def _task_summaries(campaign_dir: Path) -> list[tuple[Path, dict]]:
    out = []
    for folder in sorted((campaign_dir / "tasks").glob("*")):
        s = _read_json(folder / "summary.json")
        if isinstance(s, dict):
            out.append((folder, s))
    return out


def _residuals(tasks) -> pd.DataFrame:
    frames = []
    for folder, s in tasks:
        path = folder / "corrections.parquet"
        if s.get("status") != "ok" or not path.is_file():
            continue
        c = pd.read_parquet(path, columns=None)
        c = c[[col for col in RESIDUAL_COLUMNS if col in c]].dropna(subset=["pseudorange_m", "geometric_range_m"])
        if c.empty:
            continue
        frames.append(pd.DataFrame({"time": c["time"], "sv": c["sv"], "station": s["station"],
                                    "date": s["date"], "residual_m": pseudorange_residuals_m(c)}))
    return pd.concat(frames, ignore_index=True) if frames else pd.DataFrame()


def _relativity(campaign_dir: Path) -> pd.DataFrame:
    frames = [pd.read_parquet(p, columns=["time", "sv", "periodic_icd_s"])
              for p in sorted((campaign_dir / "network").glob("*/relativity.parquet"))]
    return pd.concat(frames, ignore_index=True) if frames else pd.DataFrame()


def _counts(table: pd.DataFrame, tasks) -> pd.DataFrame:
    """Observations used and dropped per reason (summed over systems), one row per station-day."""
    by_key = {(s["station"], s["date"]): s for _, s in tasks}
    rows = []
    for station, day in zip(table["station"], table["day"]):
        cells = ((by_key.get((station, day)) or {}).get("accounting") or {}).get("observations", {})
        row: dict[str, float] = {"used": 0.0}
        for cell in cells.values():
            for reason, n in cell.items():
                if reason != "read":
                    row[reason] = row.get(reason, 0.0) + n
        rows.append(row)
    return pd.DataFrame(rows, index=station_day_labels(table)).fillna(0.0)


def build_campaign_figures(campaign_dir) -> list:
    """The campaign's figures (ReportFigure records) in reading order; a figure without input is left out."""
    campaign_dir = Path(campaign_dir)
    table = pd.read_parquet(campaign_dir / "campaign.parquet")
    tasks = _task_summaries(campaign_dir)
    with gnssrel_style():
        made = [k_figure(table), position_figure(table),
                satellite_figure(_relativity(campaign_dir), _residuals(tasks)),
                accounting_figure(_counts(table, tasks) if not table.empty else None)]
    return [f for f in made if f is not None]


def write_campaign_report(campaign_dir, output=None) -> Path:
    """Write the report of the campaign in ``campaign_dir`` to ``output`` (default ``campaign_dir/report``)."""
    campaign_dir = Path(campaign_dir)
    output = Path(output) if output is not None else campaign_dir / REPORT_FOLDER
    write_folder_atomically(output, lambda staging: _write_files(campaign_dir, staging))
    return output


def _write_files(campaign_dir: Path, folder: Path) -> None:
    summary = _read_json(campaign_dir / "summary.json") or {}
    table = pd.read_parquet(campaign_dir / "campaign.parquet")
    figures = build_campaign_figures(campaign_dir)
    rendered = []
    for item in figures:          # PNG at print resolution, SVG and PDF, as the report of one log
        files = save_figure(item, folder)
        rendered.append((item, page_png(item, print_png=files["png"])))
    (folder / "report.html").write_text(_page(summary, table, rendered), encoding="utf-8")


def _page(summary: dict, table: pd.DataFrame, figures) -> str:
    e = html.escape
    tasks = summary.get("tasks", [])
    failed = [t for t in tasks if t.get("status") != "ok"]
    net_failed = [d for d in summary.get("network", []) if d.get("status") != "ok"]
    days = sorted({t["date"] for t in tasks})
    parts = [(f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
              f"<meta name='viewport' content='width=device-width, initial-scale=1'>"
              f"<title>gnssrel campaign report</title><style>{_css()}</style></head><body><main>"),
             "<header class='masthead'><h1>Campaign report</h1>",
             (f"<div class='meta'>{len(tasks)} station-day(s) · {summary.get('n_ok', 0)} ok · "
              f"{summary.get('n_failed', 0)} failed · {summary.get('n_skipped', 0)} taken from an earlier run · "
              f"{e(days[0] if days else '-')} to {e(days[-1] if days else '-')} (GPST) · gnssrel {__version__}"
              "</div></header>"),
             f"<div class='caution'><strong>Caution.</strong> {e(CAUTION)}</div>",
             "<nav class='contents'><ol><li><a href='#failed'>Failed tasks</a></li>"]
    parts += [f"<li><a href='#{f.key}'>{e(f.title)}</a></li>" for f, _ in figures]
    if summary.get("survey_repeatability"):
        parts.append("<li><a href='#survey'>Carrier-phase positions: day-to-day repeatability</a></li>")
    parts.append("<li><a href='#table'>Campaign table</a></li></ol></nav>")
    parts.append("<h2 id='failed'>Failed tasks</h2>")
    if failed or net_failed:
        parts.append("<ul class='findings'>")
        parts += [f"<li class='faulty'><span class='tag'>{e(t['station'])} {e(t['date'])}.</span>"
                  f"{e(str(t.get('reason')))}</li>" for t in failed]
        parts += [f"<li class='faulty'><span class='tag'>network {e(d['date'])}.</span>"
                  f"{e(str(d.get('reason')))}</li>" for d in net_failed]
        parts.append("</ul>")
    else:
        parts.append("<p class='csv'>None: every station-day and network day ran.</p>")
    parts.append("<h2 id='figures'>Figures</h2>")
    for n, (fig, png) in enumerate(figures, start=1):
        data = base64.b64encode(png).decode("ascii")
        links = " · ".join(f"<a href='{fig.key}.{fmt}'>{fmt.upper()}</a>" for fmt in FIGURE_FORMATS)
        parts.append(f"<figure id='{fig.key}'><h3>Figure {n}. {e(fig.title)}</h3>"
                     f"<img alt='{e(fig.title)}' src='data:image/png;base64,{data}'>"
                     f"<figcaption><b>Figure {n}.</b> {e(fig.caption)}"
                     f"<span class='files'>Files: {links}</span></figcaption></figure>")
    parts += _survey_section(summary)
    parts.append("<h2 id='table'>Campaign table</h2><p class='csv'>One row per station-day; also as "
                 "<a href='../campaign.csv'>campaign.csv</a> and campaign.parquet beside this folder.</p>")
    parts.append(table_html(table, max_rows=max(len(table), 1)))
    parts.append(f"<footer>Times are GPST throughout. Written by gnssrel {__version__}.</footer></main></body></html>")
    return "\n".join(parts)


def _survey_section(summary: dict) -> list[str]:
    """With ``campaign --survey``: each station's repeatability of its daily carrier-phase positions."""
    rep = summary.get("survey_repeatability")
    if not rep:
        return []
    rows = pd.DataFrame([{"station": station, "days": r.get("n_days"), "east (mm)": r.get("east_mm"),
                          "north (mm)": r.get("north_mm"), "up (mm)": r.get("up_mm")}
                         for station, r in sorted(rep.items())])
    return ["<h2 id='survey'>Carrier-phase positions: day-to-day repeatability</h2>",
            ("<p class='csv'>Standard deviation of each station's daily static positions (gnssrel survey: "
            "ionosphere-free code and phase with the precise orbits and clocks, every relativistic term "
            "applied) about the station's mean; blank with one day. The daily east/north/up against the "
            "header are in the campaign table (survey_east_m, survey_north_m, survey_up_m).</p>"),
            table_html(rows, max_rows=max(len(rows), 1))]
