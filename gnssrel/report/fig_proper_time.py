"""Figure family 3: the proper time accumulated along the orbit against the closed-form terms.

The integral tau - TT of dtau/dTT = 1 + L_G - (v^2/2 + U)/c^2 (IERS Conventions 2010
ch. 10; ``gnssrel.relativity.proper_time``) is split into a line (constant + rate)
and a periodic part.  The physically meaningful check of the periodic part is against the
state form -2 r.v/c^2 of the same orbit, without and with the J2 term (Kouba 2004): the J2
term is what -2 r.v/c^2 leaves out, so adding it closes the gap.  The specification form
F e sqrt(A) sin E is shown on its own panel: broadcast e, sqrt(A) and E behave like mean
elements, so it already agrees with the integral about as well as the state form with J2,
and adding the J2 term to it makes the residual larger (it is not the form J2 corrects).
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
    fig = new_figure(8.6, 9.0)
    ax_total, ax_periodic, ax_state, ax_spec = fig.subplots(4, 1, sharex=True, height_ratios=(0.9, 1.3, 1.1, 0.8))
    worst, worst_spec = {}, {}
    for i, sv in enumerate(chosen):
        colour, dash = system_colour(sv), SATELLITE_DASHES[i % len(SATELLITE_DASHES)]
        col = ds.sel(sv=sv)
        off = col["proper_time_offset_s"].values
        ok = np.isfinite(off)
        icd = np.where(ok, col["periodic_icd_s"].values, np.nan)
        state = np.where(ok, col["periodic_state_s"].values, np.nan)
        j2 = np.where(ok, col["j2_periodic_s"].values, np.nan)
        has_spec = bool(col["elements_from_broadcast"].values.any()) if "elements_from_broadcast" in col else True
        ax_total.plot(x, off * 1e6, color=colour, linestyle=dash, label=sv)
        runs = integration_runs(off)                 # the integral restarts at 0 on each run
        integral_periodic = periodic_per_run(t_s, off, runs)
        state_periodic = periodic_per_run(t_s, state + j2, runs)
        ax_periodic.plot(x, integral_periodic * 1e9, color=colour, linestyle=dash, linewidth=1.6)
        ax_periodic.plot(x[::20], state_periodic[::20] * 1e9, linestyle="none", marker="o", markersize=3.4,
                         markerfacecolor="white", markeredgecolor=colour, markeredgewidth=0.9)
        r_state = periodic_per_run(t_s, off - state, runs) * 1e9
        r_state_j2 = periodic_per_run(t_s, off - state - j2, runs) * 1e9
        ax_state.plot(x, r_state, color=colour, linestyle=dash, linewidth=0.8)
        ax_state.plot(x, r_state_j2, color=colour, linestyle=dash, linewidth=2.0)
        worst[sv] = (np.nanmax(np.abs(r_state)), np.nanmax(np.abs(r_state_j2)))
        if has_spec:
            r_spec = periodic_per_run(t_s, off - icd, runs) * 1e9
            ax_spec.plot(x, r_spec, color=colour, linestyle=dash, linewidth=1.2)
            worst_spec[sv] = (np.nanmax(np.abs(r_spec)),
                              np.nanmax(np.abs(periodic_per_run(t_s, off - icd - j2, runs) * 1e9)))
    ax_total.set_ylabel("τ − TT (µs)")
    ax_total.legend(ncols=len(chosen), loc="upper left", title=None)
    ax_total.set_title("Proper time integrated along the orbit")
    ax_periodic.set_ylabel("periodic part (ns)")
    ax_periodic.legend(handles=[
        Line2D([], [], color="#555555", linewidth=1.6, label="integral minus its best-fit line"),
        Line2D([], [], color="#555555", linestyle="none", marker="o", markerfacecolor="white",
               label="−2 r·v/c² + J2 term, minus its best-fit line")], loc="upper left", ncols=2)
    span = np.nanmax(np.abs(ax_periodic.get_ylim()))
    ax_periodic.set_ylim(-span, 1.3 * span)
    for ax in (ax_state, ax_spec):
        ax.axhline(0.0, color="#9AA0A8", linewidth=0.7)
    ax_state.set_ylabel("integral − state\nform (ns)")
    ax_state.legend(handles=[
        Line2D([], [], color="#555555", linewidth=0.8, label="−2 r·v/c² alone (thin)"),
        Line2D([], [], color="#555555", linewidth=2.0, label="−2 r·v/c² + J2 term (thick)")],
        loc="upper left", ncols=2)
    top = np.nanmax(np.abs(ax_state.get_ylim()))
    ax_state.set_ylim(-top, 1.35 * top)
    ax_spec.set_ylabel("integral − spec.\nform (ns)")
    ax_spec.set_ylim(-top, 1.35 * top)                   # same scale as (c), so the two compare at a glance
    ax_spec.legend(handles=[Line2D([], [], color="#555555", linewidth=1.2,
                                   label="F e √A sin E (broadcast e, √A, E: mean-like elements)")],
                   loc="upper left")
    gpst_axis(ax_spec, times)
    for ax, letter in zip((ax_total, ax_periodic, ax_state, ax_spec), "abcd"):
        panel_letter(ax, letter)
    worst_text = "; ".join(f"{sv} {a:.3f} ns without J2, {b:.3f} ns with" for sv, (a, b) in worst.items())
    spec_text = "; ".join(f"{sv} {a:.3f} ns (with the J2 term added: {b:.3f} ns)"
                          for sv, (a, b) in worst_spec.items()) or "no satellite with a specification form"
    caption = (
        "(a) Proper time τ of the satellite clock minus TT, integrated along the broadcast orbit with "
        "cumulative Simpson quadrature of dτ/dTT − 1 = L_G − (v²/2 + U)/c² (IERS Conventions 2010 ch. 10; U with "
        "J2), from the first epoch of each gap-free run of a satellite (restarting at 0 on each); the slope is the "
        "rate of figure 2. Satellites: the most eccentric of each system. (b) The periodic part (the integral "
        "minus its least-squares line, one line per run, solid) against the state form −2 r·v/c² plus the J2 "
        "periodic term of Kouba 2004 (minus its own line, circles). (c) The physically meaningful comparison: "
        "integral minus the state form −2 r·v/c² of the same positions and velocities, alone (thin) and with "
        "the J2 term added (thick). −2 r·v/c² is exact for a Keplerian orbit; the J2 term is what it leaves "
        f"out, so adding it closes the gap. Largest absolute residuals: {worst_text}. What remains is the "
        "luni-solar part and the quadrature. (d) Integral minus the specification form F e √A sin E "
        "(IS-GPS-200 20.3.3.3.3.1), on the same scale as (c): the broadcast e, √A and E are fitted over hours "
        "and behave like mean elements, so this form already carries most of the J2 effect; adding the J2 "
        "term to it would count it twice and make the residual larger. Largest absolute residuals: "
        f"{spec_text}. Over a span shorter than an orbit the line fit absorbs part of the periodic term; both "
        "sides are treated alike, so the comparison stands. GPST.")
    return ReportFigure("proper_time", "Proper time along the orbit", caption, fig)
