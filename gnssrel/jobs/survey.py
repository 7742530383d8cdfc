"""``gnssrel survey``: a static precise position from dual-frequency code and carrier phase.

Wiring only: read the log, the navigation files (broadcast elements for the specification form
of the periodic term) and the precise orbits and clocks, run :func:`gnssrel.survey.static.survey`,
write the residual table and the summary.
"""

from __future__ import annotations

import logging
from pathlib import Path

import numpy as np

from gnssrel.accounting import Ledger
from gnssrel.errors import GnssrelInputError
from gnssrel.jobs import common
from gnssrel.progress import step

HELP = "static precise position from carrier phase, with the effect of each relativistic term"
DESCRIPTION = (
    "Estimate the static position of the receiver of OBS from dual-frequency ionosphere-free code and carrier "
    "phase with precise orbits and clocks (batch least squares: coordinates, one float ambiguity per arc, "
    "wet zenith delay piecewise linear, receiver clock per epoch eliminated), and report how far it lies from "
    "the header position, its formal and realistic (day split in parts) uncertainty, the convergence, the "
    "residuals per satellite, the coordinate change (mm) each relativistic term makes when switched off, and "
    "the factor k of the periodic term estimated from the phase.")

log = logging.getLogger(__name__)


def add_arguments(parser) -> None:
    parser.add_argument("obs", metavar="OBS", help="RINEX observation file with code and carrier phase on two "
                                                   "frequencies (.rnx/.crx, .gz/.Z allowed)")
    parser.add_argument("nav", metavar="NAV", nargs="+", help="RINEX navigation file(s) of the same day (the "
                                                              "broadcast elements of the periodic term's "
                                                              "specification form)")
    parser.add_argument("--precise", metavar="SP3|CLK", nargs="+", required=True,
                        help="SP3 orbit files (needed; the previous day too for midnight) and RINEX clock files, "
                             "whose clocks then replace the SP3 clocks")
    parser.add_argument("--antex", metavar="ATX",
                        help="ANTEX file: move the precise orbits to the satellites' antenna phase centres")
    common.add_systems(parser)
    common.add_time_window(parser, None, "keep only epochs on multiples of this interval, s "
                                         "(default: every epoch of OBS)")
    parser.add_argument("--elevation-mask", type=float, default=10.0, metavar="DEG",
                        help="elevation mask in degrees (default 10)")
    parser.add_argument("--min-arc", type=float, default=20.0, metavar="MINUTES",
                        help="continuous arcs shorter than this are dropped and counted (default 20 min)")
    parser.add_argument("--parts", type=int, default=4, metavar="N",
                        help="split the log in N parts for the realistic uncertainty (default 4: 6 h each "
                             "for a day)")
    parser.add_argument("--position", metavar="X,Y,Z|LAT,LON,H",
                        help="reference position of the marker (default: the header's, which is then also the "
                             "a-priori one)")
    parser.add_argument("--reference-frame", choices=("itrf", "etrf2000"), default="itrf",
                        help="frame of the reference position: that of the orbits (itrf, default) or ETRS89 "
                             "(etrf2000: approximate ITRF->ETRF2000 transformation, a few cm)")
    parser.add_argument("--no-jackknife", action="store_true",
                        help="give only the formal sigma of k (skips one re-solve per satellite)")
    common.add_include_unhealthy(parser)
    parser.add_argument("--plots", metavar="DIR",
                        help="write the figure of the term effects and the convergence to DIR (PNG, SVG, PDF)")
    common.add_outputs(parser, "per-observation residuals table (.csv, .parquet or .nc)")


def run(args) -> dict:
    # deferred: the stages pull xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.io.rinex_obs import read_observations
    from gnssrel.pipeline.grid import decimate_to_step
    from gnssrel.pipeline.inputs import read_navigation_files, read_precise
    from gnssrel.survey.static import survey

    common.check_outputs(args)
    if not (np.isfinite(args.elevation_mask) and 0.0 <= args.elevation_mask < 90.0):
        raise GnssrelInputError(f"--elevation-mask {args.elevation_mask:g}: give degrees from 0 to below 90")
    if not (np.isfinite(args.min_arc) and args.min_arc >= 0.0):
        raise GnssrelInputError(f"--min-arc {args.min_arc:g}: give minutes, 0 or more")
    if args.plots and Path(args.plots).exists() and not Path(args.plots).is_dir():
        raise GnssrelInputError("--plots: not a folder", args.plots)
    if args.parts < 2:
        raise GnssrelInputError(f"--parts {args.parts}: give at least 2")
    start, end = common.time_window(args)
    letters = common.parse_systems(args.systems) or "GE"
    unsupported = [s for s in letters if s not in "GE"]
    if unsupported:
        log.warning("survey: systems %s are not surveyed (GPS and Galileo only)", "".join(unsupported))
    position = common.parse_position(args.position)[0] if args.position else None
    precise = read_precise(args.precise, list(letters))
    nav, _ = read_navigation_files(args.nav, letters)
    with step(f"reading {args.obs}"):
        obs_ds = read_observations(args.obs, systems=list(letters), start=start, end=end, with_flags=True)
    obs_ds = decimate_to_step(obs_ds, args.step)
    ledger = Ledger.from_dict(obs_ds.attrs.get("accounting"))
    antenna = None
    if args.antex:
        from gnssrel.io.antex import read_antex  # deferred: only with --antex
        from gnssrel.orbits.antenna import to_phase_centre

        precise["orbits"], info = to_phase_centre(precise["orbits"], read_antex(args.antex), ledger)
        antenna = {"applied": sorted(info["applied"]), "missing": info["missing"]}
    with step("solving"):
        result = survey(obs_ds, nav, precise, systems=letters, reference_ecef_m=position, ledger=ledger,
                        elevation_mask_deg=args.elevation_mask, min_arc_s=60.0 * args.min_arc, parts=args.parts,
                        jackknife=not args.no_jackknife, reference_frame=args.reference_frame,
                        include_unhealthy=args.include_unhealthy)
    summary = result["summary"]
    if antenna is not None:
        summary["satellite_antenna_offsets"] = antenna
    summary["inputs"] = {"obs": args.obs, "nav": list(args.nav), "precise": list(args.precise),
                         "antex": args.antex, "systems": letters}
    if args.plots:
        summary["plots"] = write_plots(summary, args.plots, Path(args.obs).name.split(".")[0])
    table = None
    if args.output:
        import pandas as pd  # deferred: pandas (start-up)

        table = pd.DataFrame(result["residuals"])
    return common.emit(args, summary, table, _print_text)


def write_plots(summary: dict, folder, name: str | None = None) -> dict:
    """Draw :func:`gnssrel.report.fig_survey.survey_figure` of ``summary`` into ``folder``; format -> path."""
    from gnssrel.report.fig_survey import survey_figure  # deferred: matplotlib (start-up)
    from gnssrel.report.figures import save_figure
    from gnssrel.report.palette import gnssrel_style

    Path(folder).mkdir(parents=True, exist_ok=True)
    with gnssrel_style():
        item = survey_figure(summary, name)
    return save_figure(item, folder) if item is not None else {}


def _print_text(summary: dict) -> None:
    p = summary["position"]
    print(f"position (marker, {p['reference_frame']} comparison): X {p['x_m']:.4f} m  Y {p['y_m']:.4f} m  "
          f"Z {p['z_m']:.4f} m")
    print(f"minus the header: east {p['east_m']:+.4f} m  north {p['north_m']:+.4f} m  up {p['up_m']:+.4f} m")
    etrf = p.get("etrf2000_check_m")
    if etrf:
        print(f"  turned into ETRF2000 (for an ETRS89 header; approximate) minus the header: east {etrf['east']:+.4f} m  "
              f"north {etrf['north']:+.4f} m  up {etrf['up']:+.4f} m")
    pc = summary.get("position_product_convention")
    if pc:
        print(f"under the product's clock convention (-2 r.v/c^2, no J2): minus the header east {pc['east_m']:+.4f} m  "
              f"north {pc['north_m']:+.4f} m  up {pc['up_m']:+.4f} m; in ETRF2000 east "
              f"{pc['etrf2000_check_m']['east']:+.4f} m  north {pc['etrf2000_check_m']['north']:+.4f} m  "
              f"up {pc['etrf2000_check_m']['up']:+.4f} m")
    rs = p["realistic_sigma_m"]
    print(f"sigma: formal {p['formal_sigma_m']['east']:.4f}/{p['formal_sigma_m']['north']:.4f}/"
          f"{p['formal_sigma_m']['up']:.4f} m, from {len(summary['parts'])} parts "
          f"{rs['east']}/{rs['north']}/{rs['up']} m (east/north/up)")
    print("term switched off -> coordinate change (mm, east/north/up):")
    for name, e in summary["term_effects_mm"].items():
        print(f"  {name:24s} {e['east']:+10.1f} {e['north']:+10.1f} {e['up']:+10.1f}")
    for s, k in summary["relativity_k_phase"].items():
        print(f"k of the periodic term from phase, {s}: {k['k']:.5f} ± {k['sigma']} "
              f"(position fixed: {k['position_fixed']['k']:.5f} ± {k['position_fixed']['sigma']})")
