"""All figures of the report, in reading order, drawn in gnssrel's style.

:func:`build_figures` returns :class:`~gnssrel.report.layout.ReportFigure` records
(matplotlib Figure objects, not yet saved): tests inspect their axes, the builder
saves each as PNG (300 dpi, for print), SVG and PDF, and embeds a 150-dpi PNG in the page.
A figure whose input is missing (no precise clocks, no
observation log) is left out.
"""

from __future__ import annotations

import io
from pathlib import Path

from PIL import Image  # pillow: a dependency of matplotlib, already loaded with it

from gnssrel import __version__
from gnssrel.report.fig_audit import audit_figure
from gnssrel.report.fig_clocks import clocks_figure
from gnssrel.report.fig_coverage import coverage_figure
from gnssrel.report.fig_orbit_differences import orbit_differences_figure
from gnssrel.report.fig_periodic import periodic_figure
from gnssrel.report.fig_positions import position_figure
from gnssrel.report.fig_proper_time import proper_time_figure
from gnssrel.report.fig_rates import rates_figure
from gnssrel.report.fig_receiver_clock import receiver_clock_figure
from gnssrel.report.fig_signal_path import signal_path_figure
from gnssrel.report.layout import ReportFigure
from gnssrel.report.palette import gnssrel_style

__all__ = ["FIGURE_FORMATS", "PAGE_DPI", "PRINT_DPI", "build_figures", "page_png", "save_figure"]

FIGURE_FORMATS = ("png", "svg", "pdf")
PRINT_DPI = 300
"""Resolution of the PNG files (print quality)."""
PAGE_DPI = 150
"""Resolution of the PNG embedded in report.html (screen; keeps the page small)."""


def build_figures(content) -> list[ReportFigure]:
    """Every figure the content allows, numbered in the order of the report."""
    with gnssrel_style():
        made = [periodic_figure(content), rates_figure(content), proper_time_figure(content),
                clocks_figure(content), orbit_differences_figure(content), signal_path_figure(content)]
        for r in content.receivers:
            made += [audit_figure(r), position_figure(r), receiver_clock_figure(r)]
        made.append(coverage_figure(content))
    return [f for f in made if f is not None]


def save_figure(item: ReportFigure, folder, formats=FIGURE_FORMATS) -> dict[str, str]:
    """Write the figure as ``<key>.png`` (PRINT_DPI), ``<key>.svg`` and ``<key>.pdf`` into ``folder``;
    returns format -> path."""
    out = {}
    with gnssrel_style():
        for fmt in formats:
            path = Path(folder) / f"{item.key}.{fmt}"
            item.figure.savefig(path, format=fmt, dpi=PRINT_DPI if fmt == "png" else "figure",
                                metadata=_metadata(item, fmt))
            out[fmt] = str(path)
    return out


def page_png(item: ReportFigure, dpi: int = PAGE_DPI, print_png=None) -> bytes:
    """The figure as PNG bytes at screen resolution, for embedding in the HTML page.  With
    ``print_png`` (the path of the PRINT_DPI file already written), that image is scaled down
    instead of drawing the figure again (drawing costs far more than scaling)."""
    buffer = io.BytesIO()
    if print_png is not None:
        with Image.open(print_png) as image:
            factor = max(1, round(PRINT_DPI / dpi))
            image.convert("RGB").reduce(factor).save(buffer, format="PNG", dpi=(dpi, dpi))
        return buffer.getvalue()
    with gnssrel_style():
        item.figure.savefig(buffer, format="png", dpi=dpi)
    return buffer.getvalue()


def _metadata(item: ReportFigure, fmt: str) -> dict:
    """Title and creator in the file (PNG names the creator 'Software')."""
    creator = f"gnssrel {__version__}"
    return {"Title": item.title, ("Software" if fmt == "png" else "Creator"): creator}
