"""An invented campaign: several receivers on the Skerrish Coast, one log each per day, seeded.

The satellites are the demo scenario's (same seed, same orbits): one continuous reference orbit
and clock per satellite at the first day's log start (``Scenario.t_ref``), so the days follow on
from each other.  Each day has its own log window (``start`` moves, ``t_ref`` stays), its own
navigation file, SP3 and RINEX clock, and each station its own observation log, fixes and clock
table.  Even-numbered stations (KVRP first) carry the correct firmware, odd-numbered ones (SLMB
first) the faulty one that omits the periodic term, so about half the receivers are faulty.

Layout under the output folder: one folder per day (``2025-162/``) holding that day's files,
``campaign.csv`` (station, day, obs, nav, precise, fixes, clocks; paths relative to the folder,
several files separated by ``;``) and ``scenario.json`` (the truth: each receiver's firmware).
Each station-day draws its noise from its own generator (seed, day, station), so a file does
not depend on how many other stations or days were asked for.
"""

from __future__ import annotations

import dataclasses
import os
from pathlib import Path

import numpy as np

from gnssrel.errors import GnssrelInputError
from gnssrel.io.writers import write_json
from gnssrel.simulate.generate import (
    check_span,
    creation_date,
    file_names,
    receiver_truth,
    scenario_manifest,
    write_products,
    write_receiver,
)
from gnssrel.simulate.scenario import DEFAULT_SEED, DEFAULT_START_GPST, Receiver, Site, build_scenario
from gnssrel.simulate.textfile import write_lines

DEFAULT_CAMPAIGN_HOURS = 1.0
MAX_DAYS = 366
FIRST_LOG_HOUR = 10      # logs start at 10:00 GPST (as the demo's), earlier when they would pass midnight
COUNTRY = "ZZZ"          # no country: the stations are invented
# Invented survey marks (none is a real station): marker, place, latitude, longitude (deg),
# ellipsoidal height and geoid separation (m).  The first two are the demo's.
SITES = (
    ("KVRP", "Kelvarre Point, Skerrish Coast", -38.21437, -27.53208, 41.32, 17.85),
    ("SLMB", "Saltmere Bay, Skerrish Coast", -38.06115, -27.29764, 12.71, 17.62),
    ("TWHL", "Tarnwhistle Hill, Skerrish Coast", -38.30412, -27.41876, 187.45, 17.93),
    ("BKQY", "Brackenquay, Skerrish Coast", -38.12790, -27.66035, 8.94, 17.71),
    ("FNSK", "Fennskerry Light, Skerrish Coast", -37.98263, -27.45119, 22.18, 17.49),
    ("DRMV", "Dromvale Farm, Skerrish Coast", -38.25571, -27.18342, 96.07, 17.80),
    ("QLSD", "Quillsand Spit, Skerrish Coast", -38.39128, -27.60457, 3.66, 18.02),
    ("CVNR", "Corvenna Ridge, Skerrish Coast", -38.01877, -27.12903, 241.80, 17.55),
)
MAX_STATIONS = len(SITES)
FIRMWARE = {"applied": "4.2.1", "omitted": "4.3.0-beta"}  # the demo's two firmware versions


def station_id(marker: str) -> str:
    """The nine-character station name of the RINEX long file names: marker, monument 0, receiver 0, country."""
    return f"{marker}00{COUNTRY}"


def campaign_receivers(seed: int, n_stations: int) -> list[Receiver]:
    """The campaign's receivers: even-numbered correct, odd-numbered faulty (periodic term omitted)."""
    rng = np.random.default_rng([seed, 2])
    receivers = []
    for i, row in enumerate(SITES[:n_stations]):
        site = Site(*row)
        mode = "applied" if i % 2 == 0 else "omitted"
        steered = rng.random() < 0.5    # a steered clock stays near GPST; a free one wanders (within 1 ms)
        offset = rng.normal(0, 3e-7) if steered else rng.uniform(-2e-4, 2e-4)
        drift = rng.normal(0, 2e-12) if steered else rng.uniform(-2e-9, 2e-9)
        receivers.append(Receiver(
            site.marker, site, "TERNWAVE TW-820", FIRMWARE[mode], f"TW820{rng.integers(1000, 10000):04d}",
            "TWA-40", clock_offset_s=float(offset), clock_drift_s_per_s=float(drift),
            inter_system_bias_s={"G": 0.0, "E": float(np.round(rng.normal(0, 3e-9), 12)),
                                 "C": float(np.round(rng.normal(0, 10e-9), 12))},
            periodic_term_mode=mode))
    return receivers


def day_start(day: int, hours: float) -> np.datetime64:
    """GPST start of the log window of campaign day ``day`` (0 = 2025-06-11)."""
    first = np.datetime64(DEFAULT_START_GPST, "D") + np.timedelta64(day, "D")
    start_s = round(min(FIRST_LOG_HOUR * 3600.0, (24.0 - hours) * 3600.0))
    return first.astype("datetime64[ns]") + np.timedelta64(start_s, "s")


def _day_names(scn, folder: str) -> dict:
    """The day's file names (RINEX long names), in its folder; fixes and clock tables carry the day."""
    doy = folder.replace("-", "")
    names = {}
    for key, name in file_names(scn).items():
        marker, _, kind = key.partition(":")
        if kind in ("fixes", "satellite_clocks"):
            name = f"{marker}_{doy}_{name.split('_', 1)[1]}"
        names[key] = f"{folder}/{name}"
    return names


def write_campaign(output_dir, stations: int, days: int, seed: int = DEFAULT_SEED,
                   hours: float = DEFAULT_CAMPAIGN_HOURS, interval_s: float = 30.0) -> dict:
    """Write the campaign under ``output_dir``; returns the manifest (also ``scenario.json``)."""
    if not 1 <= stations <= MAX_STATIONS:
        raise GnssrelInputError(f"--stations must be between 1 and {MAX_STATIONS}, not {stations}")
    if not 1 <= days <= MAX_DAYS:
        raise GnssrelInputError(f"--days must be between 1 and {MAX_DAYS}, not {days}")
    check_span(hours, interval_s)
    out = Path(output_dir)
    base = build_scenario(seed=seed, start=day_start(0, hours), hours=hours, interval_s=interval_s)
    receivers = campaign_receivers(seed, stations)
    base = dataclasses.replace(base, receivers=receivers, sites=[r.site for r in receivers],
                               reference_time=base.start)
    rows, day_entries, station_days, first = [], [], [], None
    for d in range(days):
        scn = dataclasses.replace(base, start=day_start(d, hours))
        iso = str(scn.start.astype("datetime64[D]"))
        year, doy = iso[:4], (scn.start.astype("datetime64[D]") - np.datetime64(iso[:4] + "-01-01")).astype(int) + 1
        folder = f"{year}-{doy:03d}"
        (out / folder).mkdir(parents=True, exist_ok=True)
        names = _day_names(scn, folder)
        date = creation_date(scn)
        ephemerides = write_products(out, scn, names, date)
        if first is None:
            first = (scn, names, ephemerides)
        day_entries.append({"day": iso, "day_of_year": int(doy), "folder": folder,
                            "start": str(scn.start.astype("datetime64[s]")),
                            "end": str(scn.end.astype("datetime64[s]")),
                            "navigation": names["navigation"], "sp3": names["sp3"], "clock": names["clock"]})
        for i, rcv in enumerate(receivers):
            rng = np.random.default_rng([seed, 1, d, i])
            entry = write_receiver(out, scn, rcv, names, date, rng)
            station_days.append({"station": station_id(rcv.marker), "marker": rcv.marker, "day": iso,
                                 "faulty": entry["faulty"], "fix_error_3d_m": entry["fix_error_3d_m"],
                                 "files": entry["files"]})
            rows.append([station_id(rcv.marker), iso, names[f"{rcv.marker}:observations"],
                         names["navigation"], f"{names['sp3']};{names['clock']}",
                         names[f"{rcv.marker}:fixes"], names[f"{rcv.marker}:satellite_clocks"]])
    write_lines(out / "campaign.csv", [",".join(r) for r in
                                       [["station", "day", "obs", "nav", "precise", "fixes", "clocks"], *rows]])
    manifest = _campaign_manifest(first, receivers, day_entries, station_days, stations, days)
    os.chmod(write_json(manifest, out / "scenario.json"), 0o644)
    return manifest


def _campaign_manifest(first, receivers, day_entries, station_days, stations, days) -> dict:
    scn, names, ephemerides = first
    manifest = scenario_manifest(scn, names, [], ephemerides)
    for c in manifest["systems"].values():
        c.pop("records")                           # per day; the navigation files say
    for key in ("start", "end", "last_epoch", "files"):
        manifest.pop(key)
    manifest["title"] = "Invented GNSS campaign for gnssrel (not real data)"
    manifest["generator"].update(stations=stations, days=days)
    manifest["days"] = day_entries
    manifest["receivers"] = [{
        "station": station_id(r.marker), "marker": r.marker, "site": r.site.marker,
        "receiver_type": r.receiver_type, "firmware": r.firmware, "serial": r.serial,
        "antenna_type": r.antenna_type, **receiver_truth(r), "clock_offset_s": r.clock_offset_s,
        "clock_drift_s_per_s": r.clock_drift_s_per_s, "inter_system_bias_s": r.inter_system_bias_s,
        "receiver_clock_reference": "each day's log start"} for r in receivers]
    manifest["faulty_receivers"] = [r.marker for r in receivers if r.periodic_term_mode != "applied"]
    manifest["correct_receivers"] = [r.marker for r in receivers if r.periodic_term_mode == "applied"]
    manifest["station_days"] = station_days
    files = [{"path": e[k], "kind": k} for e in day_entries for k in ("navigation", "sp3", "clock")]
    files += [{"path": p, "kind": k} for sd in station_days for k, p in sd["files"].items()]
    manifest["files"] = sorted(files, key=lambda f: f["path"]) + [
        {"path": "campaign.csv", "kind": "campaign_manifest"}, {"path": "scenario.json", "kind": "manifest"}]
    return manifest
