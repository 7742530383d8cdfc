"""``gnssrel audit``: per-observation corrections, positions and the relativity check of a receiver log.

Wiring only: read the observation and navigation files, run
:func:`gnssrel.audit.summary.audit_log`, write the tables and the summary.
"""

from __future__ import annotations

import logging

import numpy as np

from gnssrel.errors import GnssrelInputError

HELP = "audit a receiver log: corrections per observation, positions, the periodic-term fit"
DESCRIPTION = (
    "Attach every relativistic and propagation correction to every code observation of OBS, "
    "compute single-point positions per epoch with the periodic term applied and omitted, fit "
    "the factor k of the periodic relativistic term (k = 1: the satellites' clocks carry it as "
    "IS-GPS-200 says), and, with --receiver-fixes, tell which hypothesis the receiver's own "
    "fixes follow; with --receiver-clocks, check the receiver's satellite clock table too. "
    "--precise takes SP3 files (orbits, and clocks unless RINEX clock files are given as well).")

log = logging.getLogger(__name__)


def add_arguments(parser) -> None:
    parser.add_argument("obs", metavar="OBS", help="RINEX observation file (.rnx/.crx, .gz/.Z allowed)")
    parser.add_argument("nav", metavar="NAV", nargs="+", help="RINEX navigation file(s) of the same day")
    parser.add_argument("--precise", metavar="SP3|CLK", nargs="+",
                        help="precise products: SP3 orbit files (needed) and optionally RINEX clock files, "
                             "whose clocks then replace the SP3 clocks")
    parser.add_argument("--position", metavar="X,Y,Z",
                        help="reference receiver position, ECEF metres (default: the header's)")
    parser.add_argument("--receiver-fixes", metavar="FILE",
                        help="the receiver's own fixes: NMEA 0183 GGA log or CSV (see gnssrel.io.receiver_fixes)")
    parser.add_argument("--fix-date", metavar="YYYY-MM-DD",
                        help="UTC date of an NMEA log without RMC/ZDA sentences")
    parser.add_argument("--receiver-clocks", metavar="FILE",
                        help="the receiver's own satellite clock corrections (CSV of the clocks command)")
    parser.add_argument("--systems", default=None, help="systems to use, e.g. GE (default: all supported)")
    parser.add_argument("--start", help="first epoch, with its scale (e.g. '2024-05-03T06:00 GPST')")
    parser.add_argument("--end", help="last epoch, with its scale")
    parser.add_argument("--step", type=float, default=None, metavar="SECONDS",
                        help="keep only epochs on multiples of this interval")
    parser.add_argument("--elevation-mask", type=float, default=10.0, metavar="DEG",
                        help="elevation mask in degrees (default 10)")
    parser.add_argument("--output", metavar="FILE", help="per-observation corrections table (.csv/.parquet/.nc)")
    parser.add_argument("--positions", metavar="FILE",
                        help="per-epoch positions and 3-D errors table (.csv/.parquet/.nc)")
    parser.add_argument("--summary", metavar="FILE.json", help="write the summary as JSON")
    parser.add_argument("--json", action="store_true", help="print the summary as JSON")


def _parse_position(text: str):
    try:
        xyz = np.array([float(v) for v in text.split(",")])
    except ValueError:
        xyz = np.array([])
    if xyz.size != 3 or not np.all(np.isfinite(xyz)) or np.linalg.norm(xyz) < 6.0e6:
        raise GnssrelInputError(f"--position {text!r}: give X,Y,Z in metres (ECEF, near the Earth's surface)")
    return xyz


def _decimate(obs_ds, step_s):
    if not step_s:
        return obs_ds
    t = obs_ds["time"].values.astype("datetime64[ns]").astype("int64")
    keep = np.mod(t, round(step_s * 1e9)) == 0
    if not keep.any():
        raise GnssrelInputError(f"--step {step_s}: no epoch falls on a multiple of {step_s} s")
    return obs_ds.isel(time=np.flatnonzero(keep))


def read_precise(paths, systems=None) -> dict:
    """``{"orbits": SP3 Dataset, "clocks": Dataset with clock_s}`` from SP3 files and optional
    RINEX clock files (told apart by content); the clock files' clocks win over the SP3's."""
    from gnssrel.io.sp3 import read_sp3
    from gnssrel.jobs.clocks import precise_kind, read_precise_clocks

    kinds = {p: precise_kind(p) for p in paths}
    sp3_paths = [p for p, k in kinds.items() if k == "sp3"]
    clk_paths = [p for p, k in kinds.items() if k == "clock"]
    if not sp3_paths:
        raise GnssrelInputError("--precise: give at least one SP3 file (the orbits); RINEX clock "
                                "files only add clocks")
    orbits = read_sp3(sp3_paths, systems=systems)
    clocks = read_precise_clocks(clk_paths, systems)[0] if clk_paths else orbits[["clock_s"]]
    return {"orbits": orbits, "clocks": clocks}


def run(args) -> dict:
    from gnssrel.audit.summary import audit_log, audit_summary, per_epoch_errors
    from gnssrel.io import writers
    from gnssrel.timescales import parse_time

    for out in (args.output, args.positions):
        if out:
            writers.check_output_suffix(out)
    position = _parse_position(args.position) if args.position else None
    systems = list(args.systems.upper()) if args.systems else None
    start = parse_time(args.start, "GPST") if args.start else None
    end = parse_time(args.end, "GPST") if args.end else None
    from gnssrel import read_navigation, read_observations

    precise = read_precise(args.precise, systems) if args.precise else None
    obs_ds = read_observations(args.obs, systems=systems, start=start, end=end)
    obs_ds = _decimate(obs_ds, args.step)
    navs = [read_navigation(p, systems=systems) for p in args.nav]
    nav = navs[0] if len(navs) == 1 else type(navs[0]).merge(navs)
    receiver_clocks = None
    if args.receiver_clocks:
        from gnssrel.io.receiver_clocks import read_receiver_clocks
        receiver_clocks = read_receiver_clocks(args.receiver_clocks)
    fixes = None
    if args.receiver_fixes:
        from gnssrel.io.receiver_fixes import read_receiver_fixes
        fixes = read_receiver_fixes(args.receiver_fixes, date_utc=args.fix_date)
    result = audit_log(obs_ds, nav, receiver_position_ecef_m=position, systems=systems,
                       elevation_mask_deg=args.elevation_mask, fixes=fixes, precise=precise,
                       receiver_clocks=receiver_clocks)
    summary = audit_summary(result)
    if args.output:
        writers.write_table(result.corrections, args.output)
    if args.positions:
        table = per_epoch_errors(result)
        for name, pos in result.positions.items():
            for c in ("x_m", "y_m", "z_m", "clock_m"):
                table[f"{c[:-2]}_{name.replace('-', '_')}_m"] = pos[c].to_numpy()
        writers.write_table(table, args.positions)
    if args.summary:
        writers.write_json(summary, args.summary)
    if args.json:
        print(writers.to_json_text(summary))
    elif not getattr(args, "quiet", False):
        _print_text(summary)
    return summary


def _print_text(summary: dict) -> None:
    o = summary["observations"]
    print(f"observations: {o['n_epochs']} epochs, {o['n_sat']} satellites, systems {''.join(o['systems'])}")
    print(f"satellite orbits and clocks: {summary.get('clock_source', 'broadcast')}")
    for s, f in summary["relativity_k"].items():
        rms = ", ".join(f"{k} {v:.2f} m" for k, v in f["rms_m"].items())
        print(f"periodic-term factor {s}: k = {f['k']:.3f} +- {f['sigma']:.3f} (jackknife; expected "
              f"{f['expected_k']:g}, {f['status']}); residual RMS {rms}")
    p = summary["position"]
    if p["median_error_3d_m"] is not None:
        print(f"median 3-D error vs {p['reference']} position: {p['median_error_3d_m']:.2f} m "
              f"(without the periodic term {p['median_error_3d_m_without_periodic']:.2f} m)")
    if summary["receiver_verdict"]:
        print(f"receiver: {summary['receiver_verdict']}")
