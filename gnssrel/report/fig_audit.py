"""Figure family 5: one receiver's audit: fit residuals under each hypothesis, per-epoch positions.

The residual RMS of the pseudorange fit with the periodic term applied, omitted,
reversed and doubled (``gnssrel.audit.relativity_fit``), and the per-epoch 3-D
error of gnssrel's single-point positions under each hypothesis, beside the
receiver's own fixes.
"""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D

from gnssrel.report.layout import ReportFigure, as_plot_times, gpst_axis, new_figure, panel_letter, systems_in
from gnssrel.report.palette import HYPOTHESIS_LABELS, HYPOTHESIS_STYLES, OWN, system_colour, system_name
from gnssrel.text import fmt_k, in_system_order

FIT_HYPOTHESES = ("applied", "omitted", "reversed", "doubled")


def audit_figure(receiver) -> ReportFigure | None:
    summary = receiver.audit_summary
    if not summary:
        return None
    fits = summary["relativity_k"]
    errors = receiver.position_errors
    fig = new_figure(9.4, 4.9)
    ax_rms, ax_pos = fig.subplots(1, 2, width_ratios=(1.0, 1.9))
    letters = systems_in(fits)
    width = 0.8 / max(len(letters), 1)
    for j, s in enumerate(letters):
        rms = [fits[s]["rms_m"].get(h, np.nan) for h in FIT_HYPOTHESES]
        xs = np.arange(len(FIT_HYPOTHESES)) + (j - (len(letters) - 1) / 2) * width
        ax_rms.bar(xs, rms, width=width * 0.92, color=system_colour(s),
                   label=f"{system_name(s)}: k = {fmt_k(fits[s]['k'], fits[s]['sigma'], 2)}")
    ax_rms.set_xticks(np.arange(len(FIT_HYPOTHESES)))
    ax_rms.set_xticklabels(FIT_HYPOTHESES)
    ax_rms.set_xlabel("periodic term in the model (hypothesis)")
    ax_rms.set_ylabel("fit residual RMS (m)")
    ax_rms.set_title("Pseudorange fit")
    top = max((max(v["rms_m"].values()) for v in fits.values()), default=1.0)
    ax_rms.set_ylim(0, top * 1.45)
    ax_rms.legend(loc="upper left", fontsize=7)
    panel_letter(ax_rms, "a")

    if errors is not None and "time" in errors and len(errors.columns) > 1:
        x = as_plot_times(errors["time"].to_numpy())
        handles = []
        for name, style in HYPOTHESIS_STYLES.items():
            col = f"error_3d_m_{name.replace('-', '_')}"
            if col in errors:
                ax_pos.plot(x, errors[col].to_numpy(), **style)
                handles.append(Line2D([], [], label=HYPOTHESIS_LABELS[name], **style))
        if receiver.fixes is not None and receiver.fixes_error_3d_m is not None:
            ax_pos.plot(as_plot_times(receiver.fixes["time"].to_numpy()), receiver.fixes_error_3d_m,
                        linestyle="none", marker="o", markersize=2.2, color=OWN, zorder=4)
            handles.append(Line2D([], [], linestyle="none", marker="o", markersize=3.5, color=OWN,
                                  label=f"{receiver.name}'s own fixes"))
        ax_pos.set_ylabel("3-D position error (m)")
        ax_pos.set_title(f"{receiver.name}: positions per epoch against the reference")
        ax_pos.set_ylim(bottom=0)
        ymax = ax_pos.get_ylim()[1]
        ax_pos.set_ylim(0, ymax * 1.35)
        ax_pos.legend(handles=handles, loc="upper left", ncols=2, fontsize=7)
        gpst_axis(ax_pos, errors["time"].to_numpy())
        panel_letter(ax_pos, "b")
    else:
        ax_pos.set_visible(False)
    caption = _caption(receiver, fits)
    return ReportFigure(f"audit_{receiver.name}", f"Audit of {receiver.name}", caption, fig)


def _caption(receiver, fits) -> str:
    s = receiver.audit_summary
    pos = s.get("position", {})
    ref = {"header": "the observation file's header position", "given": "the given position",
           "none": "gnssrel's own median position"}.get(pos.get("reference"), "the reference position")
    fixes = s.get("receiver_fixes")
    fix_text = ""
    if fixes and fixes.get("closest"):
        d = fixes["median_distance_m"]
        fix_text = (f" The receiver's own fixes (vermilion dots) lie closest to '{fixes['closest']}' "
                    f"(median distance {d[fixes['closest']]:.2f} m, margin {fixes['margin_m']:.2f} m over the "
                    "next hypothesis).")
    ks = "; ".join(f"{system_name(k)} k = {fmt_k(fits[k]['k'], fits[k]['sigma'])}" for k in in_system_order(fits))
    return (
        f"(a) Receiver {receiver.name}: RMS of the ionosphere-free pseudorange residuals after fitting a receiver "
        "clock per epoch and an offset per satellite, with the periodic term F e √A sin E applied as "
        "specified (IS-GPS-200 20.3.3.3.3.1), omitted, reversed and doubled; the raw observations carry the "
        "satellites' true clocks, so the term must come out applied (k = 1). Fitted k with jackknife σ: "
        f"{ks}. (b) Per-epoch 3-D error of gnssrel's single-point positions from the same log under each "
        f"hypothesis, against {ref}; a whole-span mean would hide the periodic term, which averages out "
        f"over an orbit.{fix_text} GPST.")
