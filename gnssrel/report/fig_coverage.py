"""Figure family 6: the accounting of every satellite: with a state, observed, usable, or why not.

Three panels of our own design:

(a) per satellite, one horizontal stacked bar of epoch counts in mutually exclusive classes:
    observed with a valid state above the elevation mask (usable), observed below the mask,
    observed without a valid state, a valid state but not observed, and no valid state with the
    reason of the state table (``status`` codes, ``gnssrel.orbits.status``); the number of
    broadcast records that served the satellite is written at the end of its bar;
(b) per system, a heat strip over time: the share of the system's satellites with a valid state
    (and, with a receiver log, the share observed) in each time bin;
(c) per system, the accounting ledger of the observations: used, and dropped by reason.
"""

from __future__ import annotations

from itertools import pairwise

import numpy as np
from matplotlib.colors import LinearSegmentedColormap
from matplotlib.patches import Patch
from matplotlib.ticker import FixedFormatter, FixedLocator

from gnssrel.report.layout import ReportFigure, as_plot_times, gpst_axis, new_figure, panel_letter, systems_in
from gnssrel.report.palette import INK, MUTED, PANEL, REFERENCE, system_colour, system_name

ELEVATION_MASK_DEG = 10.0
HEAT_BINS = 48
"""Time bins of the heat strip (fewer when the span has fewer epochs)."""
HEAT = LinearSegmentedColormap.from_list("gnssrel_share", ["#FFFFFF", "#C9CED6", "#6B7380", INK])
"""White (none) to ink (all): one lightness ramp, the same for every kind of colour vision."""
OBSERVED_CLASSES = {        # class -> (label, colour, hatch)
    "usable": ("observed, valid state, above the mask", INK, None),
    "low": ("observed below the elevation mask", "#7A8290", None),
    "no_state": ("observed without a valid state", REFERENCE, None),
    "unseen": ("valid state, not observed", "#C9CED6", None),
}
NO_STATE_HATCHES = ("////", "xxx", "\\\\\\\\", "...", "++", "--", "oo")
DROP_COLOURS = ("#7A8290", "#C9CED6", "#B9A27C", "#5B5B5B", "#E3DCCB", "#9AA0A8", "#8C6D62")


def _grid_index(times) -> dict:
    return {t: i for i, t in enumerate(np.asarray(times).astype("datetime64[ns]").astype("int64"))}


def observed_classes(content, times, svs, elevation_mask_deg: float = ELEVATION_MASK_DEG):
    """(time, sv) int8 on the state grid: 0 not observed, 1 usable, 2 below the mask, 3 no valid state
    (observed by any receiver log; the best class wins).  None without a receiver log."""
    rank = np.full((len(times), len(svs)), 9, dtype=np.int8)      # 0 usable, 1 low, 2 no state, 9 unseen
    logs = [r.audit for r in content.receivers if r.audit is not None]
    if not logs:
        return None
    t_index, s_index = _grid_index(times), {sv: j for j, sv in enumerate(svs)}
    for audit in logs:
        c = audit.corrections
        ti = np.array([t_index.get(int(t), -1) for t in c["time"].to_numpy().astype("datetime64[ns]").astype("int64")],
                      dtype=np.int64)
        si = np.array([s_index.get(s, -1) for s in c["sv"].to_numpy()], dtype=np.int64)
        state_ok = (c["state_status"].to_numpy() == 0) if "state_status" in c else np.ones(len(c), bool)
        high = c["elevation_deg"].to_numpy(float) >= elevation_mask_deg
        r = np.where(~state_ok, 2, np.where(high, 0, 1)).astype(np.int8)
        ok = (ti >= 0) & (si >= 0)
        np.minimum.at(rank, (ti[ok], si[ok]), r[ok])              # the best class of any log wins
    return np.select([rank == 0, rank == 1, rank == 2], [1, 2, 3], 0).astype(np.int8)


def observed_mask(content, times, svs, elevation_mask_deg: float = ELEVATION_MASK_DEG) -> np.ndarray | None:
    """(time, sv) True where a receiver log has a usable observation (valid state, above the mask)."""
    cls = observed_classes(content, times, svs, elevation_mask_deg)
    return None if cls is None else cls == 1


def _bins(n: int) -> np.ndarray:
    return np.linspace(0, n, min(HEAT_BINS, n) + 1).astype(int)


def _shares(flags: np.ndarray, edges) -> np.ndarray:
    """Mean of (time, sv) booleans per time bin: (n_bins,)."""
    return np.array([flags[a:b].mean() if b > a else np.nan for a, b in pairwise(edges)])


def coverage_figure(content) -> ReportFigure:
    ds = content.relativity
    times = ds["time"].values
    svs = [str(s) for s in ds["sv"].values]
    letters = systems_in(svs)
    order = [sv for s in letters for sv in sorted(v for v in svs if v[0] == s)]
    col = [svs.index(sv) for sv in order]
    status = ds["status"].transpose("time", "sv").values[:, col].astype(int)
    codes = {int(k): str(v) for k, v in ds["status"].attrs.get("status_codes", {}).items()}
    rows = ds["ephemeris_row"].transpose("time", "sv").values[:, col] if "ephemeris_row" in ds else None
    seen = observed_classes(content, times, order)
    valid = status == 0

    n_sat = len(order)
    ledger = (content.accounting or {}).get("observations", {})
    height = max(5.0, 0.105 * n_sat + 1.9)
    heat_in = 0.9 + 0.22 * len(letters) * (1 if seen is None else 2)      # inches, as drawn
    ledger_in = 1.0 + 0.4 * len(ledger)
    fig = new_figure(10.0, height)
    grid = fig.add_gridspec(3, 2, width_ratios=(1.25, 1.0),
                            height_ratios=(heat_in, ledger_in, max(height - heat_in - ledger_in - 1.0, 0.6)))
    ax_sat = fig.add_subplot(grid[:, 0])
    ax_heat = fig.add_subplot(grid[0, 1])
    ax_led = fig.add_subplot(grid[1, 1])

    # (a) per satellite, stacked epoch counts
    y = np.arange(n_sat)[::-1]
    left = np.zeros(n_sat)
    handles = []
    classes = []
    if seen is not None:
        classes += [(key, seen == code) for code, key in ((1, "usable"), (2, "low"), (3, "no_state"))]
        classes.append(("unseen", (seen == 0) & valid))
    else:
        classes.append(("valid", valid))
    bad_codes = [c for c in sorted(np.unique(status)) if c != 0]
    for i, c in enumerate(bad_codes):
        classes.append((f"status{c}", (status == c) & (seen == 0 if seen is not None else True)))
    for key, flags in classes:
        counts = flags.sum(axis=0).astype(float)
        if key.startswith("status"):
            c = int(key[6:])
            label = f"no valid state: {_short(codes.get(c, f'status {c}'))}"
            style = {"facecolor": "white", "edgecolor": MUTED, "hatch": NO_STATE_HATCHES[bad_codes.index(c) % 7],
                     "linewidth": 0.4}
        elif key == "valid":
            label, style = "valid broadcast state", {"facecolor": "#6B7380"}
        else:
            label, colour, _ = OBSERVED_CLASSES[key]
            style = {"facecolor": colour}
        if counts.sum() == 0 and key != "valid":
            continue
        ax_sat.barh(y, counts, left=left, height=0.78, zorder=2, **style)
        handles.append(Patch(label=label, **{k: v for k, v in style.items() if k != "linewidth"}))
        left += counts
    if rows is not None:
        n_records = [np.unique(r[r >= 0]).size for r in rows.T]
        for yy, total, n in zip(y, left, n_records):
            if n:
                ax_sat.text(total + 0.01 * len(times), yy, str(n), va="center", ha="left", fontsize=5.2,
                            color="#4A4F57")
    ax_sat.yaxis.set_major_locator(FixedLocator(y))
    ax_sat.yaxis.set_major_formatter(FixedFormatter(order))
    ax_sat.tick_params(axis="y", labelsize=5.6 if n_sat > 60 else 6.4, length=0)
    for tick, sv in zip(ax_sat.get_yticklabels(), order):
        tick.set_color(system_colour(sv))
    ax_sat.set_ylim(-0.7, n_sat - 0.3)
    ax_sat.set_xlim(0, len(times) * 1.08)
    ax_sat.set_xlabel(f"epochs of the state grid (count; {len(times)} in the span)")
    ax_sat.set_ylabel("satellite (RINEX name)")
    ax_sat.grid(axis="x", color="white")
    ax_sat.grid(axis="y", visible=False)
    ax_sat.set_title("Every satellite, epoch by epoch")
    panel_letter(ax_sat, "a")
    fig.legend(handles=handles, loc="outside lower left", ncols=2, fontsize=7)

    # (b) per system, share of satellites with a valid state (and observed) per time bin
    edges = _bins(len(times))
    strips, labels = [], []
    for s in letters:
        cols = [j for j, sv in enumerate(order) if sv[0] == s]
        strips.append(_shares(valid[:, cols], edges))
        labels.append(f"{system_name(s)} state")
        if seen is not None:
            strips.append(_shares(seen[:, cols] == 1, edges))
            labels.append(f"{system_name(s)} usable")
    x = as_plot_times(times)
    step = np.median(np.diff(x)) if x.size > 1 else 1.0 / 2880
    x_edges = np.append(x[edges[:-1]], x[-1] + step)
    mesh = ax_heat.pcolormesh(x_edges, np.arange(len(strips) + 1), np.array(strips) * 100, cmap=HEAT,
                              vmin=0, vmax=100, shading="flat")
    ax_heat.set_ylim(len(strips), 0)
    ax_heat.yaxis.set_major_locator(FixedLocator(np.arange(len(strips)) + 0.5))
    ax_heat.yaxis.set_major_formatter(FixedFormatter(labels))
    ax_heat.tick_params(axis="y", labelsize=7, length=0)
    for tick, lab in zip(ax_heat.get_yticklabels(), labels):
        tick.set_color(system_colour(next(s for s in letters if lab.startswith(system_name(s)))))
    ax_heat.set_ylabel("system · share")
    ax_heat.grid(False)
    ax_heat.set_title("Share of each system's satellites, over time", fontsize=9)
    gpst_axis(ax_heat, times)
    bar = fig.colorbar(mesh, ax=ax_heat, location="right", fraction=0.05, pad=0.02)
    bar.set_label("satellites (%)", fontsize=7)
    bar.ax.tick_params(labelsize=6.5)
    panel_letter(ax_heat, "b")

    # (c) the observations' ledger per system
    systems = [s for s in letters if s in ledger] + sorted(s for s in ledger if s not in letters and s != "-")
    if systems:
        reasons = sorted({k for s in systems for k in ledger[s] if k not in ("read", "used")},
                         key=lambda k: -sum(ledger[s].get(k, 0) for s in systems))
        yl = np.arange(len(systems))[::-1]
        base = np.zeros(len(systems))
        for name, colour in zip(["used", *reasons], (INK, *DROP_COLOURS * 4)):
            v = np.array([ledger[s].get(name, 0) for s in systems], float)
            ax_led.barh(yl, v, left=base, color=colour, height=0.66, label=name, zorder=2)
            base += v
        ax_led.yaxis.set_major_locator(FixedLocator(yl))
        ax_led.yaxis.set_major_formatter(FixedFormatter([system_name(s) for s in systems]))
        for tick, s in zip(ax_led.get_yticklabels(), systems):
            tick.set_color(system_colour(s))
        ax_led.set_xlabel("code observations read (count)")
        ax_led.set_ylabel("system")
        ax_led.grid(axis="x", color="white")
        ax_led.grid(axis="y", visible=False)
        ax_led.legend(loc="upper left", bbox_to_anchor=(0.0, -0.3), fontsize=6.5, ncols=1)
        ax_led.set_title("Observations: used, or dropped by reason", fontsize=9)
        panel_letter(ax_led, "c")
    else:
        ax_led.set_visible(False)
    ax_led.set_facecolor(PANEL)
    return ReportFigure("coverage", "Satellite accounting", _caption(seen, valid, order, times, ledger), fig)


def _short(text: str) -> str:
    return text.split(" (")[0]


def _caption(seen, valid, order, times, ledger) -> str:
    share = 100 * valid.mean() if valid.size else 0.0
    text = (f"(a) Each satellite's epochs of the state grid ({len(times)} epochs, GPST), split into classes that "
            f"add up to the span: ")
    if seen is not None:
        usable = seen == 1
        text += ("observed by a receiver log with a valid broadcast state above the "
                 f"{ELEVATION_MASK_DEG:.0f}° elevation mask (usable, ink), observed below the mask, observed "
                 "without a valid state (violet), a valid state but not observed (light grey), ")
        tail = (f" Usable observations at {100 * usable.any(axis=1).mean():.0f}% of the epochs; "
                f"{np.median(usable.sum(axis=1)):.0f} satellites usable at a typical (median) epoch.")
    else:
        text += "a valid broadcast state (grey), "
        tail = ""
    text += ("and no valid state with the reason of the state table (hatched: no record within the maximum age, "
             "unhealthy, excluded by rule, ...). The small number at the end of a bar counts the broadcast "
             f"records that served the satellite. {share:.0f}% of all satellite-epochs have a valid state.{tail} "
             "(b) Per system and time bin, the share of the system's satellites with a valid state"
             + (" and with a usable observation" if seen is not None else "") + ", from white (none) to ink "
             "(all). ")
    text += ("(c) The ledger of the code observations per system: used in the fixes, or dropped with the "
             "reason (read = used + dropped; the accounting table lists the numbers)." if ledger else
             "(c) No observation log, so no observation ledger.")
    return text
