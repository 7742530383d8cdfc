"""Figure family 1: the periodic relativistic clock term per satellite over time, both forms.

Specification form F e sqrt(A) sin E (IS-GPS-200 20.3.3.3.3.1, each system with its
own F) against the state form -2 r.v/c^2, and their difference.
"""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D

from gnssrel.report.layout import (
    ReportFigure,
    as_plot_times,
    gpst_axis,
    label_line_ends,
    new_figure,
    panel_letter,
    system_handles,
    systems_in,
)
from gnssrel.report.palette import system_colour

N_LABELLED = 4
"""Satellites with the largest term get their name at the end of their line."""
STATE_FORM_EVERY = 12
"""The state form is drawn as a marker every this many epochs, over the solid specification form."""


def periodic_figure(content) -> ReportFigure:
    ds = content.relativity
    times = ds["time"].values
    x = as_plot_times(times)
    icd = ds["periodic_icd_s"].transpose("time", "sv").values * 1e9
    state = ds["periodic_state_s"].transpose("time", "sv").values * 1e9
    diff = ds["periodic_diff_s"].transpose("time", "sv").values * 1e9
    if "elements_from_broadcast" in ds:   # with osculating elements the difference is zero by construction
        diff = np.where(ds["elements_from_broadcast"].transpose("time", "sv").values, diff, np.nan)
    svs = [str(s) for s in ds["sv"].values]
    with np.errstate(invalid="ignore"):
        peak = np.nanmax(np.abs(np.where(np.isfinite(icd), icd, 0.0)), axis=0)
    order = np.argsort(peak)                       # small terms first, large ones on top
    labelled = set(order[::-1][:N_LABELLED])

    fig = new_figure(8.6, 6.4)
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(2.2, 1.0))
    for k in order:
        colour = system_colour(svs[k])
        strong = k in labelled
        top.plot(x, icd[:, k], color=colour, linewidth=1.4 if strong else 0.8, alpha=1.0 if strong else 0.55)
        if strong:
            top.plot(x[::STATE_FORM_EVERY], state[::STATE_FORM_EVERY, k], linestyle="none", marker="o",
                     markersize=3.2, markerfacecolor="white", markeredgecolor=colour, markeredgewidth=0.9)
        bottom.plot(x, diff[:, k], color=colour, linewidth=0.8, alpha=0.8)
    letters = systems_in(svs)
    handles = system_handles(letters) + [
        Line2D([], [], color="#555555", linewidth=1.4, label="F e √A sin E (solid)"),
        Line2D([], [], color="#555555", linestyle="none", marker="o", markerfacecolor="white",
               markersize=4, label="−2 r·v / c² (circles)")]
    top.legend(handles=handles, ncols=min(len(handles), 5), loc="upper left", bbox_to_anchor=(0, 1.0))
    top.set_ylabel("periodic clock term (ns)")
    top.set_title("Periodic relativistic clock term of every satellite")
    ymax = np.nanmax(np.abs(icd)) if np.isfinite(icd).any() else 1.0
    top.set_ylim(-1.12 * ymax, 1.45 * ymax)        # head-room for the legend
    top.set_xlim(x[0], x[-1] + 0.045 * (x[-1] - x[0]))   # room for the names at the line ends
    label_line_ends(top, x, [(svs[k], icd[:, k], system_colour(svs[k])) for k in labelled])
    bottom.axhline(0.0, color="#9AA0A8", linewidth=0.7)
    bottom.set_ylabel("specification − state form (ns)")
    gpst_axis(bottom, times)
    panel_letter(top, "a")
    panel_letter(bottom, "b")
    worst = {s: float(np.nanmax(np.abs(diff[:, [i for i, v in enumerate(svs) if v[0] == s]])))
             for s in letters if np.isfinite(diff[:, [i for i, v in enumerate(svs) if v[0] == s]]).any()}
    worst_text = ", ".join(f"{s} {v:.3f} ns" for s, v in worst.items())
    caption = (
        "(a) The periodic relativistic clock term dt_r of each satellite, in the form of the interface "
        "specifications, F e √A sin E (IS-GPS-200 20.3.3.3.3.1; Galileo OS SIS ICD and BDS-SIS-ICD with "
        "their own value of μ), as solid lines coloured by system; for the "
        f"{min(N_LABELLED, len(svs))} largest terms (named at the line ends) the state form −2 r·v/c² "
        f"from the broadcast position and velocity is marked every {STATE_FORM_EVERY} epochs. "
        "(b) Specification form minus state form, per satellite; largest absolute difference per system: "
        f"{worst_text}. The difference is the part of −2 r·v/c² the Keplerian form leaves out (J2 and "
        "luni-solar perturbations of the orbit), well under the nanosecond. Broadcast ephemerides; GPST.")
    return ReportFigure("periodic_term", "Periodic clock term, both forms", caption, fig)
