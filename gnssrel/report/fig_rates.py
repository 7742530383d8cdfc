"""Figure family 2: the rate of each satellite clock's proper time against TT, decomposed.

Velocity part -v^2/(2c^2), gravity part (W0 - U)/c^2 and their sum, as
microseconds per day (positive: the satellite clock runs fast), with the
IS-GPS-200 3.3.1.1 factory offset (4.4647e-10, i.e. 38.575 us/day; published) as
the reference line, and the residual of each GPS satellite against it (Kouba 2004).
"""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D

from gnssrel.constants import GPS_FACTORY_FREQUENCY_OFFSET, SECONDS_PER_DAY
from gnssrel.report.layout import ReportFigure, new_figure, panel_letter, systems_in
from gnssrel.report.palette import REFERENCE, system_colour, system_name

US_PER_DAY = SECONDS_PER_DAY * 1e6
NOMINAL_US_PER_DAY = -GPS_FACTORY_FREQUENCY_OFFSET * US_PER_DAY     # 38.575 us/day (IS-GPS-200 3.3.1.1)
PART_MARKERS = {"us_per_day_gravity": ("^", "gravity (W0 − U)/c²"),
                "us_per_day_velocity": ("v", "velocity −v²/(2c²)"),
                "us_per_day_total": ("o", "total (sum)")}


def _ordered(satellites: dict) -> list[str]:
    letters = systems_in(satellites)
    return [sv for s in letters for sv in sorted(v for v in satellites if v[0] == s)]


def rates_figure(content) -> ReportFigure:
    sats = content.relativity_summary["satellites"]
    svs = _ordered(sats)
    x = np.arange(len(svs))
    colours = [system_colour(sv) for sv in svs]
    gps = [i for i, sv in enumerate(svs) if sats[sv].get("rate_residual_vs_nominal") is not None]

    fig = new_figure(max(9.2, 2.2 + 0.088 * len(svs)), 6.4)       # a readable name per satellite
    top, bottom = fig.subplots(2, 1, height_ratios=(1.7, 1.0))
    for key, (marker, _) in PART_MARKERS.items():
        values = [sats[sv][key] for sv in svs]
        filled = key == "us_per_day_total"
        top.scatter(x, values, marker=marker, s=26 if filled else 20, c=colours if filled else "white",
                    edgecolors=colours, linewidths=0.9, zorder=3)
    top.axhline(NOMINAL_US_PER_DAY, color=REFERENCE, linewidth=1.0, linestyle=(0, (5, 2)), zorder=2)
    top.text(-0.4, NOMINAL_US_PER_DAY - 1.6, f"IS-GPS-200 factory offset {NOMINAL_US_PER_DAY:.3f} µs/day",
             color=REFERENCE, fontsize=7.5, ha="left", va="top")
    top.axhline(0.0, color="#9AA0A8", linewidth=0.7)
    top.set_ylabel("clock rate vs TT (µs/day)")
    top.set_title("Rate of each satellite clock against a clock on the geoid")
    handles = [Line2D([], [], linestyle="none", marker=m, markerfacecolor="white" if k != "us_per_day_total"
                      else "#555555", markeredgecolor="#555555", label=lab)
               for k, (m, lab) in PART_MARKERS.items()]
    handles += [Line2D([], [], linestyle="none", marker="s", color=system_colour(s), label=system_name(s))
                for s in systems_in(svs)]
    handles.append(Line2D([], [], color=REFERENCE, linestyle=(0, (5, 2)), label="IS-GPS-200 3.3.1.1"))
    top.legend(handles=handles, ncols=4, loc="center left", bbox_to_anchor=(0.0, 0.40))
    top.set_ylim(-14, 58)
    _satellite_ticks(top, svs)

    if gps:
        resid = np.array([sats[svs[i]]["rate_residual_vs_nominal"] for i in gps]) * US_PER_DAY * 1e3
        bottom.bar(np.arange(len(gps)), resid, color=[colours[i] for i in gps], width=0.7)
        bottom.axhline(0.0, color=REFERENCE, linewidth=1.0, linestyle=(0, (5, 2)))
        bottom.set_ylabel("total − factory offset (ns/day)")
        _satellite_ticks(bottom, [svs[i] for i in gps])
        bottom.set_title("GPS: residual of the mean rate against the IS-GPS-200 offset", fontsize=9)
        panel_letter(bottom, "b")
    else:
        bottom.set_visible(False)
    panel_letter(top, "a")
    med = content.relativity_summary.get("by_system", {})
    medians = ", ".join(f"{system_name(s)} {v['median_us_per_day_total']:.3f} µs/day" for s, v in med.items())
    caption = (
        "(a) Mean rate of each satellite clock's proper time against TT (a clock on the geoid), split into the "
        "velocity part −v²/(2c²) (▽, time dilation) and the gravity part (W0 − U)/c² with U including J2 "
        "(△; IERS Conventions 2010, L_G = 6.969290134e-10), and their sum (●); positive means the satellite "
        "clock runs fast. Means over each satellite's longest gap-free span (the periodic part removed). "
        f"Median totals: {medians}. Dashed line: the factory offset of the GPS clocks, 4.4647e-10 = "
        f"{NOMINAL_US_PER_DAY:.3f} µs/day (IS-GPS-200 3.3.1.1: 10.23 MHz set to 10.22999999543 MHz). "
        "Galileo and BeiDou orbit higher or lower, so their totals differ from it; no factory offset of theirs "
        "is used here. (b) GPS satellites' total minus that offset, in ns/day: an orbit whose semi-major axis "
        "is off nominal shows an apparent rate of up to about 10 ns/day (Kouba 2004, GPS Solutions 8).")
    return ReportFigure("rate_decomposition", "Clock rate: velocity and gravity", caption, fig)


def _satellite_ticks(ax, svs) -> None:
    ax.set_xticks(np.arange(len(svs)))
    ax.set_xticklabels(svs, rotation=90, fontsize=6.5 if len(svs) <= 70 else 5.8)
    ax.set_xlim(-0.8, len(svs) - 0.2)
    ax.set_xlabel("satellite (RINEX name)")
    for tick, sv in zip(ax.get_xticklabels(), svs):
        tick.set_color(system_colour(sv))
