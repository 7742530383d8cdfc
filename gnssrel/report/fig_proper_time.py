"""Figure family 3: the proper time accumulated along the orbit against the closed-form terms.

The integral tau - TT of dtau/dTT = 1 + L_G - (v^2/2 + U)/c^2 (IERS Conventions 2010
ch. 10; ``gnssrel.relativity.proper_time``) is split into a line (constant + rate)
and a periodic part; the periodic part is compared with F e sqrt(A) sin E, without
and with the J2 term (Kouba 2004).
"""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D

from gnssrel.relativity.proper_time import decompose
from gnssrel.report.layout import ReportFigure, as_plot_times, gpst_axis, new_figure, panel_letter
from gnssrel.report.palette import system_colour
from gnssrel.timescales import seconds_between

MAX_SATELLITES = 4
SATELLITE_DASHES = ["-", (0, (4, 1.5)), (0, (1, 1.2)), (0, (6, 1.5, 1, 1.5))]


def pick_satellites(summary: dict, limit: int = MAX_SATELLITES) -> list[str]:
    """The most eccentric satellite of each system, then the next most eccentric overall."""
    sats = {sv: v for sv, v in summary["satellites"].items() if v.get("integral_vs_closed_form_max_ns")
            is not None and np.isfinite(v.get("periodic_amplitude_ns", np.nan))}
    ranked = sorted(sats, key=lambda s: -sats[s]["periodic_amplitude_ns"])
    chosen: list[str] = []
    for sv in ranked:
        if sv[0] not in {c[0] for c in chosen}:
            chosen.append(sv)
    chosen += [sv for sv in ranked if sv not in chosen]
    return chosen[:limit]


def integration_runs(offset_s: np.ndarray) -> list[slice]:
    """The gap-free runs of one satellite's integral: split at NaN and where it restarts at 0."""
    ok = np.isfinite(offset_s)
    starts = ok & (np.r_[True, ~ok[:-1]] | (offset_s == 0.0))
    bounds = np.flatnonzero(starts)
    ends = [np.flatnonzero(~ok[b:])[0] + b if (~ok[b:]).any() else ok.size for b in bounds]
    ends = [min(e, nb) for e, nb in zip(ends, list(bounds[1:]) + [ok.size])]
    return [slice(b, e) for b, e in zip(bounds, ends) if e - b >= 3]


def periodic_per_run(t_s, values, runs) -> np.ndarray:
    """``decompose(...)["periodic_s"]`` on each run separately (each run has its own line)."""
    out = np.full(np.shape(values), np.nan)
    for run in runs:
        out[run] = decompose(t_s[run], values[run])["periodic_s"]
    return out


def proper_time_figure(content) -> ReportFigure | None:
    ds = content.relativity
    chosen = pick_satellites(content.relativity_summary)
    if not chosen:
        return None
    times = ds["time"].values
    x = as_plot_times(times)
    t_s = seconds_between(times, times[0])
    fig = new_figure(8.6, 7.6)
    ax_total, ax_periodic, ax_resid = fig.subplots(3, 1, sharex=True, height_ratios=(1.0, 1.4, 1.1))
    worst = {}
    for i, sv in enumerate(chosen):
        colour, dash = system_colour(sv), SATELLITE_DASHES[i % len(SATELLITE_DASHES)]
        col = ds.sel(sv=sv)
        off = col["proper_time_offset_s"].values
        ok = np.isfinite(off)
        icd = np.where(ok, col["periodic_icd_s"].values, np.nan)
        j2 = np.where(ok, col["j2_periodic_s"].values, np.nan)
        ax_total.plot(x, off * 1e6, color=colour, linestyle=dash, label=sv)
        runs = integration_runs(off)                 # the integral restarts at 0 on each run
        integral_periodic = periodic_per_run(t_s, off, runs)
        closed_periodic = periodic_per_run(t_s, icd, runs)
        ax_periodic.plot(x, integral_periodic * 1e9, color=colour, linestyle=dash, linewidth=1.6)
        ax_periodic.plot(x[::20], closed_periodic[::20] * 1e9, linestyle="none", marker="o", markersize=3.4,
                         markerfacecolor="white", markeredgecolor=colour, markeredgewidth=0.9)
        r_plain = periodic_per_run(t_s, off - icd, runs) * 1e9
        r_j2 = periodic_per_run(t_s, off - icd - j2, runs) * 1e9
        ax_resid.plot(x, r_plain, color=colour, linestyle=dash, linewidth=1.0, alpha=0.55)
        ax_resid.plot(x, r_j2, color=colour, linestyle=dash, linewidth=1.8)
        worst[sv] = (np.nanmax(np.abs(r_plain)), np.nanmax(np.abs(r_j2)))
    ax_total.set_ylabel("τ − TT accumulated (µs)")
    ax_total.legend(ncols=len(chosen), loc="upper left", title=None)
    ax_total.set_title("Proper time integrated along the orbit")
    ax_periodic.set_ylabel("periodic part (ns)")
    ax_periodic.legend(handles=[
        Line2D([], [], color="#555555", linewidth=1.6, label="integral minus its best-fit line"),
        Line2D([], [], color="#555555", linestyle="none", marker="o", markerfacecolor="white",
               label="F e √A sin E minus its best-fit line")], loc="upper left", ncols=2)
    span = np.nanmax(np.abs(ax_periodic.get_ylim()))
    ax_periodic.set_ylim(-span, 1.25 * span)
    ax_resid.axhline(0.0, color="#9AA0A8", linewidth=0.7)
    ax_resid.set_ylabel("integral − closed form (ns)")
    ax_resid.legend(handles=[
        Line2D([], [], color="#555555", linewidth=1.0, alpha=0.55, label="F e √A sin E alone (thin)"),
        Line2D([], [], color="#555555", linewidth=1.8, label="with the J2 term added (thick)")],
        loc="upper left", ncols=2)
    gpst_axis(ax_resid, times)
    for ax, letter in zip((ax_total, ax_periodic, ax_resid), "abc"):
        panel_letter(ax, letter)
    worst_text = "; ".join(f"{sv} {a:.3f} ns without J2, {b:.3f} ns with" for sv, (a, b) in worst.items())
    caption = (
        "(a) Proper time τ of the satellite clock minus TT, integrated along the broadcast orbit with "
        "cumulative Simpson quadrature of dτ/dTT − 1 = L_G − (v²/2 + U)/c² (IERS Conventions 2010 ch. 10; U with "
        "J2), from the first epoch of each gap-free run of a satellite (restarting at 0 on each); the slope is the rate of "
        "figure 2. Satellites: the most eccentric of each system. (b) The periodic part (the integral minus "
        "its least-squares line, one line per run, solid) against the closed form F e √A sin E of the interface specifications "
        "(minus its own line, circles). (c) Their difference, with F e √A sin E alone (thin) and with the J2 "
        f"periodic term of Kouba 2004 added (thick); largest absolute residuals: {worst_text}. "
        "Over a span shorter than an orbit the line fit absorbs part of the periodic term; both sides "
        "are treated alike, so the comparison stands. GPST.")
    return ReportFigure("proper_time", "Proper time along the orbit", caption, fig)
