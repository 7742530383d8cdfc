"""``gnssrel audit``: per-observation corrections, positions and the relativity check of a receiver log.

Wiring only: read the observation and navigation files, run
:func:`gnssrel.pipeline.stages.audit_log`, write the tables and the summary.
"""

from __future__ import annotations

import logging

import numpy as np

from gnssrel.errors import GnssrelInputError, NoDataError
from gnssrel.io import writers
from gnssrel.jobs import common
from gnssrel.jobs.clocks import print_receiver_clocks
from gnssrel.orbits.spans import describe_navigation_span
from gnssrel.progress import step
from gnssrel.text import fmt, fmt_sigma, fmt_span, in_system_order, system_label, text_table

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
    common.add_systems(parser)
    common.add_time_window(parser, None, "keep only epochs on multiples of this interval, s "
                                         "(default: every epoch of OBS)")
    parser.add_argument("--elevation-mask", type=float, default=10.0, metavar="DEG",
                        help="elevation mask in degrees (default 10)")
    parser.add_argument("--weighting", choices=("elevation", "equal"), default="elevation",
                        help="least-squares weights of the fixes: 1/(1 + 1/sin^2 el) (default) or equal")
    common.add_rule(parser)
    common.add_outputs(parser, "per-observation corrections table (.csv, .parquet or .nc)")
    parser.add_argument("--positions", metavar="FILE",
                        help="per-epoch positions and 3-D errors table (.csv, .parquet or .nc)")


def _parse_position(text: str):
    try:
        xyz = np.array([float(v) for v in text.split(",")])
    except ValueError:
        xyz = np.array([])
    if xyz.size != 3 or not np.all(np.isfinite(xyz)) or np.linalg.norm(xyz) < 6.0e6:
        raise GnssrelInputError(f"--position {text!r}: give X,Y,Z in metres (ECEF, near the Earth's surface)")
    return xyz


NO_STATE_REASONS = ("no navigation record", "no satellite state", "no precise orbit")
MISSING_STATE_WARNING = 0.10
"""A log whose pseudoranges lack a satellite state beyond this share gets a warning even when
positions could be solved."""
BENIGN_DROPS = ("system not requested", "system not audited", "another signal chosen (one code or pair per system)",
                "epoch without a position (too few satellites)", "not on the --step grid")
"""Drops that are a choice or a consequence, not the cause of an audit without positions."""


def check_something_computed(summary, ledger, path, nav, systems, obs_ds, precise=None) -> str | None:
    """Why no position could be solved (None when some were); exit 2 when neither a position nor a
    determined k could be computed, naming the real cause from the accounting (and the precise
    files, with their gaps, when ``precise`` orbits are what is missing)."""
    drops = ledger.dropped("observations")
    t = np.asarray(obs_ds["time"].values)
    worst = max((r for r in drops if r not in BENIGN_DROPS), key=drops.get, default="")
    precise_fault = precise is not None and t.size > 0 and worst.startswith("no precise orbit")
    if precise_fault:        # the precise files are at fault: name them and their gaps over the log
        from gnssrel.io.sp3 import describe_epochs
        orbits = precise["orbits"]
        sp3_paths = ", ".join(orbits.attrs.get("paths", [])) or None
        hint = (f"{describe_epochs(orbits, within=(t.min(), t.max()))} (the log spans {fmt_span(t.min(), t.max())};"
                " interpolation needs regularly spaced epochs around each time)")
    candidates = sum(ledger.count("observations", s) - sum(n for r, n in ledger.dropped("observations", s).items()
                                                           if r in BENIGN_DROPS[:3]) for s in systems)
    if summary["position"].get("n_epochs_solved", 1) and summary["position"]["median_error_3d_m"] is not None:
        missing = sum(n for r, n in drops.items() if r.startswith(NO_STATE_REASONS))
        if candidates and missing > MISSING_STATE_WARNING * candidates:   # computed, but say what is missing
            log.warning("%s: %d of %d pseudoranges of %s have no satellite state (%s): %s", path, missing,
                        candidates, "".join(systems),
                        ", ".join(f"{n} {r}" for r, n in drops.items() if r.startswith(NO_STATE_REASONS)),
                        f"the precise orbits {sp3_paths}: {hint}" if precise_fault
                        else "are the navigation files of this station and day?")
        return None
    causes = sorted(((r, n) for r, n in drops.items() if r not in BENIGN_DROPS), key=lambda kv: -kv[1])[:3]
    text = "no epoch could be solved for a position"
    if causes:
        text += ": " + "; ".join(f"{n} of {candidates} pseudoranges of {''.join(systems)}: {r}" for r, n in causes)
    n_sat = sum(len(nav.ephemerides[s]["sv"].unique()) for s in systems if s in nav.ephemerides)
    if precise_fault:
        text += f" (log {path}); the precise orbits: {hint}"
        path = sp3_paths or path
    elif t.size:
        text += (f" (the log spans {fmt_span(t.min(), t.max())}; the navigation records, "
                 f"{n_sat} satellites of {''.join(systems)}, {describe_navigation_span(nav, systems)})")
    determined = any(not str(f.get("status", "undetermined")).startswith("undetermined") and f.get("k") is not None
                     for f in summary["relativity_k"].values())
    if not determined:
        raise NoDataError(text, path)
    return text


def run(args) -> dict:
    # deferred: the stages pull xarray and scipy (start-up of `gnssrel --help`)
    from gnssrel.io.receiver_clocks import read_receiver_clocks
    from gnssrel.io.receiver_fixes import read_receiver_fixes
    from gnssrel.io.rinex_obs import read_observations
    from gnssrel.pipeline.grid import decimate_to_step
    from gnssrel.pipeline.inputs import (
        check_log_against_navigation,
        read_navigation_files,
        read_precise,
        receiver_rows_in_window,
    )
    from gnssrel.pipeline.stages import audit_log

    common.check_outputs(args)
    position = _parse_position(args.position) if args.position else None
    start, end = common.time_window(args)
    letters = common.parse_systems(args.systems)
    precise = read_precise(args.precise, list(letters) if letters else None) if args.precise else None
    nav, present = read_navigation_files(args.nav, letters)
    systems = list(present)          # observed systems without navigation records would void every fix
    with step(f"reading {args.obs}"):
        obs_ds = read_observations(args.obs, systems=systems, start=start, end=end)
    for warning in obs_ds.attrs.get("warnings", []):   # header/body disagreements, skipped epochs
        log.warning("%s: %s", args.obs, warning)
    obs_ds = decimate_to_step(obs_ds, args.step)
    check_log_against_navigation(obs_ds, nav, present, args.obs)
    receiver_clocks = None
    if args.receiver_clocks:
        t = obs_ds["time"].values
        receiver_clocks = receiver_rows_in_window(read_receiver_clocks(args.receiver_clocks), args.receiver_clocks,
                                                  t.min(), t.max(), systems, nav=nav, present=present)
    fixes = None
    if args.receiver_fixes:
        fixes = read_receiver_fixes(args.receiver_fixes, date_utc=args.fix_date)
    audited = audit_log(obs_ds, nav, receiver_position_ecef_m=position, systems=systems,
                        elevation_mask_deg=args.elevation_mask, fixes=fixes, precise=precise,
                        weighting=args.weighting, rule=args.rule, receiver_clocks=receiver_clocks)
    summary = audited.summary
    why_no_fix = check_something_computed(summary, audited.ledger, args.obs, nav, present, obs_ds, precise)
    if why_no_fix:
        summary["position"]["why_none"] = why_no_fix
        log.warning("%s: %s", args.obs, why_no_fix)
    times = obs_ds["time"].values
    if times.size:
        summary["observations"].update(start=times[0], end=times[-1], time_scale="GPST")
    if args.positions:
        table = audited.position_errors()
        for name, pos in audited.positions.items():
            for c in ("x_m", "y_m", "z_m", "clock_m"):
                table[f"{c[:-2]}_{name.replace('-', '_')}_m"] = pos[c].to_numpy()
        writers.write_table(table, args.positions)
    return common.emit(args, summary, audited.corrections, _print_text)


def _print_text(summary: dict) -> None:
    o = summary["observations"]
    span = f", {fmt_span(o['start'], o['end'])}" if "start" in o else ""
    systems = "".join(in_system_order(o["systems"]))
    print(f"audit of a receiver log: {o['n_epochs']} epochs, {o['n_sat']} satellites of {systems}{span}")
    print(f"satellite orbits and clocks: {summary.get('clock_source', 'broadcast')}")
    fits = summary["relativity_k"]
    hypotheses = list(dict.fromkeys(h for f in fits.values() for h in f["rms_m"]))
    rows, notes = [], []
    for s in in_system_order(fits):
        f = fits[s]
        status, _, why = str(f["status"]).partition(":")
        if why:
            notes.append(f"{system_label(s)}: {status}: {why.strip()}")
        fitted = f.get("n_sat", 3) >= 3           # fewer satellites: no fit worth printing
        rows.append((system_label(s), fmt(f["k"] if fitted else None, ".3f"),
                     fmt_sigma(f["sigma"]), f"{f['expected_k']:g}", status,
                     *(fmt(f["rms_m"].get(h) if fitted else None) for h in hypotheses)))
    print("factor k of the periodic relativistic term in the pseudoranges (jackknife sigma; k = 1 expected)")
    print(text_table(("system", "k", "sigma k", "expected k", "status",
                             *(f"RMS {h} (m)" for h in hypotheses)), rows))
    for note in notes:
        print(f"  {note}")
    p = summary["position"]
    if p["median_error_3d_m"] is not None:
        print(f"median 3-D position error against the {p['reference']} position: {p['median_error_3d_m']:.2f} m "
              f"(periodic term omitted: {p['median_error_3d_m_without_periodic']:.2f} m)")
    else:
        print(f"no position: {p.get('why_none') or 'no epoch could be solved'}")
    fixes = summary.get("receiver_fixes")
    if fixes and fixes.get("closest"):
        h = fixes["closest"]
        print(f"receiver's own fixes follow '{h}' (median distance {fixes['median_distance_m'][h]:.2f} m over "
              f"{fixes['n_matched'][h]} fixes; the next hypothesis is {fixes['margin_m']:.2f} m farther)")
    elif fixes:
        print("receiver's own fixes: none matched an epoch of the log")
    if summary.get("receiver_clocks"):
        print_receiver_clocks(summary["receiver_clocks"])
