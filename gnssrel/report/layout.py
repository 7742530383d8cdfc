"""Shared pieces of every figure: the figure record, GPST time axes, system legends.

Every time axis is formatted by :class:`GpstFormatter` (hours:minutes, the date
and the scale in the axis label), so a reader never has to guess the scale.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import pairwise

import matplotlib.dates as mdates
import numpy as np
from matplotlib.colors import to_hex, to_rgb
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from gnssrel.constants import SYSTEM_ORDER
from gnssrel.report.palette import SYSTEM_COLOURS, system_name


@dataclass
class ReportFigure:
    """One figure of the report: file stem, heading, caption and the matplotlib Figure."""

    key: str
    title: str
    caption: str
    figure: Figure


class GpstFormatter(mdates.DateFormatter):
    """Hours:minutes on a GPST axis (a subclass, so tests can find time axes)."""

    def __init__(self):
        super().__init__("%H:%M")


def new_figure(width_in: float, height_in: float) -> Figure:
    """A Figure not attached to pyplot (no global state, safe in threads and tests)."""
    return Figure(figsize=(width_in, height_in), layout="constrained")


def as_plot_times(times) -> np.ndarray:
    """datetime64[ns] GPST -> matplotlib date numbers (the scale stays GPST: no conversion)."""
    return mdates.date2num(np.asarray(times).astype("datetime64[ms]"))


def gpst_axis(ax, times, label_date: bool = True) -> None:
    """Format the x axis of ``ax`` as GPST clock time; the label names the date and the scale."""
    t = np.asarray(times).astype("datetime64[ns]")
    ax.xaxis.set_major_locator(mdates.AutoDateLocator(minticks=4, maxticks=9))
    ax.xaxis.set_major_formatter(GpstFormatter())
    days = np.unique(t[~np.isnat(t)].astype("datetime64[D]")) if t.size else []
    when = ""
    if label_date and len(days):
        when = f", {days[0]}" + (f" to {days[-1]}" if len(days) > 1 else "")
    ax.set_xlabel(f"time (GPST{when}, h:min)")


def system_handles(letters, **line_kwargs) -> list:
    """Legend handles, one per system letter present, in the system's colour."""
    kwargs = {"linewidth": 2.2, **line_kwargs}
    return [Line2D([], [], color=SYSTEM_COLOURS.get(s, "#888888"), label=system_name(s), **kwargs)
            for s in letters]


def panel_letter(ax, letter: str) -> None:
    """A small bold panel letter in the top-left corner, outside the data."""
    ax.text(-0.01, 1.02, letter, transform=ax.transAxes, ha="right", va="bottom",
            fontsize=10, fontweight="bold", color="#30343B")


def systems_in(svs) -> list[str]:
    """System letters of ``svs`` in gnssrel's order (G E C J R)."""
    order = SYSTEM_ORDER
    present = {str(s)[0] for s in svs}
    return [s for s in order if s in present] + sorted(present - set(order))


def label_line_ends(ax, x, lines, min_gap_fraction: float = 0.045) -> None:
    """Name lines just right of their last finite point, spread apart so labels never overlap.

    ``lines``: (text, y values, colour) tuples; ``min_gap_fraction`` of the y range apart.
    """
    ends = []
    for text, y, colour in lines:
        y = np.asarray(y, float)
        ok = np.flatnonzero(np.isfinite(y))
        if ok.size:
            ends.append([y[ok[-1]], x[ok[-1]], text, colour, y[ok[-1]]])
    lo, hi = ax.get_ylim()
    gap = min_gap_fraction * (hi - lo)
    ends.sort(key=lambda e: e[0])
    for a, b in pairwise(ends):        # push upwards until each is a gap above the one below
        b[0] = max(b[0], a[0] + gap)
    pad = 0.004 * (x[-1] - x[0]) if len(x) > 1 else 0.0
    for y_text, x_end, text, colour, _ in ends:
        ax.text(x_end + pad, y_text, text, fontsize=7.5, color=colour, va="center", ha="left", clip_on=False)


def tint(colour: str, amount: float) -> str:
    """``colour`` mixed with white (``amount`` 0: the colour, 1: white), as an opaque colour: for
    bands and fills, so that no system colour is ever drawn faded with alpha."""
    rgb = np.array(to_rgb(colour))
    return to_hex(rgb + (1.0 - rgb) * amount)


def break_at_gaps(x, *ys, factor: float = 3.0):
    """``x`` and each of ``ys`` with a NaN inserted where a step of ``x`` is longer than ``factor``
    times the usual (median) step, so that lines stop at gaps instead of bridging them."""
    x = np.asarray(x, float)
    if x.size < 3:
        return (x, *ys)
    dx = np.diff(x)
    cut = np.flatnonzero(dx > factor * np.median(dx)) + 1
    return (np.insert(x, cut, np.nan), *(np.insert(np.asarray(y, float), cut, np.nan) for y in ys))
