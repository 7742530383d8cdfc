"""All figures of the report, in reading order, drawn in gnssrel's style.

:func:`build_figures` returns :class:`~gnssrel.report.layout.ReportFigure` records
(matplotlib Figure objects, not yet saved): tests inspect their axes, the builder
saves each as PNG and SVG.  A figure whose input is missing (no precise clocks, no
observation log) is left out.
"""

from __future__ import annotations

from pathlib import Path

from gnssrel.report.fig_audit import audit_figure
from gnssrel.report.fig_clocks import clocks_figure
from gnssrel.report.fig_coverage import coverage_figure
from gnssrel.report.fig_periodic import periodic_figure
from gnssrel.report.fig_proper_time import proper_time_figure
from gnssrel.report.fig_rates import rates_figure
from gnssrel.report.layout import ReportFigure
from gnssrel.report.palette import gnssrel_style

__all__ = ["build_figures", "save_figure"]


def build_figures(content) -> list[ReportFigure]:
    """Every figure the content allows, numbered in the order of the report."""
    with gnssrel_style():
        made = [periodic_figure(content), rates_figure(content), proper_time_figure(content),
                clocks_figure(content)]
        made += [audit_figure(r) for r in content.receivers]
        made.append(coverage_figure(content))
    return [f for f in made if f is not None]


def save_figure(item: ReportFigure, folder, formats=("png", "svg")) -> dict[str, str]:
    """Write the figure as ``<key>.png`` and ``<key>.svg`` into ``folder``; returns format -> path."""
    out = {}
    with gnssrel_style():
        for fmt in formats:
            path = Path(folder) / f"{item.key}.{fmt}"
            item.figure.savefig(path, format=fmt)
            out[fmt] = str(path)
    return out
