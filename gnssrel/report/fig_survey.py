"""Figure: what each relativistic term does to a surveyed point, and how the solution converged.

Drawn from the summary of ``gnssrel survey`` (:func:`gnssrel.survey.static.survey`) alone, so it
can be made again from a saved ``--summary`` file without the log:

* panel a, one row per switchable term (``term_effects_mm``): the east, north and up change of
  the static position (mm) when that term is switched off (or, for ``periodic_state_form``,
  replaced by -2 r.v/c^2), on a symmetric-log axis: linear within +-:data:`LINEAR_WITHIN_MM`,
  logarithmic beyond, so that the periodic term (metres) and the Shapiro delay (millimetres)
  are read on one axis.  Rows are sorted by their 3-D size, the largest on top; the 3-D size
  is written at the right of each row.
* panel b (``convergence``): the 3-D distance (mm, log axis) of the solution from the data up
  to each hour to the solution of the whole log, and to the reference position.  The last
  point of the first is zero by construction and is not drawn on a log axis.
"""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.ticker import FuncFormatter, NullLocator, SymmetricalLogLocator

from gnssrel.report.layout import ReportFigure, new_figure, panel_letter
from gnssrel.report.palette import INK, MUTED, REFERENCE
from gnssrel.text import fmt

__all__ = ["COMPONENT_STYLES", "LINEAR_WITHIN_MM", "TERM_LABELS", "survey_figure", "term_rows"]

LINEAR_WITHIN_MM = 1.0
"""Half-width of the linear part of the symmetric-log axis of panel a, mm."""
TERM_LABELS = {
    "periodic": "periodic term omitted",
    "periodic_state_form": "periodic term as -2 r·v/c² (state form)",
    "j2": "J2 term omitted",
    "shapiro": "Shapiro delay omitted",
    "sagnac": "Earth rotation (Sagnac) omitted",
    "clock_convention_mixed": "clocks of the other convention mixed in",
    "product_convention": "the products' model (state form, no J2)",
}
"""Row labels of panel a per ``term_effects_mm`` key (any other key is shown by its name)."""
COMPONENT_STYLES = {
    "east": {"marker": "o", "color": INK, "markerfacecolor": INK},
    "north": {"marker": "^", "color": INK, "markerfacecolor": "white"},
    "up": {"marker": "s", "color": MUTED, "markerfacecolor": MUTED},
}
"""Components told apart by marker shape and fill (ink and grey): no system colour, which would
read as a satellite system in every other figure."""
COMPONENT_OFFSETS = {"east": -0.22, "north": 0.0, "up": 0.22}


def _size_text(mm: float) -> str:
    if mm >= 1000.0:
        return f"{mm / 1000.0:.2f} m"
    if mm >= 10.0:
        return f"{mm:.0f} mm"
    return f"{mm:.1f} mm"


def term_rows(summary: dict) -> list[tuple[str, str, dict, float]]:
    """(key, label, {east, north, up} mm, 3-D size mm) per term of the summary, largest first."""
    rows = []
    for key, effect in (summary.get("term_effects_mm") or {}).items():
        values = {c: float(effect[c]) if effect.get(c) is not None else np.nan for c in COMPONENT_OFFSETS}
        size = float(np.sqrt(np.nansum(np.square(list(values.values())))))
        rows.append((key, TERM_LABELS.get(key, key), values, size))
    return sorted(rows, key=lambda r: -r[3])


def survey_figure(summary: dict, name: str | None = None) -> ReportFigure | None:
    """The figure of one survey summary (module text); None when it holds no term effect."""
    rows = term_rows(summary)
    if not rows:
        return None
    convergence = summary.get("convergence") or []
    fig = new_figure(8.4, 3.2 + 0.34 * len(rows))
    grid = fig.add_gridspec(2, 1, height_ratios=[0.6 + 0.34 * len(rows), 2.2])
    ax_terms, ax_conv = fig.add_subplot(grid[0]), fig.add_subplot(grid[1])
    largest = _terms_panel(ax_terms, rows)
    drawn = _convergence_panel(ax_conv, convergence)
    who = name or "the log"
    ax_terms.set_title(f"{who}\nwhat each term does to the point")
    panel_letter(ax_terms, "a")
    panel_letter(ax_conv, "b")
    return ReportFigure(f"survey_terms_{_stem(name)}" if name else "survey_terms",
                        f"Survey of {who}: coordinate change per term, convergence",
                        _caption(summary, rows, largest, drawn), fig)


def _mm_tick(value, _pos=None) -> str:
    """Tick text of panel a: millimetres below a metre, metres from there (``-10 m``)."""
    if value == 0:
        return "0"
    if abs(value) >= 1000.0:
        return f"{value / 1000.0:g} m"
    return f"{value:g}"


def _stem(name: str) -> str:
    return "".join(ch if ch.isalnum() or ch in "-_" else "_" for ch in name)


def _terms_panel(ax, rows) -> float:
    y = np.arange(len(rows))[::-1]                      # largest on top
    largest = max((r[3] for r in rows), default=0.0)
    for yi, (_, _, values, size) in zip(y, rows):
        ax.axhline(yi, color="white", linewidth=0.8, zorder=0)
        for c, v in values.items():
            if np.isfinite(v):
                ax.plot([0.0, v], [yi + COMPONENT_OFFSETS[c]] * 2, color=COMPONENT_STYLES[c]["color"],
                        linewidth=0.8, zorder=2)
                ax.plot([v], [yi + COMPONENT_OFFSETS[c]], linestyle="none", markersize=5.5, zorder=3,
                        **COMPONENT_STYLES[c])
    limit = max(10.0 ** np.ceil(np.log10(max(largest, 10.0))), 10.0)
    ax.set_xscale("symlog", linthresh=LINEAR_WITHIN_MM, linscale=0.6)
    ax.set_xlim(-limit, limit)
    ax.axvline(0.0, color=REFERENCE, linewidth=0.9, zorder=1)
    for side in (-1, 1):                                  # the edges of the linear band
        ax.axvline(side * LINEAR_WITHIN_MM, color=MUTED, linewidth=0.6, linestyle=(0, (2, 2)), zorder=1)
    ax.set_yticks(y, [f"{r[1]}  ({_size_text(r[3])})" for r in rows])
    ax.xaxis.set_major_locator(SymmetricalLogLocator(base=10.0, linthresh=LINEAR_WITHIN_MM))
    ax.xaxis.set_major_formatter(FuncFormatter(_mm_tick))
    ax.xaxis.set_minor_locator(NullLocator())
    ax.set_ylim(-0.6, len(rows) - 0.4)
    ax.grid(axis="x", color="white", linewidth=1.0)
    ax.grid(axis="y", visible=False)
    ax.set_xlabel(f"coordinate change when the term is switched off (mm; 'm' marks metres)\n"
                  f"symmetric-log axis, linear within ±{LINEAR_WITHIN_MM:g} mm; 3-D size in brackets")
    handles = [Line2D([], [], linestyle="none", markersize=5.5, label=c, **COMPONENT_STYLES[c])
               for c in COMPONENT_OFFSETS]
    ax.legend(handles=handles, loc="lower left", ncols=3, borderaxespad=0.3,
              columnspacing=0.9, handletextpad=0.2)
    # lower left: the bottom row is the smallest effect, so nothing of it lies metres to the left
    return largest


def _convergence_panel(ax, convergence) -> int:
    """Draw panel b; the number of points drawn (positive distances only, on a log axis)."""
    hours = np.array([c.get("hours", np.nan) for c in convergence], float)
    drawn = 0
    for key, label, style in (("to_final_3d_m", "to the solution of the whole log", {"color": INK}),
                              ("error_3d_m", "to the reference position",
                               {"color": MUTED, "linestyle": (0, (6, 2))})):
        mm = np.array([c.get(key) if c.get(key) is not None else np.nan for c in convergence], float) * 1000.0
        keep = np.isfinite(mm) & (mm > 0) & np.isfinite(hours)
        if keep.any():
            ax.plot(hours[keep], mm[keep], marker="o", markersize=3.5, label=label, **style)
            drawn += int(keep.sum())
    ax.set_xlabel("data used from the start of the log (h)")
    ax.set_ylabel("3-D distance (mm)")
    if drawn:
        ax.set_yscale("log")
        ax.legend(loc="lower left")        # the curves fall from the upper left
    else:
        ax.text(0.5, 0.5, "one block of data only: no convergence to draw", transform=ax.transAxes,
                ha="center", va="center", color=MUTED)
    if np.isfinite(hours).any():
        ax.set_xlim(0.0, np.nanmax(hours) + 0.5)
    ax.grid(axis="both")
    return drawn


def _caption(summary, rows, largest, drawn) -> str:
    position = summary.get("position") or {}
    offsets = ", ".join(f"{c} {fmt(position.get(f'{c}_m'), '.3f')} m" for c in ("east", "north", "up"))
    smallest = min(rows, key=lambda r: r[3])
    etrf = position.get("etrf2000_check_m") or {}
    sigma = position.get("realistic_sigma_m") or {}
    sigma_text = "/".join(fmt(sigma.get(c), ".4f") for c in ("east", "north", "up")) if sigma else ""
    k = summary.get("relativity_k_phase") or {}
    k_text = "; ".join(f"{s} {v['k']:.5f} ± {v['sigma'] if v.get('sigma') is not None else v.get('sigma_formal')}"
                       for s, v in k.items() if v.get("k") is not None)
    return (
        "Static carrier-phase position (ionosphere-free code and phase, precise orbits and clocks). "
        "(a) For each relativistic term, the change of the east, north and up coordinates of the point, in "
        "millimetres, when that term alone is switched off (the state-form row: the periodic term replaced by "
        "-2 r·v/c²), the solution with every term applied being zero (violet line). The axis is symmetric-"
        f"logarithmic: linear within ±{LINEAR_WITHIN_MM:g} mm (dotted lines), logarithmic beyond, so each "
        "decade is one step (ticks in mm, 'm' marking metres); the 3-D size of each change is in brackets "
        f"(largest {_size_text(largest)}, smallest {_size_text(smallest[3])}: {smallest[1]}). "
        "(b) Convergence: the 3-D distance, in millimetres on a logarithmic axis, of the solution from the data "
        "up to each hour to the solution of the whole log (solid; zero at the end, not drawn) and to the "
        f"reference position (dashed); {drawn} point(s) drawn. "
        f"Solution minus the reference: {offsets}"
        + (f" (realistic sigma {sigma_text} m, east/north/up)." if sigma_text else ".")
        + (" The same solution turned into ETRF2000 (approximate, for a header in ETRS89) minus the reference: "
           + ", ".join(f"{c} {fmt(etrf.get(c), '.3f')} m" for c in ("east", "north", "up")) + "." if etrf else "")
        + (f" Factor k of the periodic term from phase: {k_text}." if k_text else ""))
