"""The receiver's own clock as gnssrel estimates it: bias and drift per epoch, millisecond jumps.

Low-cost receivers run milliseconds off and drift by 1e-7; some step their clock by whole
milliseconds.  Panel (a): the clock bias of the fixes with the periodic term applied (the
receiver clock minus GPST, from :meth:`gnssrel.pipeline.stages.LogAudit.receiver_clock`), with the
receiver's own clock series over it when one was given (``--receiver-clock-bias``); panel (b):
the drift between epochs with the jumps taken out.  Jumps are marked in both panels.
"""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D

from gnssrel.audit.receiver_clock import receiver_clock_series
from gnssrel.report.layout import (
    ReportFigure,
    as_plot_times,
    break_at_gaps,
    gpst_axis,
    new_figure,
    panel_letter,
)
from gnssrel.report.palette import INK, MUTED, OWN
from gnssrel.text import fmt

NS_PER_S = 1e9


def _unit(bias_s: np.ndarray) -> tuple[float, str]:
    """A scale and its name for the bias axis: ms beyond 1 ms, else µs (beyond 1 µs), else ns."""
    peak = np.nanmax(np.abs(bias_s)) if np.isfinite(bias_s).any() else 0.0
    if peak >= 1e-3:
        return 1e3, "ms"
    return (1e6, "µs") if peak >= 1e-6 else (1e9, "ns")


def receiver_clock_figure(receiver) -> ReportFigure | None:
    audit = receiver.audit
    if audit is None or "applied" not in audit.positions:
        return None
    series = receiver_clock_series(audit.positions["applied"])
    bias = series["clock_bias_s"].to_numpy(float)
    if np.isfinite(bias).sum() < 2:
        return None
    t = series["time"].to_numpy().astype("datetime64[ns]")
    x = as_plot_times(t)
    scale, unit = _unit(bias)
    jumps = series["clock_jump_s"].to_numpy(float)
    at_jump = np.flatnonzero(np.isfinite(jumps) & (jumps != 0.0))
    fig = new_figure(9.4, 5.4)
    ax_b, ax_d = fig.subplots(2, 1, sharex=True, height_ratios=(1.3, 1))
    xs, ys = break_at_gaps(x, bias * scale)
    ax_b.plot(xs, ys, color=INK, linewidth=1.0, zorder=4)
    handles = [Line2D([], [], color=INK, linewidth=1.2, label="gnssrel's estimate (fixes with the periodic term applied)")]
    own = getattr(receiver, "clock_series", None)
    if own is not None and len(own):
        ax_b.plot(as_plot_times(own["time"].to_numpy()), own["clock_bias_ns"].to_numpy(float) / NS_PER_S * scale,
                  linestyle="none", marker="o", markersize=2.2, color=OWN, alpha=0.6, zorder=3)
        handles.append(Line2D([], [], linestyle="none", marker="o", markersize=3.5, color=OWN,
                              label=f"{receiver.name}'s own clock series"))
    drift = series["clock_drift_s_per_s"].to_numpy(float) * NS_PER_S
    xs, ys = break_at_gaps(x, drift)
    ax_d.plot(xs, ys, color=MUTED, linewidth=1.0)
    for i in at_jump:
        for ax in (ax_b, ax_d):
            ax.axvline(x[i], color=OWN, linewidth=0.8, linestyle=(0, (3, 2)))
    if at_jump.size:
        handles.append(Line2D([], [], color=OWN, linewidth=0.8, linestyle=(0, (3, 2)), label="clock jump"))
    ax_b.set_ylabel(f"receiver clock − GPST ({unit})")
    ax_d.set_ylabel("drift (ns/s)")
    ax_b.set_title(f"{receiver.name}: the receiver clock per epoch")
    ax_b.legend(handles=handles, loc="best", fontsize=7)
    gpst_axis(ax_d, t)
    for ax, letter in zip((ax_b, ax_d), "ab"):
        panel_letter(ax, letter)
    return ReportFigure(f"receiver_clock_{receiver.name}", f"Receiver clock of {receiver.name}",
                        _caption(receiver, series, at_jump, own is not None and len(own) > 0), fig)


def _caption(receiver, series, at_jump, has_own: bool) -> str:
    bias = series["clock_bias_s"].to_numpy(float)
    scale, unit = _unit(bias)
    drift = series["clock_drift_s_per_s"].to_numpy(float)
    jumps = series["clock_jump_s"].to_numpy(float)[at_jump]
    jump_text = (f" {at_jump.size} jump(s) found (dashed): "
                 + ", ".join(f"{fmt(j * 1e3, '+.3f')} ms" for j in jumps[:6])
                 + ("; steps near whole milliseconds are the clock resets of low-cost receivers" if at_jump.size else "")
                 + ".") if at_jump.size else " No jump found."
    own = (f" Dots: {receiver.name}'s own clock series (--receiver-clock-bias), converted to GPST."
           if has_own else "")
    return (f"(a) The receiver clock minus GPST per epoch, as the single-point fixes with the periodic term "
            f"applied estimate it (the first system's clock; median {fmt(float(np.nanmedian(bias)) * scale, '.3f')} {unit})."
            f"{own} (b) Its drift between consecutive epochs with the jumps taken out (median "
            f"{fmt(float(np.nanmedian(drift)) * NS_PER_S, '.2f')} ns/s, i.e. {fmt(float(np.nanmedian(drift)), '.2e')} "
            f"s/s).{jump_text} The satellite states are taken at the transmit time each pseudorange implies, so an "
            "offset of milliseconds does not bias the fixes. GPST.")
