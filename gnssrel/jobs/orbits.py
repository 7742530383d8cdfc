"""``gnssrel orbits``: satellite state histories from broadcast ephemerides, optionally against SP3.

Wiring only: read the navigation files, build the epoch grid, call
:func:`gnssrel.orbits.broadcast.broadcast_states`; with ``--precise`` read the
SP3 files, interpolate them (:func:`gnssrel.orbits.precise.precise_states`) at
their own epochs inside the span, and compare
(:func:`gnssrel.orbits.compare.compare_with_precise`).

Outputs: ``--output`` gets the long state table (time, sv, x_m ... status)
without ``--precise``, the per-satellite comparison table with it (with ``--per-epoch``: the
broadcast-minus-precise radial / along / cross differences per epoch and satellite); ``--summary``
gets the summary JSON.  stdout: a short per-system table, or the summary JSON with ``--json``.

With ``--precise`` the summary also holds ``sisre`` (per system: total_m, orbit_m, clock_m; the
clock part from RINEX clock files given among the --precise files, else the SP3 clocks;
:mod:`gnssrel.orbits.sisre`) and ``antenna_offsets`` (``--antex``: the precise orbits moved to the
broadcast phase centre, :mod:`gnssrel.orbits.antenna`; without it the per-satellite mean radial
difference holds the offset and is printed apart).
"""

from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from gnssrel.errors import GnssrelInputError, NoDataError
from gnssrel.jobs import common
from gnssrel.orbits.spans import describe_navigation_span
from gnssrel.text import fmt, fmt_span, in_system_order, system_label, text_table

HELP = "satellite positions and velocities from broadcast ephemerides; compare with SP3"
DESCRIPTION = (
    "Compute the satellite state histories (ECEF position and velocity, status of each epoch) "
    "from RINEX navigation files on a regular GPST grid. With --precise, compare the broadcast "
    "positions with precise SP3 orbits at the SP3 epochs: per-satellite 3D, radial, along- and "
    "cross-track RMS, the share of epochs covered and the signal-in-space range error (orbit and clock "
    "parts; --antex moves the precise orbits to the broadcast antenna phase centre). Without "
    "--start/--end every command uses one window: the period the navigation file name declares (e.g. _20201770000_01D_: that GPST day) or "
    "the day holding most records, cut to the SP3 span (so an SP3 file of the day before can be given "
    "for interpolation). Satellites excluded by rule (E14, E18) are left out of both unless "
    "--include-unhealthy. Times are GPST unless a scale is written "
    "after them (e.g. '2020-06-25T06:00 UTC').")

log = logging.getLogger(__name__)
DEFAULT_STEP_S = 30.0


def add_arguments(parser) -> None:
    parser.add_argument("nav", metavar="NAV", nargs="+", help="RINEX navigation file(s) (2.x, 3.x, 4.00)")
    parser.add_argument("--precise", metavar="SP3|CLK", nargs="+",
                        help="SP3 orbit files (give the day before too, for interpolation across midnight); "
                             "RINEX clock files among them give the clock part of the signal-in-space range "
                             "error (else the SP3 clocks)")
    common.add_systems(parser)
    common.add_time_window(parser, DEFAULT_STEP_S,
                           f"grid interval without --precise (default {DEFAULT_STEP_S:g} s)")
    common.add_include_unhealthy(parser)
    common.add_rule(parser)
    parser.add_argument("--per-epoch", action="store_true",
                        help="with --precise: --output gets broadcast minus precise per epoch and satellite "
                             "(time, sv, system, radial_m, along_m, cross_m, difference_3d_m; GPST) instead of "
                             "the per-satellite statistics")
    parser.add_argument("--antex", metavar="ATX",
                        help="with --precise: ANTEX file whose satellite phase-centre offsets move the precise "
                             "(centre-of-mass) orbits to the phase centre the broadcast orbits refer to")
    parser.add_argument("--frame", choices=("ecef", "eci"), default="ecef",
                        help="eci adds inertial positions/velocities (ECEF frozen at the first epoch)")
    common.add_outputs(parser)


def _state_table(ds):
    codes = ds["status"].attrs["status_codes"]
    n_t, n_s = ds.sizes["time"], ds.sizes["sv"]
    table = {"time": np.repeat(ds["time"].values, n_s), "sv": np.tile(ds["sv"].values, n_t)}
    pairs = [("position_ecef_m", ("x_m", "y_m", "z_m")),
             ("velocity_ecef_m_per_s", ("vx_m_per_s", "vy_m_per_s", "vz_m_per_s"))]
    if "position_eci_m" in ds:
        pairs += [("position_eci_m", ("x_eci_m", "y_eci_m", "z_eci_m")),
                  ("velocity_eci_m_per_s", ("vx_eci_m_per_s", "vy_eci_m_per_s", "vz_eci_m_per_s"))]
    for var, names in pairs:
        values = ds[var].transpose("time", "sv", "axis").values.reshape(-1, 3)
        table.update({name: values[:, k] for k, name in enumerate(names)})
    table["clock_poly_s"] = ds["clock_poly_s"].values.ravel()
    status = ds["status"].values.ravel()
    table["status"] = np.array([codes[int(c)] for c in range(max(codes) + 1)], dtype=object)[status]
    return pd.DataFrame(table)


def _netcdf_ready(ds):
    out = ds.copy()
    codes = out["status"].attrs["status_codes"]
    out["status"].attrs["status_codes"] = "; ".join(f"{k}: {v}" for k, v in codes.items())
    return out


def _states_summary(ds, start, end):
    codes = ds["status"].attrs["status_codes"]
    by_system = {}
    for letter in dict.fromkeys(str(s)[0] for s in ds["sv"].values):
        status = ds["status"].sel(sv=[s for s in ds["sv"].values if str(s)[0] == letter]).values
        by_system[letter] = {"n_sat": int(status.shape[1]),
                             "ok_share": float(np.mean(status == 0)) if status.size else float("nan"),
                             "status_counts": {codes[int(c)]: int(n) for c, n in
                                               zip(*np.unique(status, return_counts=True))}}
    return {"mode": "states", "start": start, "end": end, "n_epochs": int(ds.sizes["time"]),
            "time_scale": "GPST", "selection_rule": ds.attrs.get("selection_rule", "post"),
            "by_system": by_system}


def _print_table(summary):
    span = fmt_span(summary["start"], summary["end"])
    systems = in_system_order(summary["by_system"])
    if summary["mode"] == "states":
        print(f"broadcast satellite states: {summary['n_epochs']} epochs, {span}")
        rows = [(system_label(s), summary["by_system"][s]["n_sat"],
                 fmt(100 * summary["by_system"][s]["ok_share"], ".1f")) for s in systems]
        print(text_table(("system", "satellites", "epochs with a state (%)"), rows))
        return
    print(f"broadcast minus precise (SP3) orbits: {summary['n_epochs']} SP3 epochs, {span}")
    rows = [(system_label(s), e["n_sat"], fmt(e["median_rms_3d_m"]), fmt(e["max_rms_3d_m"]),
             fmt(100 * e["median_coverage"], ".0f"))
            for s, e in ((s, summary["by_system"][s]) for s in systems)]
    print(text_table(("system", "satellites", "median 3D RMS (m)", "max 3D RMS (m)", "coverage (%)"), rows))
    print_radial_and_sisre(summary)


def run(args) -> dict:
    # deferred: the stages pull xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.io.sp3 import read_sp3
    from gnssrel.orbits.broadcast import broadcast_states
    from gnssrel.orbits.compare import compare_with_precise, per_epoch_differences
    from gnssrel.orbits.precise import precise_states
    from gnssrel.pipeline import accounting
    from gnssrel.pipeline.inputs import read_navigation_files, read_precise_clocks, split_precise
    from gnssrel.pipeline.window import drop_excluded

    common.check_outputs(args)
    if getattr(args, "antex", None) and not args.precise:
        raise GnssrelInputError("--antex moves precise orbits to the antenna phase centre: give --precise SP3 files")
    if getattr(args, "per_epoch", False) and not args.precise:
        raise GnssrelInputError("--per-epoch compares with precise orbits: give --precise SP3 files")
    nav, systems = read_navigation_files(args.nav, common.parse_systems(args.systems))
    ledger = accounting.navigation_ledger(nav)
    if args.precise:
        sp3_paths, clk_paths = split_precise(args.precise)
        if not sp3_paths:
            raise GnssrelInputError("--precise: give at least one SP3 file (the orbits); RINEX clock files "
                                    "only add clocks for the signal-in-space range error", clk_paths[0])
        sp3 = read_sp3(sp3_paths, systems=systems)
        ledger.merge(accounting.precise_ledger(sp3, "sp3_records", "position_ecef_m"))
        sp3 = drop_excluded(sp3, ledger, include_unhealthy=args.include_unhealthy)   # as the broadcast rule
        clk = None
        if clk_paths:
            clk, _ = read_precise_clocks(clk_paths, systems)
            ledger.merge(accounting.precise_ledger(clk, "clock_records", "clock_s"))
            clk = drop_excluded(clk, ledger, "clock_records", "clock_s", args.include_unhealthy)
        start, end = common.navigation_window(args, nav, systems, precise=(sp3,))   # pipeline.window
        t = sp3["time"].values
        times = t[(t >= start) & (t <= end)]
        if times.size == 0:
            raise NoDataError(f"the SP3 epochs ({fmt_span(t.min(), t.max())}) do not overlap the "
                              f"window {fmt_span(start, end)}", args.precise[0])
        precise = precise_states(sp3, times)
        states = broadcast_states(nav, times, systems, args.include_unhealthy, rule=args.rule)
        _check_states(states, nav, systems, start, end)
        precise, antenna = antenna_offsets(getattr(args, "antex", None), precise, ledger, states, nav)
        table, summary = compare_with_precise(states, precise)
        per_epoch = per_epoch_differences(states, precise)
        if getattr(args, "per_epoch", False):
            table = per_epoch
        summary = {"mode": "comparison", "start": times[0], "end": times[-1],
                   "n_epochs": int(times.size), "time_scale": "GPST",
                   "include_unhealthy": bool(args.include_unhealthy), "selection_rule": args.rule, **summary,
                   "antenna_offsets": antenna,
                   **signal_in_space_error(nav, sp3 if clk is None else clk, states, precise, per_epoch, systems,
                                           source="SP3 clocks" if clk is None else "RINEX clock files")}
        accounting.retire_outside_window(ledger, sp3, "sp3_records", "position_ecef_m", times, systems)
        accounting.retire_outside_window(ledger, clk, "clock_records", "clock_s", times, systems,
                                         reason="outside the time window or not at an SP3 epoch")
    else:
        start, end = common.navigation_window(args, nav, systems)
        times = common.window_epochs(args, nav, systems, min_epochs=False)   # on the --step grid of the day
        states = broadcast_states(nav, times, systems, args.include_unhealthy, frame=args.frame, rule=args.rule)
        _check_states(states, nav, systems, start, end)
        table = _netcdf_ready(states) if args.output and args.output.lower().endswith(".nc") \
            else _state_table(states)
        if times.size:                        # the span printed is the span written
            start, end = times[0], times[-1]
        summary = _states_summary(states, start, end)
    accounting.retire_navigation(ledger, nav, [states], systems, start, end, args.include_unhealthy)
    summary["accounting"] = ledger.as_dict()
    return common.emit(args, summary, table, _print_table)


def serving_record_types(states, nav, svs=None) -> np.ndarray:
    """The record type (``nav_type``) of the broadcast record serving each (time, sv) of
    ``states`` ("" where none), from its ``ephemeris_row``; columns for ``svs`` (default the
    states' satellites)."""
    rows = states["ephemeris_row"].transpose("time", "sv").values
    column = {str(sv): j for j, sv in enumerate(states["sv"].values)}
    svs = list(column) if svs is None else [str(sv) for sv in svs]
    out = np.full((rows.shape[0], len(svs)), "", dtype=object)
    for j, sv in enumerate(svs):
        table = nav.ephemerides.get(sv[0])
        if sv not in column or table is None or "nav_type" not in table:
            continue
        kinds = table["nav_type"].to_numpy().astype(str)
        served = rows[:, column[sv]]
        at = served >= 0
        out[at, j] = kinds[served[at]]
    return out


def antenna_offsets(antex_path, precise, ledger, states=None, nav=None):
    """Precise states moved to the broadcast phase centre with ``--antex`` (else unchanged), and
    the summary entry saying which.  With the broadcast ``states`` (same epochs) and ``nav``, the
    pair of the record type serving each epoch (Galileo F/NAV: E1/E5a, gnssrel.orbits.antenna)."""
    if not antex_path:
        return precise, {"applied": False, "note": "no --antex: the precise orbits refer to the centre of mass, "
                                                   "the broadcast ones to the antenna phase centre; the "
                                                   "per-satellite mean radial difference holds that antenna offset"}
    from gnssrel.io.antex import read_antex  # deferred: only with --antex
    from gnssrel.orbits.antenna import to_phase_centre
    antex = read_antex(antex_path)
    ledger.merge(antex.accounting)
    nav_types = None
    if states is not None and nav is not None and "ephemeris_row" in states \
            and np.array_equal(states["time"].values, precise["time"].values):
        nav_types = serving_record_types(states, nav, precise["sv"].values)
    moved, info = to_phase_centre(precise, antex, ledger, nav_types)
    return moved, {"applied": True, "file": str(antex_path), "n_satellites": len(info["applied"]),
                   "offsets_body_m": info["applied"], "missing": info["missing"],
                   "combination": info["combination"], "record_type_offsets_body_m": info.get("record_pairs", {}),
                   "attitude": "nominal yaw steering (z to the Earth, y = z x Sun), low-precision Sun"}


def signal_in_space_error(nav, clocks, states, precise, per_epoch, systems, clock_table=None,
                          source: str = "SP3 clocks") -> dict:
    """{"sisre": {letter: {...}}, "sisre_satellites": {...}, "sisre_definition": ...} (orbits/sisre.py)
    with the clock part from ``clocks`` (a Dataset with ``clock_s``: SP3 or RINEX clock) at the
    states' epochs (clocks/compare.py, per-epoch datum per system), or from ``clock_table`` when
    the caller has compared the clocks already (``gnssrel clocks``)."""
    # deferred: the stages pull xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.clocks.compare import compare_clocks
    from gnssrel.orbits.sisre import SISRE_SOURCE, clock_errors_m, per_epoch_sisre, summarize_sisre
    if per_epoch.empty:
        return {}
    clock, note = None, f"clock part: {source}, per-epoch datum per system removed"
    if clock_table is None and clocks is not None and "clock_s" in clocks \
            and np.isfinite(clocks["clock_s"].values).any():
        at = np.flatnonzero(np.isin(clocks["time"].values, states["time"].values))
        try:
            clock_table, _ = compare_clocks(nav, clocks[["clock_s"]].isel(time=at), systems=systems,
                                            states=states, precise_source=source)
        except NoDataError as error:
            note = f"no clock part: {error.message}"
    elif clock_table is None:
        note = "no clock part: the precise files hold no clock values"
    if clock_table is not None:
        clock = clock_errors_m(clock_table)
    r = np.linalg.norm(precise["position_ecef_m"].transpose("time", "sv", "axis").values, axis=-1)
    good = np.isfinite(r) & (r > 0)                   # mean orbit radius per satellite; NaN where none
    n_good = good.sum(axis=0)
    mean_r = np.where(n_good > 0, np.where(good, r, 0.0).sum(axis=0) / np.maximum(n_good, 1), np.nan)
    radius = dict(zip(map(str, precise["sv"].values), mean_r))
    table, by_system = summarize_sisre(per_epoch_sisre(per_epoch, clock, radius))
    _, unbiased = summarize_sisre(per_epoch_sisre(per_epoch, clock, radius, remove_mean_radial=True))
    for letter, entry in by_system.items():      # the antenna offset's share, when no --antex
        entry["total_mean_radial_removed_m"] = unbiased[letter]["total_m"]
        entry["orbit_mean_radial_removed_m"] = unbiased[letter]["orbit_m"]
    satellites = {row.sv: {"total_m": row.sisre_m, "orbit_m": row.sisre_orbit_m, "clock_m": row.sisre_clock_m}
                  for row in table.itertuples(index=False)}
    return {"sisre": by_system, "sisre_satellites": satellites,
            "sisre_definition": f"{SISRE_SOURCE}; RMS over satellites and epochs; {note}"}


def print_radial_and_sisre(summary) -> None:
    """The per-system mean radial difference (the antenna offset without --antex) and the SISRE table
    (also printed by ``gnssrel clocks`` with SP3 files)."""
    sisre = summary.get("sisre", {})
    applied = summary.get("antenna_offsets", {}).get("applied", False)
    rows = [(system_label(s), fmt(e.get("median_mean_radial_m")), fmt(e.get("total_m")), fmt(e.get("orbit_m")),
             fmt(e.get("clock_m")), fmt(e.get("published_2013_14_m")))
            for s, e in ((s, sisre[s]) for s in in_system_order(sisre))]
    if not rows:
        return
    print("signal-in-space range error (broadcast minus precise, global average RMS over satellites and epochs)")
    print(text_table(("system", "median mean radial (m)", "SISRE (m)", "orbit part (m)", "clock part (m)",
                      "2013-14 published (m)"), rows))
    print("mean radial: broadcast minus precise, per satellite then median; "
          + ("after the ANTEX phase-centre offsets" if applied else
             "it holds the antenna offset (precise: centre of mass, broadcast: phase centre; --antex removes it)"))
    print("SISRE = sqrt((w_R R - c dt)^2 + w_AC^2 (A^2 + C^2)) (Montenbruck et al. 2015, GPS Solutions 19); "
          "clock dt after the per-epoch datum per system")


def _check_states(states, nav, systems, start, end) -> None:
    """No state at all in the window: say why (the window and the records' span), exit 2."""
    if states.sizes.get("time", 0) and (states["status"].values == 0).any():
        return
    raise NoDataError(f"no satellite has a broadcast state in the window {fmt_span(start, end)}: "
                      f"it does not overlap the navigation records, "
                      f"{describe_navigation_span(nav, systems)}")
