"""Figure: broadcast minus precise orbits per epoch (radial, along, cross), and each satellite's radial mean.

One row of panels per system (radial, along-track, cross-track against GPST, one thin
line per satellite, broken wherever either side has no position), and a bottom row
with each satellite's mean radial difference: the antenna offset, since broadcast
orbits refer to the antenna phase centre and precise ones to the centre of mass.
Drawn only when precise orbits were given (``content.orbit_differences``).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from gnssrel.report.layout import (
    ReportFigure,
    as_plot_times,
    gpst_axis,
    new_figure,
    panel_letter,
    systems_in,
    tint,
)
from gnssrel.report.palette import INK, MUTED, PANEL, system_colour, system_name
from gnssrel.text import fmt

COMPONENTS = (("radial_m", "radial"), ("along_m", "along-track"), ("cross_m", "cross-track"))


def _sv_key(sv: str):
    return sv[0], int(sv[1:]) if sv[1:].isdigit() else sv


def _matrix(table: pd.DataFrame, column: str, times: np.ndarray, svs: list[str]) -> np.ndarray:
    """(time, sv) values of ``column`` on the full epoch list; NaN where the pair is missing,
    so that plotted lines break at gaps instead of bridging them."""
    wide = table.pivot_table(index="time", columns="sv", values=column, aggfunc="first")
    return wide.reindex(index=times, columns=svs).to_numpy(float)


def _limits(values: np.ndarray) -> tuple[float, float]:
    """y limits that hold 99.5 % of the points (a few wild epochs do not flatten the rest)."""
    v = values[np.isfinite(values)]
    if v.size == 0:
        return -1.0, 1.0
    lo, hi = np.percentile(v, [0.25, 99.75])
    lo, hi = min(lo, 0.0), max(hi, 0.0)
    pad = 0.08 * max(hi - lo, 0.2)
    return lo - pad, hi + pad


def orbit_differences_figure(content) -> ReportFigure | None:
    table = content.orbit_differences
    if table is None or len(table) == 0:
        return None
    table = table.copy()
    table["time"] = pd.to_datetime(table["time"]).to_numpy().astype("datetime64[ns]")
    times = np.unique(table["time"].to_numpy())
    letters = systems_in(table["sv"].unique())
    x = as_plot_times(times)
    means = table.groupby("sv")["radial_m"].mean()
    order = sorted(means.index, key=lambda s: (letters.index(s[0]), _sv_key(s)))

    fig = new_figure(10.0, 1.85 * len(letters) + 2.6)
    grid = fig.add_gridspec(len(letters) + 1, 3, height_ratios=[1.0] * len(letters) + [1.15])
    first = None
    bottom_axes = []
    for i, s in enumerate(letters):
        svs = [sv for sv in order if sv[0] == s]
        part = table[table["system"] == s]
        for j, (column, name) in enumerate(COMPONENTS):
            ax = fig.add_subplot(grid[i, j], sharex=first)
            first = first or ax
            ax.plot(x, _matrix(part, column, times, svs), color=tint(system_colour(s), 0.3), linewidth=0.7)
            ax.axhline(0.0, color=INK, linewidth=0.6)
            if column == "radial_m":
                level = float(np.median(means[svs]))
                ax.axhline(level, color=INK, linewidth=1.0, linestyle=(0, (4, 2)))
                ax.text(0.99, 0.04, f"median of the satellites' means {fmt(level)} m", transform=ax.transAxes,
                        ha="right", va="bottom", fontsize=7, color=INK,
                        bbox={"facecolor": PANEL, "edgecolor": "none", "pad": 1.0})
            ax.set_ylim(*_limits(part[column].to_numpy(float)))
            ax.set_ylabel(f"{name} (m)")
            if i == 0:
                ax.set_title(f"{name}, broadcast − precise", fontsize=9, loc="center")
            if j == 0:
                ax.text(0.01, 0.96, f"{system_name(s)}: {len(svs)} satellites", transform=ax.transAxes,
                        ha="left", va="top", fontsize=7.5, color=system_colour(s), fontweight="bold",
                        bbox={"facecolor": PANEL, "edgecolor": "none", "pad": 1.0})
            if i < len(letters) - 1:
                ax.tick_params(labelbottom=False)
            else:
                bottom_axes.append(ax)
    for ax in bottom_axes:
        gpst_axis(ax, times)
    panel_letter(fig.axes[0], "a")

    ax_mean = fig.add_subplot(grid[len(letters), :])
    pos = np.arange(len(order))
    values = means[order].to_numpy(float)
    colours = [system_colour(sv) for sv in order]
    ax_mean.vlines(pos, 0.0, values, colors=colours, linewidth=1.6)
    ax_mean.scatter(pos, values, color=colours, s=14, zorder=3)
    ax_mean.axhline(0.0, color=MUTED, linewidth=0.8)
    ax_mean.set_xticks(pos)
    ax_mean.set_xticklabels(order, rotation=90, fontsize=5.8 if len(order) > 50 else 7)
    for tick, sv in zip(ax_mean.get_xticklabels(), order):
        tick.set_color(system_colour(sv))
    ax_mean.set_xlim(-0.8, len(order) - 0.2)
    ax_mean.set_xlabel("satellite (RINEX name)")
    ax_mean.set_ylabel("mean radial (m)")
    ax_mean.set_title("Each satellite's mean radial difference (the antenna offset until offsets are applied)",
                      fontsize=9)
    panel_letter(ax_mean, "b")
    return ReportFigure("orbit_differences", "Broadcast minus precise orbits per epoch",
                        _caption(content, letters, means), fig)


def _caption(content, letters, means) -> str:
    sources = ", ".join(p.rsplit("/", 1)[-1] for p in content.inputs.get("sp3", [])) or "the SP3 files"
    medians = "; ".join(f"{system_name(s)} {fmt(float(np.median(means[[v for v in means.index if v[0] == s]])))} m"
                        for s in letters)
    zero_text = ""
    for s in letters:     # in a system whose satellites mostly sit off zero, name those near zero (other blocks)
        own = means[[v for v in means.index if v[0] == s]]
        near_zero = sorted((sv for sv, v in own.items() if abs(v) < 0.3), key=_sv_key)
        if abs(float(np.median(own))) >= 0.3 and near_zero:
            zero_text += (f" {system_name(s)} satellites with a mean within 0.3 m of zero (another antenna "
                          f"offset): {', '.join(near_zero)}.")
    offset_seen = any(abs(float(np.median(means[[v for v in means.index if v[0] == s]]))) >= 0.3 for s in letters)
    here = ("" if offset_seen else " Here every system's median lies within 0.3 m of zero: these two orbit "
            "sources refer to the same point of the satellite.")
    return (
        f"(a) Broadcast minus precise satellite positions ({sources}) at the precise epochs, projected on "
        "the orbital frame of the precise state: radial (along r), cross-track (along r × v, inertial v) and "
        "along-track; one line per satellite, broken where either side has no position; the dashed line is the "
        "median over the system's satellites of their mean radial difference. (b) Each satellite's mean radial "
        "difference. It holds the satellite antenna offset: broadcast orbits refer to the antenna phase centre, "
        "precise orbits to the satellite's centre of mass, and gnssrel does not apply antenna offsets yet, so "
        "this mean is a property of the satellite's antenna and block, not an orbit error (the radial RMS of "
        f"the tables includes it). Medians per system: {medians}.{zero_text}{here} Differences in metres; GPST.")
