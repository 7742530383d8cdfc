"""Figure family 6: satellite coverage: when each satellite has a broadcast state and is observed.

One row per satellite (grouped by system): a pale band where the broadcast
ephemerides give a valid state, a solid band where a receiver log has an
ionosphere-free code observation of it, and a tick at each change of ephemeris record.
"""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from gnssrel.report.layout import ReportFigure, as_plot_times, gpst_axis, new_figure, systems_in
from gnssrel.report.palette import INK, system_colour, system_name


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    v = np.concatenate(([False], mask, [False])).astype(np.int8)
    edges = np.flatnonzero(np.diff(v))
    return list(zip(edges[0::2], edges[1::2]))


def observed_mask(content, times, svs, elevation_mask_deg: float = 10.0) -> np.ndarray | None:
    """(time, sv) True where any receiver log has an ionosphere-free code observation."""
    seen = np.zeros((len(times), len(svs)), dtype=bool)
    any_log = False
    index = {sv: j for j, sv in enumerate(svs)}
    t_index = {t: i for i, t in enumerate(np.asarray(times).astype("datetime64[ns]").astype("int64"))}
    for r in content.receivers:
        if r.audit is None:
            continue
        any_log = True
        c = r.audit.corrections
        c = c[c["code"].str.contains("+", regex=False) & (c["elevation_deg"] >= elevation_mask_deg)]
        ti = np.array([t_index.get(int(t), -1) for t in c["time"].to_numpy().astype("datetime64[ns]").astype("int64")],
                      dtype=np.int64)
        si = np.array([index.get(s, -1) for s in c["sv"].to_numpy()], dtype=np.int64)
        ok = (ti >= 0) & (si >= 0)
        seen[ti[ok], si[ok]] = True
    return seen if any_log else None


def coverage_figure(content) -> ReportFigure:
    ds = content.relativity
    times = ds["time"].values
    svs = [str(s) for s in ds["sv"].values]
    letters = systems_in(svs)
    order = [sv for s in letters for sv in sorted(v for v in svs if v[0] == s)]
    col = [svs.index(sv) for sv in order]
    valid = (ds["status"].transpose("time", "sv").values == 0)[:, col]
    rows = ds["ephemeris_row"].transpose("time", "sv").values[:, col] if "ephemeris_row" in ds else None
    seen = observed_mask(content, times, order)
    x = as_plot_times(times)
    step = np.median(np.diff(x)) if x.size > 1 else 1.0 / 2880
    height = max(3.6, 0.14 * len(order) + 1.6)
    fig = new_figure(9.0, height)
    ax = fig.subplots()
    for j, sv in enumerate(order):
        yy = len(order) - 1 - j
        colour = system_colour(sv)
        for a, b in _runs(valid[:, j]):
            ax.broken_barh([(x[a], x[b - 1] - x[a] + step)], (yy - 0.32, 0.64), facecolors=colour, alpha=0.25,
                           linewidth=0)
        if seen is not None:
            for a, b in _runs(seen[:, j]):
                ax.broken_barh([(x[a], x[b - 1] - x[a] + step)], (yy - 0.2, 0.4), facecolors=colour,
                               linewidth=0)
        if rows is not None:
            change = np.flatnonzero((np.diff(rows[:, j]) != 0) & (rows[1:, j] >= 0) & (rows[:-1, j] >= 0)) + 1
            ax.scatter(x[change], np.full(change.size, yy + 0.42), marker="|", s=9, color=INK, linewidths=0.9)
    ax.set_yticks(np.arange(len(order)))
    ax.set_yticklabels(order[::-1], fontsize=6.2)
    for tick, sv in zip(ax.get_yticklabels(), order[::-1]):
        tick.set_color(system_colour(sv))
    ax.set_ylim(-0.8, len(order) - 0.2)
    ax.set_ylabel("satellite (RINEX name)")
    ax.grid(False)
    ax.set_title("Satellite coverage")
    gpst_axis(ax, times)
    handles = [Patch(facecolor="#777777", alpha=0.3, label="broadcast state valid"),
               Line2D([], [], color=INK, linestyle="none", marker="|", markersize=7, label="new ephemeris record")]
    if seen is not None:
        handles.insert(1, Patch(facecolor="#555555", label="observed by a receiver (ionosphere-free code)"))
    handles += [Patch(facecolor=system_colour(s), label=system_name(s)) for s in letters]
    fig.legend(handles=handles, loc="outside lower center", ncols=min(len(handles), 4), fontsize=7.5)
    n_obs = "" if seen is None else (f" The receivers observed at least one satellite at "
                                     f"{100 * seen.any(axis=1).mean():.0f}% of the epochs, and "
                                     f"{np.median(seen.sum(axis=1)):.0f} satellites at a typical (median) epoch.")
    caption = (
        "Each row is one satellite, grouped and coloured by system. Pale band: the broadcast navigation data "
        "give a valid state (healthy record within its fit interval); solid band: at least one receiver log "
        "holds an ionosphere-free code observation above the elevation mask; ticks: a new broadcast "
        f"record takes over (toe changes).{n_obs} GPST.")
    return ReportFigure("coverage", "Satellite coverage", caption, fig)
