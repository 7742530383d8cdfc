"""Figure family 1: the periodic relativistic clock term over time, both forms, one row per system.

Specification form F e sqrt(A) sin E (IS-GPS-200 20.3.3.3.3.1, each system with its
own F) against the state form -2 r.v/c^2, and their difference.  A day of real data
has 70 to 110 satellites: one panel each would be a wall, one panel for all a tangle.
So each system gets its own row (small multiples, shared time axis): the band is the
envelope (smallest to largest value over the system's satellites at each epoch), and
the few satellites with the largest term are drawn and named.
"""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from gnssrel.report.layout import (
    ReportFigure,
    as_plot_times,
    gpst_axis,
    label_line_ends,
    new_figure,
    panel_letter,
    systems_in,
    tint,
)
from gnssrel.report.palette import system_colour, system_name

N_NAMED = 3
"""Satellites per system drawn and named: those with the largest term."""
STATE_FORM_MARKERS = 36
"""The state form is drawn as about this many markers over the span, over the solid specification form."""
NAMED_DASHES = ["-", (0, (5, 1.6)), (0, (1.2, 1.2))]


def _envelope(ax, x, values, colour) -> None:
    ok = np.isfinite(values).any(axis=1)
    if not ok.any():
        return
    with np.errstate(invalid="ignore"):
        lo, hi = np.nanmin(np.where(ok[:, None], values, 0.0), axis=1), np.nanmax(
            np.where(ok[:, None], values, 0.0), axis=1)
    ax.fill_between(x, np.where(ok, lo, np.nan), np.where(ok, hi, np.nan), color=tint(colour, 0.72),
                    linewidth=0, zorder=1)


def _named(values, limit: int = N_NAMED) -> list[int]:
    with np.errstate(invalid="ignore"):
        peak = np.nanmax(np.abs(np.where(np.isfinite(values), values, 0.0)), axis=0)
    order = [int(k) for k in np.argsort(-peak, kind="stable") if peak[k] > 0]
    return order[:limit]


def periodic_figure(content) -> ReportFigure:
    ds = content.relativity
    times = ds["time"].values
    x = as_plot_times(times)
    icd = ds["periodic_icd_s"].transpose("time", "sv").values * 1e9
    state = ds["periodic_state_s"].transpose("time", "sv").values * 1e9
    diff = ds["periodic_diff_s"].transpose("time", "sv").values * 1e9
    from_broadcast = (ds["elements_from_broadcast"].transpose("time", "sv").values if "elements_from_broadcast" in ds
                      else np.isfinite(icd))
    diff = np.where(from_broadcast, diff, np.nan)   # with osculating elements it is zero by construction
    svs = np.array([str(s) for s in ds["sv"].values])
    letters = systems_in(svs)
    every = max(1, len(times) // STATE_FORM_MARKERS)

    fig = new_figure(9.4, 1.15 + 1.75 * len(letters))
    axes = fig.subplots(len(letters), 2, sharex=True, squeeze=False, width_ratios=(1.7, 1.0))
    worst, named_all = {}, {}
    for row, s in enumerate(letters):
        ax_term, ax_diff = axes[row]
        cols = np.flatnonzero(np.char.startswith(svs.astype(str), s))
        colour = system_colour(s)
        has_spec = bool(from_broadcast[:, cols].any())
        term = icd[:, cols] if has_spec else state[:, cols]    # GLONASS: no specification form
        _envelope(ax_term, x, term, colour)
        named = _named(term)
        named_all[s] = [svs[cols[k]] for k in named]
        for i, k in enumerate(named):
            ax_term.plot(x, term[:, k], color=colour, linestyle=NAMED_DASHES[i % len(NAMED_DASHES)],
                         linewidth=1.3, zorder=3)
            if has_spec:
                ax_term.plot(x[::every], state[::every, cols[k]], linestyle="none",
                             marker="o", markersize=3.0, markerfacecolor="white", markeredgecolor=colour,
                             markeredgewidth=0.9, zorder=4)
        ax_term.set_xlim(x[0], x[-1] + 0.07 * (x[-1] - x[0]))       # room for the names at the line ends
        label_line_ends(ax_term, x, [(svs[cols[k]], term[:, k], colour) for k in named], 0.12)
        ax_term.set_ylabel("term (ns)")
        ax_term.set_title(f"{system_name(s)}: {cols.size} satellites"
                          + ("" if has_spec else " (state form only)"), fontsize=9, color=colour)
        ax_diff.axhline(0.0, color="#9AA0A8", linewidth=0.7)
        sdiff = diff[:, cols]
        if np.isfinite(sdiff).any():
            _envelope(ax_diff, x, sdiff, colour)
            for i, k in enumerate(named):
                ax_diff.plot(x, sdiff[:, k], color=colour, linestyle=NAMED_DASHES[i % len(NAMED_DASHES)],
                             linewidth=1.0, zorder=3)
            worst[s] = float(np.nanmax(np.abs(sdiff)))
        else:
            ax_diff.text(0.5, 0.5, "no specification form\n(the ICD gives none)", transform=ax_diff.transAxes,
                         ha="center", va="center", fontsize=8, color="#4A4F57")
            ax_diff.set_yticks([0.0])
        ax_diff.set_ylabel("spec. − state (ns)")
        panel_letter(ax_term, "abcdefghijklmn"[2 * row])
        panel_letter(ax_diff, "abcdefghijklmn"[2 * row + 1])
    for ax in axes[-1]:
        gpst_axis(ax, times)
    fig.legend(handles=[
        Patch(facecolor=tint("#555555", 0.72), label="envelope of all the system's satellites"),
        Line2D([], [], color="#555555", linewidth=1.3, label="F e √A sin E, largest terms (named)"),
        Line2D([], [], color="#555555", linestyle="none", marker="o", markerfacecolor="white", markersize=4,
               label="−2 r·v / c² (state form)")], loc="outside lower center", ncols=3, fontsize=7.5)
    fig.suptitle("Periodic relativistic clock term, per system", x=0.01, ha="left", fontweight="bold",
                 fontsize=10)
    worst_text = ", ".join(f"{system_name(s)} {v:.3f} ns" for s, v in worst.items()) or "none"
    named_text = "; ".join(f"{system_name(s)} {', '.join(v)}" for s, v in named_all.items() if v)
    caption = (
        "Left column: the periodic relativistic clock term dt_r, one row per system, in the form of the "
        "interface specifications, F e √A sin E (IS-GPS-200 20.3.3.3.3.1; Galileo OS SIS ICD and BDS-SIS-ICD "
        "with their own value of μ). The tinted band is the envelope over all the system's satellites at "
        f"each epoch; the {N_NAMED} satellites with the largest term are drawn and named ({named_text}), "
        "with the state form −2 r·v/c² from the broadcast position and velocity as circles (every "
        f"{every} epochs). A system without a specification form (GLONASS) shows the state form. "
        "Right column: specification form minus state form (envelope and the same satellites); largest "
        f"absolute difference per system: {worst_text}. The difference is the part of −2 r·v/c² the "
        "Keplerian form leaves out (J2 and luni-solar perturbations of the orbit), well under the "
        "nanosecond. Broadcast ephemerides; GPST.")
    return ReportFigure("periodic_term", "Periodic clock term, both forms", caption, fig)
