"""``gnssrel orbits``: satellite state histories from broadcast ephemerides, optionally against SP3.

Wiring only: read the navigation files, build the epoch grid, call
:func:`gnssrel.orbits.broadcast.broadcast_states`; with ``--precise`` read the
SP3 files, interpolate them (:func:`gnssrel.orbits.precise.precise_states`) at
their own epochs inside the span, and compare
(:func:`gnssrel.orbits.compare.compare_with_precise`).

Outputs: ``--output`` gets the long state table (time, sv, x_m ... status)
without ``--precise``, the per-satellite comparison table with it; ``--summary``
gets the summary JSON.  stdout: a short per-system table, or the summary JSON with ``--json``.
"""

from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from gnssrel.errors import NoDataError
from gnssrel.jobs import common
from gnssrel.orbits.spans import describe_navigation_span, navigation_span
from gnssrel.text import fmt, fmt_span, in_system_order, system_label, text_table

HELP = "satellite positions and velocities from broadcast ephemerides; compare with SP3"
DESCRIPTION = (
    "Compute the satellite state histories (ECEF position and velocity, status of each epoch) "
    "from RINEX navigation files on a regular GPST grid. With --precise, compare the broadcast "
    "positions with precise SP3 orbits at the SP3 epochs: per-satellite 3D, radial, along- and "
    "cross-track RMS and the share of epochs covered (without --start/--end: over the GPST day "
    "holding most of the navigation records, so an SP3 file of the day before can be given for "
    "interpolation). Times are GPST unless a scale is written "
    "after them (e.g. '2020-06-25T06:00 UTC').")

log = logging.getLogger(__name__)
DEFAULT_STEP_S = 30.0


def add_arguments(parser) -> None:
    parser.add_argument("nav", metavar="NAV", nargs="+", help="RINEX navigation file(s) (2.x, 3.x, 4.00)")
    parser.add_argument("--precise", metavar="SP3", nargs="+",
                        help="SP3 orbit files (give the day before too, for interpolation across midnight)")
    common.add_systems(parser)
    common.add_time_window(parser, DEFAULT_STEP_S,
                           f"grid interval without --precise (default {DEFAULT_STEP_S:g} s)")
    common.add_include_unhealthy(parser)
    common.add_rule(parser)
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


def run(args) -> dict:
    # deferred: the stages pull xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.io.sp3 import read_sp3
    from gnssrel.orbits.broadcast import broadcast_states, time_grid
    from gnssrel.orbits.compare import compare_with_precise
    from gnssrel.orbits.precise import precise_states
    from gnssrel.pipeline import accounting
    from gnssrel.pipeline.grid import check_grid_size
    from gnssrel.pipeline.inputs import read_navigation_files

    common.check_outputs(args)
    nav, systems = read_navigation_files(args.nav, common.parse_systems(args.systems))
    start, end = common.navigation_window(args, nav, systems)
    ledger = accounting.navigation_ledger(nav)
    if args.precise:
        sp3 = read_sp3(list(args.precise), systems=systems)
        ledger.merge(accounting.precise_ledger(sp3, "sp3_records", "position_ecef_m"))
        t = sp3["time"].values
        if not args.start and not args.end:   # default: the navigation file's main day
            day_start, day_end = navigation_span(nav, systems, main_day=True)
            start, end = max(start, day_start), min(end, day_end - np.timedelta64(1, "ns"))
        times = t[(t >= start) & (t <= end)]
        if times.size == 0:
            raise NoDataError(f"the SP3 epochs ({fmt_span(t.min(), t.max())}) do not overlap the "
                              f"window {fmt_span(start, end)}", args.precise[0])
        precise = precise_states(sp3, times)
        states = broadcast_states(nav, times, systems, args.include_unhealthy, rule=args.rule)
        _check_states(states, nav, systems, start, end)
        table, summary = compare_with_precise(states, precise)
        summary = {"mode": "comparison", "start": times[0], "end": times[-1],
                   "n_epochs": int(times.size), "time_scale": "GPST",
                   "include_unhealthy": bool(args.include_unhealthy), "selection_rule": args.rule, **summary}
        accounting.retire_outside_window(ledger, sp3, "sp3_records", "position_ecef_m", times, systems)
    else:
        step_ns = round(args.step * 1e9)
        remainder = int(start.astype("datetime64[ns]").astype(np.int64)) % step_ns
        grid_start = start + np.timedelta64((step_ns - remainder) % step_ns, "ns")  # on multiples of step
        check_grid_size(grid_start, end, args.step)
        times = time_grid(grid_start, end, args.step)
        states = broadcast_states(nav, times, systems, args.include_unhealthy, frame=args.frame, rule=args.rule)
        _check_states(states, nav, systems, start, end)
        table = _netcdf_ready(states) if args.output and args.output.lower().endswith(".nc") \
            else _state_table(states)
        summary = _states_summary(states, times[0] if times.size else start, end)
    accounting.retire_navigation(ledger, nav, [states], systems, start, end, args.include_unhealthy)
    summary["accounting"] = ledger.as_dict()
    return common.emit(args, summary, table, _print_table)


def _check_states(states, nav, systems, start, end) -> None:
    """No state at all in the window: say why (the window and the records' span), exit 2."""
    if states.sizes.get("time", 0) and (states["status"].values == 0).any():
        return
    raise NoDataError(f"no satellite has a broadcast state in the window {fmt_span(start, end)}: "
                      f"it does not overlap the navigation records, "
                      f"{describe_navigation_span(nav, systems)}")
