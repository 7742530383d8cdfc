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
    parser.add_argument("--antex", metavar="ATX",
                        help="satellite antenna offsets (ANTEX 1.4) for --precise: the SP3 positions (centre "
                             "of mass) are moved to the antenna phase centre of the code pair (or code) each "
                             "system's pseudoranges use")
    parser.add_argument("--position", metavar="X,Y,Z|LAT,LON,H", help=common.POSITION_HELP)
    parser.add_argument("--receiver-fixes", metavar="FILE",
                        help=f"the receiver's own fixes: {common.RECEIVER_FIXES_FORMAT}")
    parser.add_argument("--fix-date", metavar="YYYY-MM-DD",
                        help="UTC date of an NMEA log without RMC/ZDA sentences")
    parser.add_argument("--receiver-clocks", metavar="FILE",
                        help=f"the receiver's own satellite clock corrections: {common.RECEIVER_CLOCKS_FORMAT}")
    parser.add_argument("--receiver-clock-bias", metavar="FILE",
                        help="the receiver's own clock series: CSV with columns time (ISO 8601), time_scale (GPST, "
                             "UTC, GST or BDT), clock_bias_ns (receiver clock minus that time, ns) and optionally "
                             "clock_drift_ns_per_s; compared with gnssrel's receiver clock under each hypothesis")
    common.add_systems(parser)
    common.add_time_window(parser, None, "keep only epochs on multiples of this interval, s "
                                         "(default: every epoch of OBS)")
    parser.add_argument("--elevation-mask", type=float, default=10.0, metavar="DEG",
                        help="elevation mask in degrees (default 10)")
    parser.add_argument("--weighting", choices=("auto", "elevation", "equal", "cn0"), default="auto",
                        help="least-squares weights of the fixes: 1/(1 + 1/sin^2 el) (elevation), equal, or from "
                             "the logged C/N0, sigma^2 = 0.09 m^2 + 1.6e4 m^2 Hz 10^(-C/N0/10) (cn0; elevation "
                             "weights where no C/N0 is logged); auto (default): cn0 for single codes, elevation "
                             "for ionosphere-free pairs")
    parser.add_argument("--false-alarm", type=float, default=1e-3, metavar="P",
                        help="false-alarm probability per epoch of the residual (chi-square) test of the fixes, "
                             "which excludes the worst observation while an epoch fails (default 1e-3; 0: no test)")
    parser.add_argument("--max-pdop", type=float, default=10.0, metavar="PDOP",
                        help="epochs whose PDOP exceeds this get no position (default 10; 0: no gate)")
    parser.add_argument("--min-satellites", type=int, default=4, metavar="N",
                        help="epochs with fewer observations in the fix get no position (default 4)")
    parser.add_argument("--clock-estimate", metavar="FILE",
                        help="per-epoch receiver clock bias (s), drift (s/s) and jumps estimated by the fixes "
                             "(.csv, .parquet or .nc)")
    common.add_rule(parser)
    parser.add_argument("--frequencies", choices=("auto", "single", "dual"), default="auto",
                        help="codes per system: a dual-frequency ionosphere-free pair where the log has one, "
                             "else one code with the broadcast ionosphere model (auto, default); one code "
                             "everywhere (single); pairs only (dual)")
    parser.add_argument("--smooth-code", type=float, metavar="SECONDS", default=None,
                        help="carrier-smooth the codes over this window, s (Hatch filter; one frequency: at "
                             "most 100 s; reset on loss of lock, gaps and phase-minus-code jumps over 10 m)")
    common.add_fail_on_fault(parser)
    common.add_outputs(parser, "per-observation corrections table (.csv, .parquet or .nc)")
    parser.add_argument("--positions", metavar="FILE",
                        help="per-epoch positions and 3-D errors table (.csv, .parquet or .nc)")


def _parse_position(text: str):
    """ECEF metres of --position: ECEF X,Y,Z or WGS-84 latitude, longitude, height (jobs.common.parse_position)."""
    return common.parse_position(text)[0]


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
    from gnssrel.audit.summary import HEADER_POSITION_NOTE
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
    if args.clock_estimate:
        common.check_output_suffix(args.clock_estimate)
    fix_options = _fix_options(args)
    if args.smooth_code is not None and not (np.isfinite(args.smooth_code) and args.smooth_code > 0):
        raise GnssrelInputError(f"--smooth-code {args.smooth_code:g}: give a window in seconds above 0 (e.g. 100)")
    position = _parse_position(args.position) if args.position else None
    start, end = common.time_window(args)
    letters = common.parse_systems(args.systems)
    if getattr(args, "antex", None) and not args.precise:
        raise GnssrelInputError("--antex moves precise orbits to the antenna phase centre: give --precise SP3 files")
    precise = read_precise(args.precise, list(letters) if letters else None) if args.precise else None
    if precise is not None and getattr(args, "antex", None):
        from gnssrel.io.antex import read_antex  # deferred: only with --antex

        precise["antex"] = read_antex(args.antex)
    nav, present = read_navigation_files(args.nav, letters)
    systems = list(present)          # observed systems without navigation records would void every fix
    with step(f"reading {args.obs}"):
        obs_ds = read_observations(args.obs, systems=systems, start=start, end=end,
                                   with_flags=bool(args.smooth_code))
    if args.smooth_code:            # the loss-of-lock flags of the phases are what smoothing needs
        obs_ds = obs_ds.drop_vars([v for v in obs_ds.data_vars if str(v).endswith("ssi")])
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
    clock_series = None
    if args.receiver_clock_bias:
        from gnssrel.io.receiver_clock_series import read_receiver_clock_series  # deferred: pandas (start-up)

        clock_series = read_receiver_clock_series(args.receiver_clock_bias)
    audited = audit_log(obs_ds, nav, receiver_position_ecef_m=position, systems=systems,
                        elevation_mask_deg=args.elevation_mask, fixes=fixes, precise=precise,
                        weighting=args.weighting, rule=args.rule, receiver_clocks=receiver_clocks,
                        frequencies=args.frequencies, smooth_code_s=args.smooth_code,
                        fix_options=fix_options)
    summary = audited.summary
    if precise is not None:
        _antenna_summary(summary, audited.ledger, precise, getattr(args, "antex", None))
    if clock_series is not None:
        _compare_clock_series(summary, audited, clock_series)
    if summary["position"].get("reference") == "header":      # the header position is approximate only
        summary["position"]["reference_note"] = HEADER_POSITION_NOTE
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
        for c in FIX_QUALITY_COLUMNS:          # of the "applied" fixes (the others use its observations)
            table[c] = audited.positions["applied"][c].to_numpy()
        writers.write_table(table, args.positions)
    if args.clock_estimate:
        from gnssrel.audit.receiver_clock import receiver_clock_series  # deferred: pandas (start-up)

        writers.write_table(receiver_clock_series(audited.positions["applied"]), args.clock_estimate)
    common.emit(args, summary, audited.corrections, _print_text)
    from gnssrel.pipeline.verdicts import firmware_at_fault  # deferred: the pipeline pulls xarray (--help)

    common.flag_faults(args, [args.obs] if firmware_at_fault(summary, summary.get("receiver_clocks")) else [])
    return summary


def _antenna_summary(summary: dict, ledger, precise: dict, antex_path) -> None:
    """The summary's ``antenna_offsets`` entry; with --antex the ANTEX reader's counts and the
    warnings of satellites left without an offset join the accounting."""
    if not antex_path:
        summary["antenna_offsets"] = {"applied": False, "note": "no --antex: the precise positions are the "
                                      "satellites' centres of mass, the pseudoranges refer to the antenna "
                                      "phase centre (about 1-3 m apart, mostly radial)"}
        return
    ledger.merge(precise["antex"].accounting)
    ledger.merge(precise.get("antenna_ledger"))
    summary["accounting"] = ledger.as_dict()
    by_system = precise.get("antenna_offsets", {})
    summary["antenna_offsets"] = {
        "applied": True, "file": str(antex_path), "by_system": by_system,
        "n_satellites": sum(len(e["offsets_body_m"]) for e in by_system.values()),
        "attitude": "nominal yaw steering (z to the Earth, y = z x Sun), low-precision Sun",
        "note": "precise positions moved to the phase centre of each system's code pair (ionosphere-free "
                "combination of the ANTEX offsets) or single code"}


FIX_QUALITY_COLUMNS = ("n_used", "n_excluded", "gdop", "pdop", "hdop", "vdop", "test_statistic", "test_threshold",
                       "no_fix_reason")
"""Per-epoch columns of the fixes written with --positions (gnssrel.audit.positioning)."""


def _fix_options(args) -> dict:
    """The residual test and gates of the fixes from the command line, checked."""
    if not (np.isfinite(args.false_alarm) and 0.0 <= args.false_alarm < 1.0):
        raise GnssrelInputError(f"--false-alarm {args.false_alarm:g}: give a probability in [0, 1), e.g. 1e-3")
    if not (np.isfinite(args.max_pdop) and args.max_pdop >= 0.0):
        raise GnssrelInputError(f"--max-pdop {args.max_pdop:g}: give a PDOP above 0 (e.g. 10), or 0 for no gate")
    if args.min_satellites < 4:
        raise GnssrelInputError(f"--min-satellites {args.min_satellites}: at least 4 (three coordinates and a clock)")
    return {"false_alarm": args.false_alarm or None, "max_pdop": args.max_pdop or None,
            "min_satellites": args.min_satellites}


def _print_integrity(integrity: dict | None, clock: dict | None) -> None:
    """Two lines: what the residual test and gates of the fixes did; the receiver clock they estimate."""
    if integrity:
        per_sv = ", ".join(f"{sv} {n}" for sv, n in sorted(integrity["excluded_by_satellite"].items()))
        test = ("no residual test" if integrity["false_alarm_probability"] is None else
                f"residual test (false alarm {integrity['false_alarm_probability']:g} per epoch): "
                f"{integrity['n_excluded_by_test']} observations excluded" + (f" ({per_sv})" if per_sv else ""))
        print(f"fixes: {test}; {integrity['n_outliers']} gross outliers; median PDOP "
              f"{fmt(integrity['median_pdop'], '.2f')}, {integrity['n_epochs_above_pdop_gate']} epochs above the "
              f"PDOP gate")
    if clock and clock.get("n_epochs"):
        jumps = clock["n_millisecond_jumps"]
        print(f"receiver clock of the fixes: {clock['bias_first_s'] * 1e3:.6f} ms to {clock['bias_last_s'] * 1e3:.6f} ms"
              f" (GPST), median drift {fmt(clock['drift_median_s_per_s'], '.3g')} s/s, {jumps} millisecond "
              f"jump{'s' if jumps != 1 else ''}" + (f" and {clock['n_jumps'] - jumps} other" if clock["n_jumps"] > jumps
                                                    else ""))


def _compare_clock_series(summary: dict, audited, series) -> None:
    """The receiver's own clock series against gnssrel's clock per hypothesis: summary key
    ``receiver_clock_series``, its rows in the accounting, its sentence in ``receiver_verdict``."""
    from gnssrel.clocks.receiver_series import check_receiver_clock_series  # deferred: pandas (start-up)

    block, ledger = check_receiver_clock_series(series, audited.positions)
    summary["receiver_clock_series"] = block
    audited.ledger.merge(ledger)
    summary["accounting"] = audited.ledger.as_dict()
    summary["receiver_verdict"] = "; ".join(v for v in (summary.get("receiver_verdict"),
                                                         f"receiver clock: {block['verdict']}") if v)


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
    for s, why in (summary.get("relativity_k_not_fitted") or {}).items():
        print(f"  {system_label(s)}: no k: {why}")
    _print_codes(summary.get("codes"))
    antenna = summary.get("antenna_offsets")
    if antenna and antenna.get("applied"):
        parts = [f"{system_label(s)} {e['codes']} ({e['antex_codes']}): {len(e['offsets_body_m'])} satellites"
                 + (f", {len(e['missing'])} without" if e["missing"] else "")
                 for s, e in ((s, antenna["by_system"][s]) for s in in_system_order(antenna["by_system"]))]
        print(f"precise orbits moved to the antenna phase centre ({antenna['file']}): " + "; ".join(parts))
    p = summary["position"]
    if p["median_error_3d_m"] is not None:
        print(f"median 3-D position error against the {p['reference']} position: {p['median_error_3d_m']:.2f} m "
              f"(periodic term omitted: {p['median_error_3d_m_without_periodic']:.2f} m)")
        if p.get("reference_note"):
            print(f"note: {p['reference_note']}")
    else:
        print(f"no position: {p.get('why_none') or 'no epoch could be solved'}")
    _print_integrity(p.get("integrity"), summary.get("receiver_clock_estimate"))
    fixes = summary.get("receiver_fixes")
    if fixes and fixes.get("closest"):
        print(f"receiver's own fixes: {fixes['verdict']}")
    elif fixes:
        print("receiver's own fixes: none matched an epoch of the log")
    if summary.get("receiver_clocks"):
        print_receiver_clocks(summary["receiver_clocks"])
    if summary.get("receiver_clock_series"):
        print(f"receiver's own clock series: {summary['receiver_clock_series']['verdict']}")


def _print_codes(codes) -> None:
    """Codes per system, the ionosphere model of single-frequency ones, and the smoothing (issue 13)."""
    if not codes:
        return
    for s, entry in codes["by_system"].items():
        iono = entry["ionosphere"]
        if isinstance(iono, dict):
            iono = f"{iono['note']} (expected error {iono['expected_error']})"
        noise = entry.get("pair_noise_m")
        if noise:
            iono += (f"; pair noise from the data {noise['code_m']:.2f} m per code, {noise['ionosphere_free_m']:.2f} m "
                     "combined" + ("" if "+" in entry["code"] else ": too noisy, one code used instead"))
        print(f"  {system_label(s)} code {entry['code']}: ionosphere {iono}")
    for s, sm in (codes.get("smoothing") or {}).items():
        if sm.get("why_not"):
            print(f"  {system_label(s)}: code not smoothed: {sm['why_not']}")
            continue
        resets = ", ".join(f"{n} {r}" for r, n in sm["resets"].items() if n) or "none"
        print(f"  {system_label(s)}: carrier-smoothed code ({sm['form']}, {sm['window_s']:g} s): "
              f"{sm['smoothed']} observations smoothed; arcs restarted: {resets}")
