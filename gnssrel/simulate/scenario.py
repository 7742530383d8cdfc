"""The invented demo scenario: constellation, sites, receivers and their faults, all seeded.

Everything here is fiction: the Skerrish Coast, its two survey marks, the
"Ternwave" receivers and the "Kelvarre Orbit Analysis" centre do not exist.
The numbers are chosen to look like a real 2025 day (orbit sizes, clock
offsets, group delays, ionosphere) so that every stage of gnssrel has
something realistic to chew on.

Each satellite has ONE continuous reference orbit (broadcast elements at the
scenario start, ``t_ref``) and one continuous clock polynomial; the broadcast
records written to the navigation file are that same orbit and polynomial
re-expressed at each toe/toc (see :func:`reexpress`), so every record agrees
with every other one exactly.  The truth adds small smooth errors to both.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from gnssrel.constants import SYSTEMS
from gnssrel.geodesy import geodetic_to_ecef
from gnssrel.signals import RINEX_BAND_HZ
from gnssrel.timescales import SYSTEM_TIME_SCALE, seconds_between, to_week_seconds

DEFAULT_SEED = 20250611
DEFAULT_START_GPST = np.datetime64("2025-06-11T10:00:00", "ns")
LEAP_SECONDS = 18  # GPST - UTC in 2025 (IERS Bulletin C: none since 2017-01-01; from memory)

# Observed signals per system: (code, phase, strength) for the two frequencies.
SIGNALS = {"G": (("C1C", "L1C", "S1C"), ("C2W", "L2W", "S2W")),
           "E": (("C1C", "L1C", "S1C"), ("C5Q", "L5Q", "S5Q")),
           "C": (("C2I", "L2I", "S2I"), ("C6I", "L6I", "S6I"))}
# Carrier frequencies, Hz, of the observed bands: GPS L1/L2, Galileo E1/E5a, BeiDou B1I/B3I
# (gnssrel.signals, with their sources), keyed by RINEX band digit in the order of SIGNALS.
FREQUENCY_HZ = {c: {s[0][1]: RINEX_BAND_HZ[c][s[0][1]] for s in signals} for c, signals in SIGNALS.items()}

# How often each system's broadcast records are issued (s) and their time-of-transmission lead.
ISSUE_INTERVAL_S = {"G": 7200, "E": 3600, "C": 3600}
TRANSMISSION_LEAD_S = {"G": 7200, "E": 600, "C": 3600}
NAV_TYPE = {"G": "LNAV", "E": "FNAV", "C": "D1"}
GALILEO_FNAV_DATA_SOURCES = 258  # bits 1 (F/NAV E5a-I) and 8 (clock for E5a,E1): RINEX 3.04 Table A8

# Broadcast ionosphere (Klobuchar) coefficients written to the header and used by the truth:
# alpha s, s/semicircle, s/semicircle^2, s/semicircle^3; beta s, ... (IS-GPS-200 20.3.3.5.1.7).
KLOBUCHAR_ALPHA = (1.2107e-08, 7.4506e-09, -5.9605e-08, -5.9605e-08)
KLOBUCHAR_BETA = (9.6256e+04, 3.2768e+04, -1.9661e+05, -1.3107e+05)
NEQUICK_AI = (6.4250e+01, 3.9063e-01, 1.6632e-02)  # header only; the truth uses Klobuchar


@dataclass(frozen=True)
class Site:
    marker: str
    place: str
    lat_deg: float
    lon_deg: float
    height_m: float
    geoid_separation_m: float

    @property
    def position_ecef_m(self) -> np.ndarray:
        return geodetic_to_ecef(np.radians(self.lat_deg), np.radians(self.lon_deg), self.height_m)


@dataclass(frozen=True)
class Receiver:
    marker: str
    site: Site
    receiver_type: str
    firmware: str
    serial: str
    antenna_type: str
    clock_offset_s: float          # receiver clock offset at t_ref
    clock_drift_s_per_s: float
    inter_system_bias_s: dict      # added to the receiver clock per system (G = 0)
    periodic_term_mode: str        # how the firmware uses F e sqrtA sinE: "applied" or "omitted"


@dataclass
class Scenario:
    seed: int
    start: np.datetime64
    hours: float
    interval_s: float
    reference: pd.DataFrame         # one row per satellite: orbit at t_ref (contract names)
    clock: pd.DataFrame             # sv, af0_s, af1, af2 at t_ref, group delays
    errors: dict                    # smooth orbit/clock error parameters (truth - broadcast)
    sites: list
    receivers: list
    precise_datum: tuple            # (offset s, drift s/s) of the precise product's time scale
    rng_state: dict = field(default_factory=dict)
    reference_time: np.datetime64 | None = None  # t_ref of orbits/clocks; None: ``start``

    @property
    def t_ref(self) -> np.datetime64:
        """The instant of the reference orbits and clock polynomials (the truth's time origin).
        A campaign moves ``start`` to each day's log window and keeps ``t_ref`` on its first day."""
        return self.start if self.reference_time is None else self.reference_time

    @property
    def end(self) -> np.datetime64:
        return self.start + np.timedelta64(round(self.hours * 3600e9), "ns")

    @property
    def epochs(self) -> np.ndarray:
        n = round(self.hours * 3600 / self.interval_s)
        step = np.timedelta64(round(self.interval_s * 1e9), "ns")
        return self.start + step * np.arange(n)

    @property
    def sv(self) -> np.ndarray:
        return self.reference["sv"].to_numpy()


def _constellation(rng: np.random.Generator) -> list[dict]:
    """Invented orbits: 24 GPS in 6 planes, 18 Galileo in 3, 6 BeiDou MEO and 3 IGSO."""
    sats = []

    def add(sv, sqrt_a, e, inc_deg, node_deg, arg_lat_deg):
        sats.append({"sv": sv, "sqrt_a": sqrt_a, "e": e, "inc": np.radians(inc_deg),
                     "node": None if node_deg is None else np.radians(node_deg),
                     "arg_lat": np.radians(arg_lat_deg)})

    prn = iter([1, 2, 3, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 17, 18, 19, 20, 21, 22, 24, 25, 26])
    for plane in range(6):
        for slot in range(4):
            e = rng.uniform(0.002, 0.018)
            add(f"G{next(prn):02d}", rng.normal(5153.65, 0.05), e, rng.normal(55.0, 0.6),
                60.0 * plane + rng.normal(0, 1.5), 90.0 * slot + 15.0 * plane + rng.normal(0, 4))
    # G15: the most eccentric GPS orbit, e = 0.02 as the most eccentric real ones (from memory, common
    # knowledge of the constellation): periodic term amplitude F e sqrt(A) = 4.44e-10 * 0.02 * 5153.65 = 45.8 ns.
    sats[13]["e"] = 0.02
    prn_e = iter([1, 2, 3, 4, 5, 7, 8, 9, 10, 11, 12, 13, 15, 19, 21, 24, 26, 27])
    for plane in range(3):
        for slot in range(6):
            add(f"E{next(prn_e):02d}", rng.normal(5440.61, 0.03), rng.uniform(0.0002, 0.001),
                rng.normal(56.0, 0.3), 120.0 * plane + rng.normal(0, 1.0),
                60.0 * slot + 20.0 * plane + rng.normal(0, 3))
    # Galileo e 0.0002-0.001 as the nominal constellation (the eccentric E14/E18 are not in the demo)
    for k, p in enumerate((19, 20, 21, 22, 23, 24)):
        add(f"C{p}", rng.normal(5282.62, 0.04), rng.uniform(0.001, 0.005), rng.normal(55.0, 0.4),
            120.0 * (k // 2) + 40.0, 180.0 * (k % 2) + 45.0 * (k // 2) + rng.normal(0, 3))
    for k, p in enumerate((38, 39, 40)):
        add(f"C{p}", rng.normal(6493.45, 0.05), rng.uniform(0.001, 0.005), rng.normal(55.0, 0.5),
            None, 120.0 * k + rng.normal(0, 3))
    return sats


def _reference_elements(sats, t_ref, site_lon_deg, rng) -> pd.DataFrame:
    """Broadcast-style elements at toe = t_ref (contract column names), one row per satellite."""
    rows = []
    for s in sats:
        letter = s["sv"][0]
        const = SYSTEMS[letter]
        scale = SYSTEM_TIME_SCALE[letter]
        week, sow = to_week_seconds(np.array([t_ref]), scale)
        omega = rng.uniform(-np.pi, np.pi)                      # argument of perigee
        # IGSO: ascending node over the sites' longitude band so the figure-8 is visible.
        node_ecef = np.radians(site_lon_deg + 95.0 + 120.0 * (int(s["sv"][1:]) - 38)) \
            if s["node"] is None else s["node"]
        u0 = s["arg_lat"]
        nu0 = u0 - omega
        e = s["e"]
        E0 = 2 * np.arctan(np.sqrt((1 - e) / (1 + e)) * np.tan(nu0 / 2))
        M0 = E0 - e * np.sin(E0)
        rows.append({
            "sv": s["sv"], "toe": t_ref, "toc": t_ref, "week": int(week[0]), "toe_sow_s": float(sow[0]),
            "sqrt_a_sqrt_m": s["sqrt_a"], "eccentricity": e, "inclination_rad": s["inc"],
            "mean_anomaly_rad": _wrap(M0), "perigee_argument_rad": omega,
            "omega0_rad": _wrap(node_ecef + const.omega_earth_rad_s * float(sow[0])),
            "delta_n_rad_per_s": rng.uniform(3.5e-9, 5.5e-9),
            "omega_dot_rad_per_s": rng.normal(-8.1e-9, 2e-10),
            "idot_rad_per_s": rng.normal(0.0, 2.5e-10),
            "cuc_rad": rng.normal(0, 3e-6), "cus_rad": rng.normal(0, 4e-6),
            "crc_m": rng.normal(220.0, 60.0), "crs_m": rng.normal(0, 60.0),
            "cic_rad": rng.normal(0, 8e-8), "cis_rad": rng.normal(0, 8e-8),
        })
    return pd.DataFrame(rows)


def _wrap(angle):
    return (np.asarray(angle) + np.pi) % (2 * np.pi) - np.pi


def _clocks(sv, rng) -> pd.DataFrame:
    """Clock polynomials at t_ref and group delays, quantized like the broadcast fields."""
    n = len(sv)
    letter = np.array([s[0] for s in sv])
    af0 = rng.uniform(-6e-4, 6e-4, n)
    af1 = np.where(letter == "C", rng.normal(0, 3e-11, n), rng.normal(0, 6e-12, n))
    lsb = 2.0**-31  # IS-GPS-200 Table 20-I T_GD scale (BeiDou uses 0.1 ns; taken alike here)
    q = lambda x: np.round(x / lsb) * lsb
    return pd.DataFrame({
        "sv": sv, "af0_s": af0, "af1_s_per_s": af1, "af2_s_per_s2": np.zeros(n),
        "tgd_s": q(rng.uniform(-1.2e-8, 6e-9, n)),            # GPS L1/L2 P(Y)
        "bgd_e5a_e1_s": q(rng.uniform(-4e-9, 4e-9, n)),       # Galileo
        "bgd_e5b_e1_s": q(rng.uniform(-4e-9, 4e-9, n)),
        "tgd1_b1_b3_s": np.round(rng.uniform(-1.5e-8, 1.5e-8, n), 10),  # BeiDou, 0.1 ns
        "tgd2_b2_b3_s": np.round(rng.uniform(-1.5e-8, 1.5e-8, n), 10),
    })


def _errors(sv, rng) -> dict:
    """Smooth truth-minus-broadcast errors: decimetre orbits, ~0.5 ns clocks (common practice:
    MSH2015 quotes 0.7 m SISRE for GPS broadcast; these are deliberately a little better)."""
    n = len(sv)
    return {
        "orbit_amplitude_m": rng.normal(0, 0.25, (n, 3, 2)),
        "orbit_period_s": rng.uniform(4 * 3600, 14 * 3600, (n, 3, 2)),
        "orbit_phase_rad": rng.uniform(0, 2 * np.pi, (n, 3, 2)),
        "clock_offset_s": rng.normal(0, 0.25e-9, n),
        "clock_amplitude_s": rng.uniform(0.2e-9, 0.6e-9, n),
        "clock_period_s": rng.uniform(3 * 3600, 10 * 3600, n),
        "clock_phase_rad": rng.uniform(0, 2 * np.pi, n),
    }


def build_scenario(seed: int = DEFAULT_SEED, start=DEFAULT_START_GPST, hours: float = 3.0,
                   interval_s: float = 30.0) -> Scenario:
    """The whole invented scenario, reproducible from ``seed``."""
    rng = np.random.default_rng(seed)
    start = np.datetime64(start, "ns")
    sites = [
        Site("KVRP", "Kelvarre Point, Skerrish Coast", -38.21437, -27.53208, 41.32, 17.85),
        Site("SLMB", "Saltmere Bay, Skerrish Coast", -38.06115, -27.29764, 12.71, 17.62),
    ]
    ref = _reference_elements(_constellation(rng), start, sites[0].lon_deg, rng)
    sv = ref["sv"].to_numpy()
    receivers = [
        Receiver("KVRP", sites[0], "TERNWAVE TW-820", "4.2.1", "TW8200417", "TWA-40",
                 clock_offset_s=2.4e-7, clock_drift_s_per_s=1.5e-12,
                 inter_system_bias_s={"G": 0.0, "E": 3.1e-9, "C": -12.4e-9},
                 periodic_term_mode="applied"),
        Receiver("SLMB", sites[1], "TERNWAVE TW-820", "4.3.0-beta", "TW8200981", "TWA-40",
                 clock_offset_s=-3.1e-4, clock_drift_s_per_s=4.0e-9,
                 inter_system_bias_s={"G": 0.0, "E": -1.8e-9, "C": 9.6e-9},
                 periodic_term_mode="omitted"),
    ]
    return Scenario(seed=seed, start=start, hours=float(hours), interval_s=float(interval_s),
                    reference=ref, clock=_clocks(sv, rng), errors=_errors(sv, rng),
                    sites=sites, receivers=receivers, precise_datum=(2.1e-9, 8.0e-14))


def reexpress(reference: pd.DataFrame, clock: pd.DataFrame, toe_gpst: np.ndarray,
              letter: str) -> pd.DataFrame:
    """Broadcast records of one system at the given toe (= toc) instants, contract columns.

    The orbit and clock are the satellite's single reference orbit/polynomial, moved to the new
    epoch: M0 += n dt, i0 += IDOT dt, Omega0 per the Table 20-IV node equation, af0/af1 by the
    polynomial.  One row per (satellite, toe), sorted by (sv, toc).
    """
    ref = reference[reference["sv"].str[0] == letter].reset_index(drop=True)
    clk = clock.set_index("sv").loc[ref["sv"]].reset_index()
    const = SYSTEMS[letter]
    scale = SYSTEM_TIME_SCALE[letter]
    toe = np.asarray(toe_gpst, dtype="datetime64[ns]")
    n_sat, n_rec = len(ref), len(toe)
    rep = lambda col: np.repeat(ref[col].to_numpy(), n_rec)
    toe_all = np.tile(toe, n_sat)
    dt = seconds_between(toe_all, rep("toe"))
    week, sow = to_week_seconds(toe_all, scale)
    a = rep("sqrt_a_sqrt_m") ** 2
    n = np.sqrt(const.gm_m3_s2 / a**3) + rep("delta_n_rad_per_s")
    node_ecef_ref = rep("omega0_rad") - const.omega_earth_rad_s * rep("toe_sow_s")
    out = pd.DataFrame({"sv": np.repeat(ref["sv"].to_numpy(), n_rec), "toc": toe_all, "toe": toe_all})
    af0, af1, af2 = (np.repeat(clk[c].to_numpy(), n_rec) for c in ("af0_s", "af1_s_per_s", "af2_s_per_s2"))
    out["clock_bias_s"] = af0 + af1 * dt + af2 * dt**2
    out["clock_drift_s_per_s"] = af1 + 2 * af2 * dt
    out["clock_drift_rate_s_per_s2"] = af2
    # RINEX 3 writes the Galileo week continuous with the GPS week (RINEX 3.04 Table A8).
    out["week"] = week + 1024 if letter == "E" else week
    out["toe_sow_s"] = sow
    out["mean_anomaly_rad"] = _wrap(rep("mean_anomaly_rad") + n * dt)
    out["inclination_rad"] = rep("inclination_rad") + rep("idot_rad_per_s") * dt
    out["omega0_rad"] = _wrap(node_ecef_ref + (rep("omega_dot_rad_per_s") - const.omega_earth_rad_s) * dt
                              + const.omega_earth_rad_s * sow)
    for col in ("sqrt_a_sqrt_m", "eccentricity", "perigee_argument_rad", "delta_n_rad_per_s",
                "omega_dot_rad_per_s", "idot_rad_per_s", "cuc_rad", "cus_rad", "crc_m", "crs_m",
                "cic_rad", "cis_rad"):
        out[col] = rep(col)
    lead = np.timedelta64(TRANSMISSION_LEAD_S[letter], "s")
    out["transmission_time"] = toe_all - lead
    out["nav_type"] = NAV_TYPE[letter]
    out["health"] = 0
    issue = (seconds_between(toe_all, DEFAULT_START_GPST) // ISSUE_INTERVAL_S[letter]).astype(int)
    out["iode"] = (issue + 40) % 256
    if letter == "G":
        out["tgd_s"] = np.repeat(clk["tgd_s"].to_numpy(), n_rec)
        out["iodc"] = out["iode"]
        out["fit_interval_h"] = 4.0
        out["accuracy_m"] = 2.0
    elif letter == "E":
        out["bgd_e5a_e1_s"] = np.repeat(clk["bgd_e5a_e1_s"].to_numpy(), n_rec)
        out["bgd_e5b_e1_s"] = np.repeat(clk["bgd_e5b_e1_s"].to_numpy(), n_rec)
        out["data_sources"] = GALILEO_FNAV_DATA_SOURCES
        out["accuracy_m"] = 3.12
    else:
        out["tgd1_b1_b3_s"] = np.repeat(clk["tgd1_b1_b3_s"].to_numpy(), n_rec)
        out["tgd2_b2_b3_s"] = np.repeat(clk["tgd2_b2_b3_s"].to_numpy(), n_rec)
        out["aodc"] = 1
        out["iode"] = 1
        out["is_geo"] = False
        out["accuracy_m"] = 2.0
    return out.sort_values(["sv", "toc"], kind="stable").reset_index(drop=True)


def issue_times(scn: Scenario, letter: str) -> np.ndarray:
    """GPST toe/toc instants of a system's records: on the system's own clock boundaries,
    covering the scenario with 2 h (GPS) or 1 h (others) of margin on each side."""
    step = ISSUE_INTERVAL_S[letter]
    margin = 7200 if letter == "G" else 3600
    offset = 14 if SYSTEM_TIME_SCALE[letter] == "BDT" else 0   # BDT = GPST - 14 s
    t0 = seconds_between(scn.start, np.datetime64("1980-01-06", "ns")) - margin - offset
    t1 = seconds_between(scn.end, np.datetime64("1980-01-06", "ns")) + margin - offset
    k = np.arange(np.ceil(t0 / step), np.floor(t1 / step) + 1)
    return np.datetime64("1980-01-06", "ns") + ((k * step + offset) * 1e9).astype("timedelta64[ns]")
