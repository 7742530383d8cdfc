"""Figure: one receiver's single-point positions as east / north / up errors, with satellites and DOP.

Per epoch, gnssrel's position from the receiver's log under each hypothesis the audit
computed (periodic term applied, omitted, ...; :mod:`gnssrel.audit.firmware`) minus the
reference position, turned into the local east / north / up frame at the reference
(:func:`gnssrel.geodesy.enu_errors`); the receiver's own fixes beside them when given.
The bottom panel gives the number of satellites in the applied fix and its position
dilution of precision: the audit's ``pdop`` column when it has one, else PDOP from the
geometry of the satellites above the elevation mask (:func:`geometry_pdop`).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from matplotlib.lines import Line2D

from gnssrel import geodesy
from gnssrel.report.layout import (
    ReportFigure,
    as_plot_times,
    break_at_gaps,
    gpst_axis,
    new_figure,
    panel_letter,
)
from gnssrel.report.palette import HYPOTHESIS_LABELS, HYPOTHESIS_STYLES, INK, MUTED, OWN
from gnssrel.text import fmt

COMPONENTS = ("east", "north", "up")
ELEVATION_MASK_DEG = 10.0


def enu_errors(positions: pd.DataFrame, reference_ecef_m) -> np.ndarray:
    """(n, 3) east, north, up of ``positions`` (x_m, y_m, z_m) minus the reference, at the reference."""
    return geodesy.enu_errors(positions[["x_m", "y_m", "z_m"]].to_numpy(float), reference_ecef_m)


def geometry_pdop(corrections: pd.DataFrame, times, elevation_mask_deg: float = ELEVATION_MASK_DEG) -> np.ndarray:
    """PDOP per epoch of ``times`` from the satellites above the mask in the audit's corrections table.

    One row per satellite and epoch (several codes of one satellite count once), unit line-of-sight
    rows (-cos el sin az, -cos el cos az, -sin el), one clock column per system (the fix estimates
    an inter-system offset); PDOP = sqrt(trace of the position block of (AᵀA)⁻¹).  NaN where an epoch
    has fewer satellites than unknowns.  All epochs at once: normal equations by ``np.bincount``.
    """
    c = corrections[np.isfinite(corrections["elevation_deg"].to_numpy(float))
                    & (corrections["elevation_deg"].to_numpy(float) >= elevation_mask_deg)]
    c = c.drop_duplicates(["time", "sv"])
    t = np.asarray(times).astype("datetime64[ns]")
    epoch = np.searchsorted(t, c["time"].to_numpy().astype("datetime64[ns]"))
    ok = (epoch < t.size)
    ok[ok] &= t[epoch[ok]] == c["time"].to_numpy().astype("datetime64[ns]")[ok]
    c, epoch = c[ok], epoch[ok]
    el, az = np.radians(c["elevation_deg"].to_numpy(float)), np.radians(c["azimuth_deg"].to_numpy(float))
    systems = sorted(c["system"].unique())
    system_index = np.searchsorted(systems, c["system"].to_numpy())
    m = 3 + len(systems)
    design = np.zeros((len(c), m))
    design[:, 0], design[:, 1], design[:, 2] = -np.cos(el) * np.sin(az), -np.cos(el) * np.cos(az), -np.sin(el)
    design[np.arange(len(c)), 3 + system_index] = 1.0
    normal = np.zeros((t.size, m, m))
    for i in range(m):
        for j in range(i, m):
            normal[:, i, j] = normal[:, j, i] = np.bincount(epoch, weights=design[:, i] * design[:, j],
                                                            minlength=t.size)
    present = normal[:, np.arange(3, m), np.arange(3, m)] > 0            # systems seen at each epoch
    normal[:, np.arange(3, m), np.arange(3, m)] += ~present             # absent system: a harmless unit pivot
    n_sat = np.bincount(epoch, minlength=t.size)
    solvable = n_sat >= 3 + present.sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):    # degenerate geometry (all in a plane): no DOP
        solvable[solvable] &= np.linalg.cond(normal[solvable]) < 1e10
    pdop = np.full(t.size, np.nan)
    if solvable.any():
        inverse = np.linalg.inv(normal[solvable])
        pdop[solvable] = np.sqrt(np.clip(np.trace(inverse[:, :3, :3], axis1=1, axis2=2), 0.0, None))
    return pdop


def _limits(values) -> tuple[float, float]:
    v = np.concatenate([np.ravel(a) for a in values]) if values else np.array([])
    v = v[np.isfinite(v)]
    if v.size == 0:
        return -1.0, 1.0
    lo, hi = np.percentile(v, [0.5, 99.5])
    pad = 0.1 * max(hi - lo, 1.0)
    return lo - pad, hi + pad


def positions_figures(content) -> list[ReportFigure]:
    return [f for f in (position_figure(r) for r in content.receivers) if f is not None]


def position_figure(receiver) -> ReportFigure | None:
    audit = receiver.audit
    if audit is None or audit.reference_ecef_m is None or "applied" not in audit.positions:
        return None
    applied = audit.positions["applied"]
    t = applied["time"].to_numpy().astype("datetime64[ns]")
    if t.size < 2 or not np.isfinite(applied["x_m"].to_numpy(float)).any():
        return None
    x = as_plot_times(t)
    fig = new_figure(9.4, 7.6)
    axes = fig.subplots(4, 1, sharex=True, height_ratios=(1, 1, 1, 0.8))
    handles, drawn = [], {}
    for name, pos in audit.positions.items():
        style = HYPOTHESIS_STYLES.get(name, {"color": MUTED})
        enu = enu_errors(pos, audit.reference_ecef_m)
        drawn[name] = enu
        xs, *ys = break_at_gaps(as_plot_times(pos["time"].to_numpy()), *enu.T)
        for k, ax in enumerate(axes[:3]):
            ax.plot(xs, ys[k], **{**style, "linewidth": style.get("linewidth", 1.1) * 0.8})
        handles.append(Line2D([], [], label=HYPOTHESIS_LABELS.get(name, name), **style))
    if receiver.fixes is not None and len(receiver.fixes):
        own = enu_errors(receiver.fixes, audit.reference_ecef_m)
        xf = as_plot_times(receiver.fixes["time"].to_numpy())
        for k, ax in enumerate(axes[:3]):
            ax.plot(xf, own[:, k], linestyle="none", marker="o", markersize=1.8, color=OWN, zorder=4)
        handles.append(Line2D([], [], linestyle="none", marker="o", markersize=3.5, color=OWN,
                              label=f"{receiver.name}'s own fixes"))
    # y range from the applied and omitted solutions: the reversed/doubled ones may run off it
    keep = [drawn[n] for n in ("applied", "omitted") if n in drawn]
    for k, (ax, name) in enumerate(zip(axes[:3], COMPONENTS)):
        ax.axhline(0.0, color=INK, linewidth=0.6)
        ax.set_ylim(*_limits([e[:, k] for e in keep]))
        ax.set_ylabel(f"{name} error (m)")
    axes[0].set_title(f"{receiver.name}: single-point positions minus the reference, local east / north / up")
    fig.legend(handles=handles, loc="outside upper center", ncols=min(3, len(handles)), fontsize=7.5)
    pdop, dop_source = _dop(receiver, applied, t)
    ax_n = axes[3]
    xs, n_used = break_at_gaps(x, applied["n_used"].to_numpy(float))
    ax_n.plot(xs, n_used, color=MUTED, linewidth=1.4, drawstyle="steps-mid")
    ax_n.set_ylabel("satellites used\n(dimensionless)")
    ax_n.set_ylim(bottom=0)
    if pdop is not None:
        ax_d = ax_n.twinx()
        xs, ys = break_at_gaps(x, pdop)
        ax_d.plot(xs, ys, color=INK, linewidth=1.0, linestyle=(0, (4, 1.5)))
        ax_d.set_ylabel("PDOP (dimensionless)")
        ax_d.set_ylim(0, max(np.nanpercentile(pdop, 99.5) * 1.3, 2.0) if np.isfinite(pdop).any() else 5.0)
        ax_d.grid(False)
        ax_d.spines["right"].set_visible(True)
        ax_n.legend(handles=[Line2D([], [], color=MUTED, linewidth=1.4, label="satellites in the applied fix"),
                             Line2D([], [], color=INK, linestyle=(0, (4, 1.5)), label=f"PDOP ({dop_source})")],
                    loc="lower left", ncols=2, fontsize=7)
    gpst_axis(ax_n, t)
    for ax, letter in zip(axes, "abcd"):
        panel_letter(ax, letter)
    return ReportFigure(f"positions_enu_{receiver.name}", f"Positions of {receiver.name}: east, north, up",
                        _caption(receiver, drawn, pdop, dop_source), fig)


def _dop(receiver, applied, t):
    """(PDOP per epoch or None, the words for where it comes from)."""
    if "pdop" in applied:
        return applied["pdop"].to_numpy(float), "of the satellites in the applied fix"
    corrections = receiver.audit.corrections
    if corrections is None or not {"elevation_deg", "azimuth_deg", "system"} <= set(corrections.columns):
        return None, ""
    return geometry_pdop(corrections, t), f"of every satellite above {ELEVATION_MASK_DEG:g}°"


def _caption(receiver, drawn, pdop, dop_source) -> str:
    audit = receiver.audit
    reference = {
        "header": ("the approximate position in the observation file's header, which is good to a few metres only: "
                   "the errors shown include the header's own offset"),
        "given": "the position given for the receiver",
    }.get(audit.reference, "the median of gnssrel's own applied-term fixes (no reference position was known: "
                           "the panels show scatter about that median, not accuracy)")
    applied = drawn["applied"]
    med = np.nanmedian(applied, axis=0)
    spread = np.nanstd(applied, axis=0)
    stats = ", ".join(f"{n} {fmt(m)} ± {fmt(s)} m" for n, m, s in zip(COMPONENTS, med, spread))
    omitted = ""
    if "omitted" in drawn:
        d = np.nanmedian(np.linalg.norm(drawn["omitted"] - applied, axis=1)) if len(drawn["omitted"]) == len(applied) \
            else np.nan
        omitted = (f" Without the periodic term the fixes move by {fmt(d)} m (median per epoch), and the shift "
                   "changes with the satellites' orbital phases: a whole-span mean would hide it.")
    dop = ("" if pdop is None else
           f" (d) Satellites used per epoch in the applied fix and the position dilution of precision {dop_source} "
           f"(median PDOP {fmt(float(np.nanmedian(pdop)), '.1f')}).")
    if pdop is None:
        dop = " (d) Satellites used per epoch in the applied fix (no geometry to compute a DOP from)."
    return (
        f"(a-c) East, north and up error per epoch of gnssrel's single-point positions from {receiver.name}'s log "
        f"against {reference}; one line per hypothesis the audit computed (the periodic term applied as specified, "
        f"omitted, ...). Applied: median (± standard deviation) {stats}.{omitted}{dop} "
        "Lines break where the log has no epochs. GPST.")
