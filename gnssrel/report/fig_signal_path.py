"""Figure: the relativistic signal-path terms seen from one site (Sagnac and Shapiro per satellite).

For every satellite above the elevation mask at the site, the Sagnac term
(:func:`gnssrel.relativity.signal_path.sagnac_m`) and the Shapiro delay
(:func:`gnssrel.relativity.signal_path.shapiro_m`) over its passes, from the broadcast
states of the report's epoch grid.  Every pass is drawn thin; the longest pass of each
system is drawn bold and named, so that a full constellation does not hide the shape
of one pass.  The site is the first receiver log's reference position (its header
position), or :data:`DEFAULT_SITE_DEG` when no log was given; the caption says which.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import C_M_S
from gnssrel.geodesy import azimuth_elevation, geodetic_to_ecef
from gnssrel.relativity.signal_path import sagnac_m, shapiro_m
from gnssrel.report.layout import (
    ReportFigure,
    as_plot_times,
    gpst_axis,
    label_line_ends,
    new_figure,
    panel_letter,
    system_handles,
    systems_in,
    tint,
)
from gnssrel.report.palette import INK, system_colour
from gnssrel.text import fmt

DEFAULT_SITE_DEG = (50.0, 10.0, 0.0)
"""(latitude deg, longitude deg, height m; WGS-84) of the site drawn when no observation log is given."""
ELEVATION_MASK_DEG = 5.0


def report_site(content) -> tuple[np.ndarray, str]:
    """(ECEF position m, the words that say where it comes from) of the site the figure is drawn for."""
    for r in content.receivers:
        audit = getattr(r, "audit", None)
        ref = None if audit is None else audit.reference_ecef_m
        if ref is not None and np.all(np.isfinite(ref)):
            how = {"header": f"the approximate position in the header of {r.name}'s observation log",
                   "given": f"the position given for {r.name}"}.get(
                audit.reference, f"the median of gnssrel's own fixes from {r.name}'s log")
            return np.asarray(ref, float), how
    lat, lon, h = DEFAULT_SITE_DEG
    return (geodetic_to_ecef(np.radians(lat), np.radians(lon), h),
            f"a default site at {lat:g}° N, {lon:g}° E, {h:g} m (WGS-84), since no observation log was given")


def signal_path_terms(states, site_ecef_m, elevation_mask_deg: float = ELEVATION_MASK_DEG) -> dict:
    """Sagnac and Shapiro (time, sv) in metres at ``site_ecef_m``; NaN below the mask or without a state."""
    sat = states["position_ecef_m"].transpose("time", "sv", "axis").values
    _, el = azimuth_elevation(site_ecef_m, sat)
    visible = np.isfinite(el) & (np.degrees(el) >= elevation_mask_deg)
    with np.errstate(invalid="ignore"):
        sagnac = np.where(visible, sagnac_m(sat, site_ecef_m), np.nan)
        shapiro = np.where(visible, shapiro_m(sat, site_ecef_m), np.nan)
    return {"sagnac_m": sagnac, "shapiro_m": shapiro, "elevation_deg": np.degrees(el), "visible": visible}


def _longest_pass(visible: np.ndarray) -> tuple[int, int]:
    """(length, start) of the longest run of True."""
    v = np.concatenate(([False], visible, [False])).astype(np.int8)
    edges = np.flatnonzero(np.diff(v))
    starts, ends = edges[0::2], edges[1::2]
    if starts.size == 0:
        return 0, 0
    k = int(np.argmax(ends - starts))
    return int(ends[k] - starts[k]), int(starts[k])


def signal_path_figure(content) -> ReportFigure | None:
    ds = content.relativity
    if "position_ecef_m" not in ds or ds.sizes.get("time", 0) < 2:
        return None
    site, how = report_site(content)
    terms = signal_path_terms(ds, site)
    if not terms["visible"].any():
        return None
    times = ds["time"].values
    svs = [str(s) for s in ds["sv"].values]
    x = as_plot_times(times)
    letters = systems_in([sv for j, sv in enumerate(svs) if terms["visible"][:, j].any()])
    named = {}
    for s in letters:
        cols = [j for j, sv in enumerate(svs) if sv[0] == s]
        passes = {j: _longest_pass(terms["visible"][:, j])[0] for j in cols}
        moving = [j for j in cols if 0 < passes[j] < 0.8 * len(times)]    # a pass, not a satellite always up
        best = max(moving or cols, key=passes.get)
        named[s] = best

    fig = new_figure(9.4, 6.4)
    axes = fig.subplots(2, 1, sharex=True)
    for ax, key, name in zip(axes, ("sagnac_m", "shapiro_m"), ("Sagnac term", "Shapiro delay")):
        values = terms[key]
        for s in letters:
            cols = [j for j, sv in enumerate(svs) if sv[0] == s]
            ax.plot(x, values[:, cols], color=tint(system_colour(s), 0.6), linewidth=0.6)
        lines = []
        for s, j in named.items():
            ax.plot(x, _pass_only(values[:, j], terms["visible"][:, j]), color=system_colour(s), linewidth=2.0)
            lines.append((svs[j], _pass_only(values[:, j], terms["visible"][:, j]), system_colour(s)))
        ax.set_ylabel(f"{name} (m)")
        secondary = ax.secondary_yaxis("right", functions=(lambda m: m / C_M_S * 1e9, lambda ns: ns * 1e-9 * C_M_S))
        secondary.set_ylabel(f"{name} (ns)")
        label_line_ends(ax, x, lines)
    axes[0].axhline(0.0, color=INK, linewidth=0.6)
    axes[0].set_title("Sagnac term, ω (x_s y_r − y_s x_r)/c², per satellite above the mask")
    axes[1].set_title("Shapiro delay of the Earth's field, per satellite above the mask")
    axes[0].legend(handles=system_handles(letters), loc="upper left", ncols=len(letters), fontsize=7.5)
    axes[0].tick_params(labelbottom=False)
    gpst_axis(axes[1], times)
    panel_letter(axes[0], "a")
    panel_letter(axes[1], "b")
    title = "Signal-path terms at a default site" if "default site" in how else \
        f"Signal-path terms at {next(r.name for r in content.receivers if r.audit is not None)}'s site"
    return ReportFigure("signal_path", title,
                        _caption(terms, how, [svs[j] for j in named.values()]), fig)


def _pass_only(values: np.ndarray, visible: np.ndarray) -> np.ndarray:
    """``values`` on the longest pass only (NaN elsewhere)."""
    length, start = _longest_pass(visible)
    out = np.full(values.shape, np.nan)
    out[start:start + length] = values[start:start + length]
    return out


def _caption(terms, how, named) -> str:
    sagnac, shapiro = terms["sagnac_m"], terms["shapiro_m"]
    big = np.nanmax(np.abs(sagnac))
    lo, hi = np.nanmin(shapiro), np.nanmax(shapiro)
    return (
        f"Relativistic terms of the signal path for {how}, every satellite above {ELEVATION_MASK_DEG:g}° "
        "elevation, from the broadcast states of the report's epochs (thin lines; the longest pass of each "
        f"system bold and named: {', '.join(named)}). (a) Sagnac term ω (x_s y_r − y_s x_r)/c² (Ashby 2003, "
        "Living Rev. Relativity 6), the Earth's rotation during the signal's flight, to be added to a range "
        f"computed in the Earth-fixed frame of reception: up to {fmt(big, '.1f')} m ({fmt(big / C_M_S * 1e9, '.0f')} "
        "ns) here, its sign set by the satellite's side of the site's meridian plane. (b) Shapiro delay "
        "2GM/c³ ln((r_s + r_r + ρ)/(r_s + r_r − ρ)) (IERS Conventions 2010, ch. 11): "
        f"{fmt(lo * 1e3, '.1f')} to {fmt(hi * 1e3, '.1f')} mm here, largest near the horizon. Satellite "
        "positions are taken at the reception epoch (the ~70 ms flight moves the Sagnac term by under a "
        "millimetre). Metres on the left axis, nanoseconds on the right; GPST.")
