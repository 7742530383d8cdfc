"""Write the survey scenario (:mod:`gnssrel.simulate.survey`): navigation, SP3, RINEX clock, one
static station's dual-frequency code and phase log, and ``scenario.json`` with its truth.

``gnssrel simulate --survey --output DIR`` calls :func:`write_survey`.  Same seed and options:
byte-identical files.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from gnssrel.errors import GnssrelInputError
from gnssrel.io.writers import write_json
from gnssrel.simulate.generate import (
    AGENCY,
    NOTICE,
    PROGRAM,
    SURVEY_OFFICE,
    check_span,
    creation_date,
    file_names,
    scenario_manifest,
    write_products,
)
from gnssrel.simulate.observe import CODE_NOISE_M, ELEVATION_MASK_RAD
from gnssrel.simulate.scenario import DEFAULT_SEED, LEAP_SECONDS, SIGNALS
from gnssrel.simulate.survey import (
    ARP_HEIGHT_M,
    CLOCK_CONVENTIONS,
    PHASE_NOISE_M,
    RECEIVER,
    RELATIVE_HUMIDITY,
    SURVEY_HOURS,
    SURVEY_START_GPST,
    build_survey_scenario,
    simulate_survey,
)
from gnssrel.simulate.write_obs import write_observations

MODELS = {
    "satellite_clock": "broadcast polynomial + smooth error ~0.5 ns + periodic term F e sqrtA sinE "
                       "(broadcast elements, ICD form) + J2 term -(3/2) J2 aE^2/(a c^2) sqrt(GM/a) sin^2 i "
                       "sin 2u (Kouba 2004; IERS 2010 GM, J2, aE)",
    "precise_clock_convention": "default (excludes-periodic-and-j2): SP3 and RINEX clock exclude the periodic "
                                "term AND the J2 term, the user applies both (ICD form of the periodic term "
                                "meets the truth exactly); igs: they exclude only -2 r.v/c^2 of the true orbit, "
                                "the user applies the state form and no J2 term",
    "range": "light time from the true centre of mass at transmission to the ARP at reception, Earth "
             "rotation (Sagnac) included; Shapiro (IERS 2010 eq. 11.17, gamma 1)",
    "troposphere": f"Saastamoinen zenith delays, standard atmosphere, {RELATIVE_HUMIDITY:.0%} humidity, Niell "
                   "(1996) hydrostatic and wet mapping; constant in time",
    "ionosphere": "Klobuchar on L1 scaled (f_L1/f)^2: code delayed, phase advanced (ionosphere-free exact)",
    "carrier_phase": "integer ambiguity per continuous arc (random), cycle slips listed below, wind-up "
                     "(Wu et al. 1993, nominal yaw attitude, receiver antenna x north y west; observed phase "
                     "carries +dphi/2pi cycles on every frequency), white noise "
                     f"{PHASE_NOISE_M * 1e3:.1f} mm at zenith, x3 towards the horizon",
    "code": f"as the demo receivers: broadcast group delays, white noise {CODE_NOISE_M} m at zenith, x3 at horizon",
    "antenna": "receiver antenna phase centre = ARP (no offsets or variations); satellite orbits = "
               "phase centre",
    "solid_earth_tide": "IERS 2010 eq. 7.5 step 1 (degree 2, h2 0.6078, l2 0.0847), permanent part kept: "
                        "the marker truth is conventional tide free",
    "not_modelled": ["ocean loading", "pole tide", "multipath",
                     "receiver and satellite antenna phase-centre offsets/variations"],
    "elevation_mask_deg": float(np.degrees(ELEVATION_MASK_RAD)),
}


def survey_truth(rcv=RECEIVER) -> dict:
    """Marker, ARP and header positions (ECEF m, geodetic) of the survey station."""
    s = rcv.site
    marker = s.position_ecef_m
    lat, lon = np.radians(s.lat_deg), np.radians(s.lon_deg)
    up = np.array([np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)])
    arp = marker + ARP_HEIGHT_M * up
    return {"marker_ecef_m": [float(v) for v in marker],
            "marker_geodetic": {"lat_deg": s.lat_deg, "lon_deg": s.lon_deg, "height_m": s.height_m},
            "arp_ecef_m": [float(v) for v in arp],
            "antenna_delta_hen_m": [ARP_HEIGHT_M, 0.0, 0.0],
            "header_position_ecef_m": [round(float(v), 4) for v in marker],
            "reference": "the marker; APPROX POSITION XYZ in the header is the marker to 0.1 mm"}


def write_survey(output_dir, seed: int = DEFAULT_SEED, hours: float = SURVEY_HOURS, interval_s: float = 30.0,
                 start=SURVEY_START_GPST, tide: bool = True, clock_convention: str = "excludes-periodic-and-j2") -> dict:
    """Generate and write the survey scenario under ``output_dir``; returns the manifest.
    ``tide=False``: the station does not move with the solid-Earth tide (a static truth);
    ``clock_convention``: a key of :data:`gnssrel.simulate.survey.CLOCK_CONVENTIONS`."""
    if clock_convention not in CLOCK_CONVENTIONS:
        raise GnssrelInputError(f"unknown clock convention {clock_convention!r}; "
                                f"one of {', '.join(CLOCK_CONVENTIONS)}")
    check_span(hours, interval_s)
    out = Path(output_dir)
    out.mkdir(parents=True, exist_ok=True)
    scn = build_survey_scenario(seed, hours, interval_s, start)
    rcv = scn.receivers[0]
    names = {k: v for k, v in file_names(scn).items() if ":" not in k or k.endswith(":observations")}
    date = creation_date(scn)
    clock_function, comments = CLOCK_CONVENTIONS[clock_convention]
    ephemerides = write_products(out, scn, names, date, clock_function, comments)
    sim = simulate_survey(scn, np.random.default_rng([seed, 3]), rcv, tide)
    sv = list(scn.sv)
    write_observations(out / names[f"{rcv.marker}:observations"], scn.epochs, sv, sim["observables"],
                       {c: [code for band in SIGNALS[c] for code in band] for c in "GEC"}, {
                           "program": PROGRAM, "run_by": SURVEY_OFFICE, "date": date,
                           "comments": [NOTICE, f"Site: {rcv.site.place}", "Static survey log, truth in scenario.json"],
                           "marker": rcv.marker, "marker_number": f"{rcv.marker}-0001", "observer": "FIELD CREW 1",
                           "agency": SURVEY_OFFICE, "receiver_serial": rcv.serial,
                           "receiver_type": rcv.receiver_type, "receiver_version": rcv.firmware,
                           "antenna_serial": "TWA60-" + rcv.serial[-4:], "antenna_type": rcv.antenna_type,
                           "position_ecef_m": rcv.site.position_ecef_m, "antenna_delta_hen_m": (ARP_HEIGHT_M, 0.0, 0.0),
                           "interval_s": scn.interval_s, "leap_seconds": LEAP_SECONDS}, lli=sim["lli"])
    arcs = sim["arcs"]
    receiver = {"marker": rcv.marker, "site": rcv.site.marker, "kind": "geodetic-survey",
                "receiver_type": rcv.receiver_type, "firmware": rcv.firmware, "serial": rcv.serial,
                "antenna_type": rcv.antenna_type, "periodic_term": "applied", "faulty": False, "fault": None,
                "clock_offset_s": rcv.clock_offset_s, "clock_drift_s_per_s": rcv.clock_drift_s_per_s,
                "inter_system_bias_s": rcv.inter_system_bias_s,
                "files": {"observations": names[f"{rcv.marker}:observations"]}}
    manifest = scenario_manifest(scn, names, [receiver], ephemerides)
    manifest["title"] = "Invented static survey scenario with carrier phase (not real data)"
    manifest["models"] = dict(MODELS)
    if not tide:
        manifest["models"]["solid_earth_tide"] = "none: the station is static (--no-tide)"
        manifest["models"]["not_modelled"] = ["solid-Earth tide", *MODELS["not_modelled"]]
    manifest["survey"] = {
        "station": rcv.marker, **survey_truth(rcv), "solid_earth_tide": tide,
        "expected": {"position_error_3d_m_at_most": 0.01, "relativity_k_phase": 1.0,
                     "terms_to_apply": (["periodic (ICD form)", "j2", "shapiro", "sagnac"]
                                        if clock_convention != "igs" else
                                        ["periodic (state form -2 r.v/c^2)", "shapiro", "sagnac"])},
        "arcs": int(sum(len(np.unique(arcs[:, j][arcs[:, j] >= 0])) for j in range(arcs.shape[1]))),
        "observed_satellites": [s for j, s in enumerate(sv) if (arcs[:, j] >= 0).any()],
        "cycle_slips": sim["slips"],
        "zenith_wet_delay_relative_humidity": RELATIVE_HUMIDITY,
    }
    manifest["products"]["precise_clock_convention"] = clock_convention
    manifest["products"]["analysis_centre"]["code"] = AGENCY
    os.chmod(write_json(manifest, out / "scenario.json"), 0o644)
    return manifest
