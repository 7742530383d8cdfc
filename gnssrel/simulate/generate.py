"""Write the whole invented scenario to a folder: navigation, precise products, receiver logs.

One call, :func:`write_scenario`, builds the scenario from its seed, computes the truth, each
receiver's observables and firmware outputs, writes every file atomically and returns the
manifest (also written as ``scenario.json``).  Same seed and options: byte-identical files.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from gnssrel import __version__
from gnssrel.errors import GnssrelInputError
from gnssrel.geodesy import ecef_to_geodetic
from gnssrel.io.writers import write_json
from gnssrel.simulate import lowcost, truth
from gnssrel.simulate.firmware import firmware_fixes
from gnssrel.simulate.observe import simulate_observables
from gnssrel.simulate.scenario import (
    DEFAULT_SEED,
    DEFAULT_START_GPST,
    FREQUENCY_HZ,
    KLOBUCHAR_ALPHA,
    KLOBUCHAR_BETA,
    LEAP_SECONDS,
    NAV_TYPE,
    NEQUICK_AI,
    SIGNALS,
    build_scenario,
    issue_times,
    reexpress,
)
from gnssrel.simulate.textfile import calendar
from gnssrel.simulate.write_clock import write_clock
from gnssrel.simulate.write_nav import write_navigation
from gnssrel.simulate.write_nmea import write_gga
from gnssrel.simulate.write_obs import write_observations
from gnssrel.simulate.write_receiver_clocks import write_receiver_clocks
from gnssrel.simulate.write_sp3 import write_sp3
from gnssrel.timescales import to_week_seconds

PROGRAM = "gnssrel-simulate"
AGENCY = "KVA"
AGENCY_NAME = "KELVARRE ORBIT ANALYSIS (INVENTED)"
SURVEY_OFFICE = "SKERRISH SURVEY"
SP3_INTERVAL_S = 900
SP3_MARGIN_S = 5400          # 1.5 h before and after: room for 9-11 point interpolation
NOTICE = "INVENTED DEMO DATA: NO REAL STATION, SATELLITE OR AGENCY"
EXPECTED = {  # what the audit should conclude, per firmware periodic-term mode
    "applied": {"position_hypothesis": "applied", "clock_convention": "includes-periodic"},
    "omitted": {"position_hypothesis": "omitted", "clock_convention": "excludes-periodic"},
}


def _span_code(hours: float) -> str:
    minutes = round(hours * 60)
    if minutes == 24 * 60:
        return "01D"          # RINEX long names give a whole day as one day
    return f"{minutes // 60:02d}H" if minutes % 60 == 0 else f"{minutes:02d}M"


def _stamp(t) -> str:
    y, _mo, _d, h, mi, _s = calendar(t)
    doy = int((np.datetime64(t, "D") - np.datetime64(f"{y}-01-01", "D")).astype(int)) + 1
    return f"{y:04d}{doy:03d}{h:02d}{mi:02d}"


def file_names(scn) -> dict:
    span, start = _span_code(scn.hours), _stamp(scn.start)
    rate = f"{int(scn.interval_s):02d}S" if scn.interval_s < 100 else f"{int(scn.interval_s // 60):02d}M"
    sp3_start = _stamp(scn.start - np.timedelta64(SP3_MARGIN_S, "s"))
    sp3_span = _span_code(scn.hours + 2 * SP3_MARGIN_S / 3600)
    names = {"navigation": f"{scn.sites[0].marker}00ZZZ_R_{start}_{span}_MN.rnx",
             "sp3": f"{AGENCY}0DEMFIN_{sp3_start}_{sp3_span}_15M_ORB.SP3",
             "clock": f"{AGENCY}0DEMFIN_{start}_{span}_30S_CLK.CLK"}
    for r in scn.receivers:
        names[f"{r.marker}:observations"] = f"{r.marker}00ZZZ_R_{start}_{span}_{rate}_MO.rnx"
        names[f"{r.marker}:fixes"] = f"{r.marker}_fixes.nmea"
        names[f"{r.marker}:satellite_clocks"] = f"{r.marker}_satellite_clocks.csv"
    return names


def check_span(hours: float, interval_s: float) -> None:
    """Refuse a log length or interval the writers cannot honour (one line, exit 2)."""
    if not 0.25 <= hours <= 24:
        raise GnssrelInputError(f"--hours must be between 0.25 and 24, not {hours}")
    if not 1 <= interval_s <= 300 or (3600 * hours) % interval_s:
        raise GnssrelInputError(f"--interval must be 1-300 s and divide the span, not {interval_s}")


def write_scenario(output_dir, seed: int = DEFAULT_SEED, hours: float = 3.0, interval_s: float = 30.0,
                   start=DEFAULT_START_GPST, receivers: str = "geodetic") -> dict:
    """Generate and write the scenario under ``output_dir`` (created if needed); returns the manifest.
    ``receivers``: "geodetic" (the demo's two dual-frequency receivers) or "low-cost" (two
    single-frequency modules, :mod:`gnssrel.simulate.lowcost`)."""
    check_span(hours, interval_s)
    out = Path(output_dir)
    out.mkdir(parents=True, exist_ok=True)
    scn = build_scenario(seed=seed, start=start, hours=hours, interval_s=interval_s)
    if receivers == "low-cost":
        return _write_low_cost(out, scn, seed)
    rng = np.random.default_rng([seed, 1])
    names = file_names(scn)
    date = creation_date(scn)
    ephemerides = write_products(out, scn, names, date)
    receivers = [write_receiver(out, scn, rcv, names, date, rng) for rcv in scn.receivers]

    manifest = scenario_manifest(scn, names, receivers, ephemerides)
    os.chmod(write_json(manifest, out / "scenario.json"), 0o644)
    return manifest


def _write_low_cost(out: Path, scn, seed: int) -> dict:
    """The products and two low-cost modules (correct, faulty) instead of the geodetic receivers."""
    scn.receivers = lowcost.low_cost_receivers(scn)
    rng = np.random.default_rng([seed, 2])
    names = {k: v for k, v in file_names(scn).items() if not k.endswith(":satellite_clocks") and not k.endswith(":fixes")}
    for rcv in scn.receivers:
        names.update(lowcost.file_names(rcv, names[f"{rcv.marker}:observations"]))
    date = creation_date(scn)
    ephemerides = write_products(out, scn, names, date)
    header = {"program": PROGRAM, "run_by": SURVEY_OFFICE, "date": date, "comments": [NOTICE],
              "observer": "FIELD CREW 3", "agency": SURVEY_OFFICE, "interval_s": scn.interval_s,
              "leap_seconds": LEAP_SECONDS}
    receivers = [lowcost.write_low_cost_receiver(out, scn, rcv, names, header, rng) for rcv in scn.receivers]
    manifest = scenario_manifest(scn, names, receivers, ephemerides)
    manifest["title"] = "Invented GNSS scenario with two low-cost receivers (not real data)"
    site = lowcost.ROOF
    manifest["sites"] = [{"marker": site.marker, "place": site.place, "lat_deg": site.lat_deg,
                          "lon_deg": site.lon_deg, "height_m": site.height_m,
                          "geoid_separation_m": site.geoid_separation_m, "position_ecef_m": site.position_ecef_m}]
    manifest["models"] = {**{k: v for k, v in manifest["models"].items() if k.startswith("true_")},
                          "low_cost_receivers": lowcost.MODELS, "elevation_mask_deg": 10.0}
    os.chmod(write_json(manifest, out / "scenario.json"), 0o644)
    return manifest


def creation_date(scn) -> str:
    """The files' creation stamp: 2 h after the logs end (a fixed function of the scenario)."""
    created = calendar(scn.end + np.timedelta64(2, "h"))
    return f"{created[0]:04d}{created[1]:02d}{created[2]:02d} {created[3]:02d}{created[4]:02d}00 UTC"


CLOCK_COMMENTS = ("CLOCKS EXCLUDE THE PERIODIC RELATIVISTIC TERM (AS IGS PRODUCTS)",
                  "SATELLITE CLOCKS EXCLUDE THE PERIODIC RELATIVISTIC TERM")
"""What the SP3 and the RINEX clock file say of their clocks (default products)."""


def write_products(out: Path, scn, names: dict, date: str, precise_clock=truth.precise_clock_s,
                   clock_comments: tuple[str, str] = CLOCK_COMMENTS) -> dict:
    """The navigation file, SP3 and RINEX clock of the scenario's window; returns the ephemerides.
    ``precise_clock(scn, t)``: the products' satellite clocks (default: without the periodic term),
    ``clock_comments``: the comment line saying so in the SP3 and in the clock file."""
    week, sow = to_week_seconds(np.array([scn.start]), "GPST")
    ephemerides = {c: reexpress(scn.reference, scn.clock, issue_times(scn, c), c) for c in "GEC"}
    write_navigation(out / names["navigation"], ephemerides, {
        "program": PROGRAM, "run_by": AGENCY, "date": date, "comments": [NOTICE],
        "klobuchar_alpha": KLOBUCHAR_ALPHA, "klobuchar_beta": KLOBUCHAR_BETA,
        "nequick_ai": NEQUICK_AI, "leap_seconds": LEAP_SECONDS,
        "week": int(week[0]), "sow": int(sow[0]) - int(sow[0]) % 3600})

    sv = list(scn.sv)
    step = np.timedelta64(SP3_INTERVAL_S, "s")
    n_sp3 = int((scn.hours * 3600 + 2 * SP3_MARGIN_S) // SP3_INTERVAL_S) + 1
    t_sp3 = scn.start - np.timedelta64(SP3_MARGIN_S, "s") + step * np.arange(n_sp3)
    write_sp3(out / names["sp3"], t_sp3, sv, truth.true_orbit(scn, t_sp3)["position_ecef_m"],
              precise_clock(scn, t_sp3), AGENCY,
              comments=[NOTICE, f"{AGENCY_NAME}: centre-of-mass orbits, GPST", clock_comments[0]])
    n_clk = int(scn.hours * 3600 // 30) + 1
    t_clk = scn.start + np.timedelta64(30, "s") * np.arange(n_clk)
    write_clock(out / names["clock"], t_clk, sv, precise_clock(scn, t_clk), {
        "program": PROGRAM, "run_by": AGENCY, "date": date, "agency": AGENCY,
        "agency_name": AGENCY_NAME, "leap_seconds": LEAP_SECONDS,
        "comments": [NOTICE, clock_comments[1]]})
    return ephemerides


def write_receiver(out: Path, scn, rcv, names: dict, date: str, rng: np.random.Generator) -> dict:
    """One receiver's observation log, fixes and clock table; returns its manifest entry."""
    sv = list(scn.sv)
    obs_types = {c: [code for band in SIGNALS[c] for code in band] for c in "GEC"}
    sim = simulate_observables(scn, rcv, rng)
    write_observations(out / names[f"{rcv.marker}:observations"], scn.epochs, sv,
                       sim["observables"], obs_types, {
                           "program": PROGRAM, "run_by": SURVEY_OFFICE, "date": date,
                           "comments": [NOTICE, f"Site: {rcv.site.place}"],
                           "marker": rcv.marker, "marker_number": f"{rcv.marker}-0001",
                           "observer": "FIELD CREW 2", "agency": SURVEY_OFFICE,
                           "receiver_serial": rcv.serial, "receiver_type": rcv.receiver_type,
                           "receiver_version": rcv.firmware, "antenna_serial": "TWA40-" + rcv.serial[-4:],
                           "antenna_type": rcv.antenna_type,
                           "position_ecef_m": rcv.site.position_ecef_m,
                           "interval_s": scn.interval_s, "leap_seconds": LEAP_SECONDS})
    fix = firmware_fixes(scn, rcv, sim)
    lat_rad, lon_rad, h = ecef_to_geodetic(fix["position_ecef_m"])
    lat, lon = np.degrees(lat_rad), np.degrees(lon_rad)
    t_utc = scn.epochs - np.timedelta64(LEAP_SECONDS, "s")
    write_gga(out / names[f"{rcv.marker}:fixes"], t_utc, lat, lon, h,
              rcv.site.geoid_separation_m, fix["n_used"], fix["hdop"])
    write_receiver_clocks(out / names[f"{rcv.marker}:satellite_clocks"], scn.epochs, sv,
                          fix["clock_correction_s"], comments=[
                              (f"Satellite clock corrections applied by receiver {rcv.marker} "
                               f"({rcv.receiver_type}, firmware {rcv.firmware})"), NOTICE,
                              "time: measurement epoch; time_scale: its scale; sv: RINEX satellite name",
                              ("clock_correction_s: satellite clock offset from system time as the "
                               "firmware computed it (broadcast polynomial plus relativistic terms), "
                               "at signal transmission, without group delay")])
    err3d = np.linalg.norm(fix["position_ecef_m"] - rcv.site.position_ecef_m, axis=1)
    return {
        "marker": rcv.marker, "site": rcv.site.marker, "receiver_type": rcv.receiver_type,
        "firmware": rcv.firmware, "serial": rcv.serial, "antenna_type": rcv.antenna_type,
        **receiver_truth(rcv),
        "clock_offset_s": rcv.clock_offset_s, "clock_drift_s_per_s": rcv.clock_drift_s_per_s,
        "inter_system_bias_s": rcv.inter_system_bias_s,
        "fix_error_3d_m": {"median": float(np.median(err3d)), "max": float(err3d.max())},
        "files": {k.split(":")[1]: names[k] for k in names if k.startswith(rcv.marker + ":")},
    }


def receiver_truth(rcv) -> dict:
    """What a receiver's firmware does with the periodic term, and what the audit should find."""
    return {
        "periodic_term": rcv.periodic_term_mode, "faulty": rcv.periodic_term_mode != "applied",
        "fault": None if rcv.periodic_term_mode == "applied" else {
            "term": "periodic", "mode": rcv.periodic_term_mode,
            "where": ["satellite_clocks", "fixes"],
            "description": "firmware leaves out F e sqrtA sinE from the satellite clock "
                           "correction, so its clock table and its position fixes miss it"},
        "expected": dict(EXPECTED[rcv.periodic_term_mode], observations_relativity_k=1.0),
    }


def scenario_manifest(scn, names, receivers, ephemerides) -> dict:
    E = truth.broadcast_orbit(scn, scn.epochs[:1])["eccentric_anomaly_rad"]  # for amplitudes only
    amp = np.abs(truth.periodic_s(scn, np.full_like(E, np.pi / 2)))[0]
    sats = {s: {"eccentricity": float(e), "sqrt_a_sqrt_m": float(a), "periodic_amplitude_ns": float(p * 1e9)}
            for s, e, a, p in zip(scn.sv, scn.reference["eccentricity"], scn.reference["sqrt_a_sqrt_m"], amp)}
    faulty = [r["marker"] for r in receivers if r["faulty"]]
    return {
        "title": "Invented GNSS scenario for the gnssrel demo (not real data)",
        "notice": "Every place, station, receiver, satellite orbit and agency here is invented.",
        "generator": {"program": "gnssrel simulate", "version": __version__, "seed": scn.seed,
                      "hours": scn.hours, "interval_s": scn.interval_s},
        "time_scale": "GPST", "start": str(scn.start.astype("datetime64[s]")),
        "end": str(scn.end.astype("datetime64[s]")), "last_epoch": str(scn.epochs[-1].astype("datetime64[s]")), "leap_seconds": LEAP_SECONDS,
        "systems": {c: {"satellites": [s for s in scn.sv if s[0] == c], "nav_type": NAV_TYPE[c],
                        "records": len(ephemerides[c]),
                        "signals": [code for band in SIGNALS[c] for code in band],
                        "frequencies_hz": FREQUENCY_HZ[c]} for c in "GEC"},
        "satellites": sats,
        "sites": [{"marker": s.marker, "place": s.place, "lat_deg": s.lat_deg, "lon_deg": s.lon_deg,
                   "height_m": s.height_m, "geoid_separation_m": s.geoid_separation_m,
                   "position_ecef_m": s.position_ecef_m} for s in scn.sites],
        "receivers": receivers,
        "faulty_receivers": faulty,
        "correct_receivers": [r["marker"] for r in receivers if not r["faulty"]],
        "products": {"analysis_centre": {"code": AGENCY, "name": AGENCY_NAME},
                     "precise_clock_convention": "excludes-periodic",
                     "orbit_reference": "centre of mass = broadcast reference point (no antenna offset)",
                     "datum_offset_s": scn.precise_datum[0], "datum_drift_s_per_s": scn.precise_datum[1],
                     "sp3_interval_s": SP3_INTERVAL_S, "sp3_margin_s": SP3_MARGIN_S},
        "models": {
            "true_orbit": "broadcast Keplerian orbit (IS-GPS-200 Table 20-IV) + smooth error, ~0.25 m per axis",
            "true_clock": "broadcast polynomial + F e sqrtA sinE + smooth error ~0.5 ns",
            "pseudorange": "light time with Earth rotation (Sagnac), true clock incl. periodic term, Shapiro, "
                           "Saastamoinen troposphere, Klobuchar ionosphere scaled 1/f^2, broadcast group "
                           "delays, receiver clock + inter-system bias, white noise ~0.3 m",
            "carrier_phase": "same geometry, ionosphere advanced, integer ambiguity, no slips, 2 mm noise",
            "solid_earth_tide": "the antenna moves with the degree-2 solid-Earth tide (IERS 2010 eq. 7.5) about "
                                "the site's tide-free coordinates (the header position)",
            "elevation_mask_deg": 10.0,
            "galileo_clock_reference": "F/NAV: E1/E5a ionosphere-free (BGD E5a/E1 for single E1)",
            "beidou_clock_reference": "D1: B3I (TGD1 for single B1I)",
        },
        "files": [{"path": p, "kind": k.split(":")[-1]} for k, p in names.items()] + [
            {"path": "scenario.json", "kind": "manifest"}],
    }
