"""Figure family 4: precise minus broadcast clocks, and the fitted convention factor k.

k is the factor of the periodic term in X - broadcast polynomial (``gnssrel.clocks.convention``):
0 the series excludes the term (as broadcast polynomials and IGS-style precise clocks do),
1 includes it, -1 includes it reversed, 2 applies it twice.
"""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D

from gnssrel.clocks.convention import CANDIDATES
from gnssrel.report.layout import (
    ReportFigure,
    as_plot_times,
    break_at_gaps,
    gpst_axis,
    new_figure,
    panel_letter,
    system_handles,
    systems_in,
)
from gnssrel.report.palette import OWN, REFERENCE, system_colour, system_name
from gnssrel.text import fmt_k

GAP_FACTOR = 3.0
"""A line stops where a satellite's series skips more than this many usual steps."""
CANDIDATE_WORDS = {0: "excludes", 1: "includes", -1: "reversed", 2: "doubled"}


def _signed(c: float) -> str:
    return f"{int(c)}".replace("-", "−")


def convention_rows(content) -> list[dict]:
    """One row per (clock series, system): label, k, sigma, verdict; precise product first."""
    rows = []
    if content.clock_summary:
        for s, e in content.clock_summary["by_system"].items():
            rows.append({"series": "precise product", "system": s, "k": e["convention_k"],
                         "sigma": e["convention_k_sigma"], "convention": e["convention"]})
    for r in content.receivers:
        if r.clock_check:
            for s, e in r.clock_check["by_system"].items():
                rows.append({"series": f"{r.name} clock table", "system": s, "k": e["convention_k"],
                             "sigma": e["convention_k_sigma"], "convention": e["convention"]})
    return rows


def clocks_figure(content) -> ReportFigure | None:
    rows = convention_rows(content)
    if not rows:
        return None
    table = content.clock_table
    fig = new_figure(9.4, 4.8)
    ax_series, ax_k = fig.subplots(1, 2, width_ratios=(1.65, 1.0))
    if table is not None and len(table):
        times = table["time"].to_numpy().astype("datetime64[ns]")
        for sv, group in table.groupby("sv", sort=True):
            xs, ys = break_at_gaps(as_plot_times(group["time"].to_numpy()), group["residual_ns"].to_numpy(),
                                   factor=GAP_FACTOR)
            ax_series.plot(xs, ys, color=system_colour(sv), linewidth=0.7)
        ax_series.axhline(0.0, color="#9AA0A8", linewidth=0.7)
        ax_series.set_ylabel("precise − broadcast − datum (ns)")
        ax_series.set_title("Precise minus broadcast clock, per satellite")
        ax_series.legend(handles=system_handles(systems_in(table["sv"].unique())), loc="upper left",
                         ncols=3)
        lim = np.nanpercentile(np.abs(table["residual_ns"].to_numpy()), 99.5) * 1.6
        ax_series.set_ylim(-lim, lim)
        gpst_axis(ax_series, times)
        panel_letter(ax_series, "a")
    else:
        ax_series.set_visible(False)

    y = np.arange(len(rows))[::-1]
    for c in CANDIDATES.values():
        ax_k.axvline(c, color=REFERENCE, linewidth=0.8, linestyle=(0, (4, 2)), zorder=1)
    candidates = sorted(CANDIDATES.values())          # named on the axis, never over the dashed lines
    ax_k.set_xticks(candidates, [f"{_signed(c)}\n{CANDIDATE_WORDS[int(c)]}" for c in candidates])
    for yy, row in zip(y, rows):
        colour = system_colour(row["system"])
        own = row["series"] != "precise product"
        ax_k.errorbar(row["k"], yy, xerr=3 * row["sigma"] if np.isfinite(row["sigma"]) else None,
                      fmt="D" if own else "o", markersize=5.5, color=colour, markeredgewidth=1.4 if own else 1.0,
                      markeredgecolor=OWN if own else colour, ecolor=colour, capsize=3, zorder=3)
    ax_k.set_yticks(y)
    ax_k.set_yticklabels([f"{r['series']} · {system_name(r['system'])}" for r in rows], fontsize=7.5)
    ax_k.set_ylim(-0.6, len(rows) - 0.4)
    ax_k.set_xlim(-1.5, 2.5)
    ax_k.set_xlabel("factor k on the periodic term (dimensionless)", fontsize=8)
    ax_k.set_ylabel("clock series · system")
    ax_k.grid(axis="x", color="white")
    ax_k.set_title("Convention fit")
    kinds = [Line2D([], [], linestyle="none", marker="o", color="#555555", label="precise product")]
    if any(r["series"] != "precise product" for r in rows):      # receivers' tables only when given
        kinds.append(Line2D([], [], linestyle="none", marker="D", color="#555555", markeredgecolor=OWN,
                            markeredgewidth=1.4, label="receiver's own table"))
    ax_k.legend(handles=kinds, loc="upper center", bbox_to_anchor=(0.5, -0.2), fontsize=7, ncols=len(kinds),
                borderaxespad=0.0, handletextpad=0.3, columnspacing=0.8)
    panel_letter(ax_k, "b" if ax_series.get_visible() else "a")
    listing = "; ".join(f"{r['series']} {r['system']}: k = {fmt_k(r['k'], r['sigma'])} "
                        f"({r['convention']})" for r in rows)
    source = content.clock_source or "the precise clocks"
    own_text = ("; receivers' own tables as diamonds edged in vermilion"
                if any(r["series"] != "precise product" for r in rows) else "")
    caption = (
        f"(a) Precise ({source}) minus broadcast satellite clock, per satellite and epoch, with the per-epoch "
        "datum of the product's time scale removed (alternating per-satellite mean and per-epoch median); "
        "the broadcast side excludes the periodic term, as IGS-style products do. (b) The fitted factor k of "
        "the periodic term F e √A sin E in each clock series and system (X − broadcast polynomial = offset + "
        "drift per satellite + k dt_r), with bars of ±3σ (σ: jackknife over satellites, honest about "
        "time-correlated residuals; bars narrower than the marker are hidden by it"
        f"{own_text}). Dashed lines: the "
        "candidates 0 (excludes the term), 1 (includes it), −1 (reversed), 2 (doubled). "
        f"{listing}. A correct receiver's own table includes the term (k = 1; IS-GPS-200 20.3.3.3.3.1). "
        "Lines stop where a satellite's series has a gap. Times GPST.")
    return ReportFigure("clock_convention", "Clocks: precise vs broadcast, convention", caption, fig)
