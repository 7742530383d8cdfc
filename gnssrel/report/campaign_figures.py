"""The figures of the campaign report: k per station-day, position error per hypothesis, the
per-satellite view across the network, and the accounting per station-day.

Each function takes plain tables (pandas) read from a campaign folder and returns a
:class:`~gnssrel.report.layout.ReportFigure`, or None when its input is absent.  Times are GPST.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
from matplotlib.ticker import FuncFormatter, MaxNLocator

from gnssrel.constants import SYSTEM_ORDER
from gnssrel.report.layout import (
    ReportFigure,
    as_plot_times,
    break_at_gaps,
    gpst_axis,
    new_figure,
    panel_letter,
)
from gnssrel.report.palette import (
    HYPOTHESIS_LABELS,
    HYPOTHESIS_STYLES,
    INK,
    MUTED,
    REFERENCE,
    system_colour,
    system_name,
)

__all__ = ["accounting_figure", "k_figure", "position_figure", "satellite_figure", "station_day_labels"]

C_M_S = 299_792_458.0
REASON_COLOURS = ("#5A2A82", "#9AA0A8", "#C9B27C", "#5B5B5B", "#7A8FA6", "#B9B9B9", "#8C6D62", "#D5CFC4")
"""Drop reasons, in order of their total count (used is drawn in ink)."""
RECEIVER_SHADES = ("#111111", "#5A2A82", "#7A8FA6", "#C9B27C", "#5B5B5B", "#8C6D62")
"""Receivers in the per-satellite panels (the system colour is the satellite's, in the top row)."""
MAX_RECEIVERS_DRAWN = len(RECEIVER_SHADES)
HORIZONTAL_LABELS = 8
"""Up to this many station-days the labels stand horizontal on two lines; more are rotated."""
K_AXIS_MARGIN = 0.6
"""The k axis shows every k and both reference lines, plus this much; longer error bars are cut."""


def station_day_labels(table: pd.DataFrame) -> list[str]:
    return [f"{s}\n{d}" for s, d in zip(table["station"], table["day"])]


def _x_axis(ax, labels) -> None:
    n = len(labels)
    step = max(1, int(np.ceil(n / 60)))
    if n <= HORIZONTAL_LABELS:
        ax.set_xticks(np.arange(n), labels, fontsize=8)
    else:                                   # one line per label, read upwards
        ax.set_xticks(np.arange(n)[::step], [x.replace("\n", " ") for x in labels[::step]], fontsize=7,
                      rotation=90)
    ax.set_xlim(-0.6, n - 0.4)
    ax.set_xlabel("station-day (station, date)")


def _finish(ax, table: pd.DataFrame, ylabel: str, title: str, legend=None) -> None:
    """Mark the failed station-days, the legend right of the axes, labels and title."""
    for xi in np.flatnonzero((table["status"] != "ok").to_numpy()):
        ax.text(xi, 0.5, "failed", rotation=90, ha="center", va="center", color=MUTED, fontsize=8,
                transform=ax.get_xaxis_transform())
    ax.legend(*(legend or ()), loc="upper left", bbox_to_anchor=(1.01, 1.0))
    ax.set_ylabel(ylabel)
    _x_axis(ax, station_day_labels(table))
    ax.set_title(title)


def _width(n: int) -> float:
    """Inches: room for the legend on the right, then a label's width per station-day (or a rotated one)."""
    per = 0.95 if n <= HORIZONTAL_LABELS else 0.22
    return float(min(16.0, 3.4 + per * max(n, 3)))


def _height(n: int) -> float:
    """Inches: rotated labels (one line each, up to ~25 characters) need their own room below the axes."""
    return 3.8 if n <= HORIZONTAL_LABELS else 5.0


def k_figure(table: pd.DataFrame) -> ReportFigure | None:
    letters = [s for s in SYSTEM_ORDER if f"k_{s}" in table]
    if table.empty or not letters:
        return None
    x = np.arange(len(table))
    fig = new_figure(_width(len(table)), _height(len(table)))
    ax = fig.add_subplot(1, 1, 1)
    ax.axhline(1.0, color=REFERENCE, linewidth=1.2, linestyle="-", zorder=1)
    ax.axhline(0.0, color=MUTED, linewidth=1.2, linestyle=(0, (6, 2)), zorder=1)
    spread = 0.5 / max(len(letters), 1)
    for i, s in enumerate(letters):
        k = pd.to_numeric(table[f"k_{s}"], errors="coerce").to_numpy(float)
        sig = pd.to_numeric(table.get(f"sigma_k_{s}"), errors="coerce").to_numpy(float) \
            if f"sigma_k_{s}" in table else np.full(len(k), np.nan)
        ok = np.isfinite(k)
        xs = x[ok] + (i - (len(letters) - 1) / 2) * spread
        ax.errorbar(xs, k[ok], yerr=np.where(np.isfinite(sig[ok]), sig[ok], 0.0), fmt="o", markersize=5,
                    color=system_colour(s), ecolor=system_colour(s), elinewidth=1.4, capsize=3, zorder=3,
                    label=f"{system_name(s)} (k ± 1σ)")
    handles, names = ax.get_legend_handles_labels()
    handles += [Line2D([], [], color=REFERENCE, linewidth=1.2),
                Line2D([], [], color=MUTED, linewidth=1.2, linestyle=(0, (6, 2)))]
    names += ["k = 1: the term as specified", "k = 0: no periodic term"]
    ks = np.concatenate([pd.to_numeric(table[f"k_{s}"], errors="coerce").to_numpy(float) for s in letters])
    ks = ks[np.isfinite(ks)]
    lo, hi = ax.get_ylim()
    ax.set_ylim(max(lo, min(0.0, *ks) - K_AXIS_MARGIN), min(hi, max(1.0, *ks) + K_AXIS_MARGIN))
    _finish(ax, table, "k (factor on the periodic term)", "Periodic relativistic term: fitted factor k per station-day",
            (handles, names))
    caption = ("The factor k that best explains each station-day's pseudoranges as k times the periodic "
               "relativistic clock term, with its 1σ (jackknife) uncertainty, one marker per system. "
               "Solid violet line: k = 1, the term applied as the interface specifications prescribe; dashed "
               "grey line: k = 0, no periodic term at all. Error bars longer than the axes are cut at its edge. "
               "Failed station-days are marked and have no k.")
    return ReportFigure("campaign_k", "Fitted k per station-day", caption, fig)


def position_figure(table: pd.DataFrame) -> ReportFigure | None:
    cols = {"applied": "median_error_3d_m", "omitted": "median_error_3d_m_without_periodic"}
    if table.empty or not all(c in table for c in cols.values()):
        return None
    values = {h: pd.to_numeric(table[c], errors="coerce").to_numpy(float) for h, c in cols.items()}
    if not any(np.isfinite(v).any() for v in values.values()):
        return None
    x = np.arange(len(table))
    fig = new_figure(_width(len(table)), _height(len(table)))
    ax = fig.add_subplot(1, 1, 1)
    width = 0.38
    for j, (h, v) in enumerate(values.items()):
        style = HYPOTHESIS_STYLES[h]
        ax.bar(x + (j - 0.5) * width, np.where(np.isfinite(v), v, 0.0), width, color=style["color"],
               hatch=None if h == "applied" else "///", edgecolor="white", linewidth=0.5,
               label=HYPOTHESIS_LABELS[h], zorder=2)
    finite = np.concatenate([v[np.isfinite(v) & (v > 0)] for v in values.values()])
    if finite.size and finite.max() / max(finite.min(), 1e-3) > 30:
        ax.set_yscale("log")
    _finish(ax, table, "median 3-D position error (m)",
            "Median 3-D position error per station-day, periodic term applied or omitted")
    caption = ("For each station-day, the median over its epochs of the 3-D distance between the "
               "single-epoch code position and the station's reference position (its RINEX header unless "
               "given), with the periodic relativistic term applied as specified (solid) and omitted "
               "(hatched). A station-day without a solved epoch has no bar.")
    return ReportFigure("campaign_position", "Position error per station-day", caption, fig)


def pseudorange_residuals_m(corrections: pd.DataFrame) -> pd.Series:
    """Pseudorange minus the modelled range with the periodic term applied, less the median of each
    epoch (the receiver clock), less then the median of each system over the table (the receiver's
    offset between systems): metres, per observation of one station-day's corrections table."""
    c = corrections
    adds = ~c["periodic_in_clock"].astype(bool).to_numpy() if "periodic_in_clock" in c else True
    clock_s = c["satellite_clock_s"] + np.where(adds, c["periodic_s"], 0.0) + c.get("j2_s", 0.0)
    model = (c["geometric_range_m"] - C_M_S * clock_s + c["troposphere_m"] + c["ionosphere_m"]
             + c["group_delay_m"] + c.get("shapiro_m", 0.0))
    raw = c["pseudorange_m"] - model
    per_epoch = raw - raw.groupby(c["time"]).transform("median")
    if "system" not in c:
        return per_epoch
    return per_epoch - per_epoch.groupby(c["system"]).transform("median")


def satellite_figure(relativity: pd.DataFrame, residuals: pd.DataFrame, n_sats: int = 3) -> ReportFigure | None:
    """``relativity``: time, sv, periodic_icd_s (the network days); ``residuals``: time, sv, station,
    residual_m (every task)."""
    if residuals is None or residuals.empty:
        return None
    seen = (residuals.groupby(["date", "sv"]).agg(n=("station", "nunique"), m=("residual_m", "size"))
            .sort_values(["n", "m"], ascending=False, kind="stable")["n"])
    picked = []            # the (day, satellite) pairs seen by most receivers (then longest), each satellite once
    for (date, sv), n in seen.items():
        if sv not in {p[1] for p in picked}:
            picked.append((date, sv, n))
        if len(picked) == n_sats:
            break
    shown = residuals[pd.MultiIndex.from_frame(residuals[["date", "sv"]]).isin([p[:2] for p in picked])]
    stations = sorted(shown["station"].unique())
    fig = new_figure(3.4 * len(picked) + 1.6, 5.4)
    axes = fig.subplots(2, len(picked), squeeze=False, sharex="col")
    for j, (date, sv, n) in enumerate(picked):
        top, bottom = axes[0, j], axes[1, j]
        mine = shown[(shown["sv"] == sv) & (shown["date"] == date)]
        t0, t1 = mine["time"].min(), mine["time"].max()
        if relativity is not None and not relativity.empty:
            term = relativity[(relativity["sv"] == sv) & relativity["time"].between(t0, t1)].sort_values("time")
            top.plot(as_plot_times(term["time"]), term["periodic_icd_s"] * 1e9, color=system_colour(sv),
                     linewidth=1.6)
        top.set_title(f"{sv} on {date}: {n} receiver(s)", fontsize=9)
        top.set_ylabel("periodic term (ns)" if j == 0 else "")
        for st, rows in mine.sort_values("time").groupby("station", sort=True):
            i = stations.index(st)
            shade = RECEIVER_SHADES[i] if i < MAX_RECEIVERS_DRAWN else MUTED
            bottom.plot(*break_at_gaps(as_plot_times(rows["time"].to_numpy()), rows["residual_m"].to_numpy(float),
                                      factor=5.0), color=shade, linewidth=0.6,
                        marker="o", markersize=2.4, alpha=0.85)
        bottom.axhline(0.0, color=MUTED, linewidth=0.8)
        bottom.set_ylabel("pseudorange residual (m)" if j == 0 else "")
        gpst_axis(bottom, mine["time"].to_numpy())
        panel_letter(top, "abcdefgh"[2 * j])
        panel_letter(bottom, "abcdefgh"[2 * j + 1])
    handles = [Line2D([], [], color=RECEIVER_SHADES[i], marker="o", markersize=3, label=st)
               for i, st in enumerate(stations[:MAX_RECEIVERS_DRAWN])]
    if len(stations) > MAX_RECEIVERS_DRAWN:
        handles.append(Patch(color=MUTED, label=f"{len(stations) - MAX_RECEIVERS_DRAWN} more receivers"))
    fig.legend(handles=handles, loc="outside right upper", title="receiver", title_fontsize=8)
    caption = (
        "The satellites seen by the most receivers on one day of the campaign. Top row: the satellite's periodic "
        "relativistic clock term from the network day's broadcast orbits (ns, as the interface specification "
        "defines it). Bottom row: each receiver's pseudorange residual to that satellite (m): the pseudorange "
        "minus the modelled range with the periodic term applied, less the median over the epoch's satellites "
        "(the receiver clock) and the day's median per system (the receiver's offset between systems); where "
        "receivers agree, the one listed later covers the others. A residual that followed the top row would "
        "betray a periodic term handled differently from the model. Lines break where the satellite was not "
        "observed. Times GPST.")
    return ReportFigure("campaign_satellites", "The same satellites across the network", caption, fig)


def accounting_figure(counts: pd.DataFrame) -> ReportFigure | None:
    """``counts``: one row per station-day (index: label), columns ``used`` and one per drop reason."""
    if counts is None or counts.empty:
        return None
    reasons = [c for c in counts.sum().sort_values(ascending=False).index if c != "used"]
    n = len(counts)
    fig = new_figure(9.0, min(14.0, max(2.6, 1.3 + 0.34 * n)))
    ax = fig.add_subplot(1, 1, 1)
    y = np.arange(n)[::-1]
    left = np.zeros(n)
    for name, colour in zip(["used", *reasons], (INK, *REASON_COLOURS * 4)):
        v = counts[name].fillna(0).to_numpy(float)
        ax.barh(y, v, left=left, color=colour, height=0.7, label=name, zorder=2)
        left += v
    for yi, total, label in zip(y, left, counts.index):
        if total == 0:
            ax.text(0, yi, "  nothing counted (failed)", va="center", color=MUTED, fontsize=8)
    ax.set_yticks(y, [str(s).replace("\n", " ") for s in counts.index], fontsize=8 if n <= 30 else 6)
    ax.grid(axis="x", color="white")
    ax.grid(axis="y", visible=False)
    ax.xaxis.set_major_locator(MaxNLocator(5, integer=True))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:,.0f}".replace(",", "\u2009")))
    ax.set_xlabel("observations")
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0))
    ax.set_title("Observations used and dropped by reason, per station-day")
    caption = ("Every code observation read from each station-day's log: used (ink) or dropped, stacked by "
               "the reason it was left aside (read = used + dropped). The numbers are in the campaign table.")
    return ReportFigure("campaign_accounting", "Accounting per station-day", caption, fig)
