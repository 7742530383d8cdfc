"""Signal-in-space range error (SISRE): broadcast orbit and clock errors as a user sees them.

The global-average form of Montenbruck, Steigenberger and Hauschild (2015), "Broadcast versus
precise ephemerides: a multi-GNSS perspective", GPS Solutions 19:321-333, section on SISRE:

    SISRE       = sqrt( (w_R R - c dt)^2 + w_AC^2 (A^2 + C^2) )
    SISRE_orbit = sqrt( w_R^2 R^2 + w_AC^2 (A^2 + C^2) )
    SISRE_clock = |c dt|

with R, A, C the broadcast-minus-precise radial, along- and cross-track position errors and dt
the broadcast-minus-precise clock error (after removing a common offset per epoch and system:
the datum of :mod:`gnssrel.clocks.datum`; positive R and positive c dt cancel for a user below
the satellite).  The weights average the line-of-sight projection over the Earth the satellite
sees, so they depend on the orbit altitude (:data:`SISRE_WEIGHTS`).

Statistics: per satellite the RMS over its epochs; per system the RMS over every satellite and
epoch ("global average", as the paper gives it) and the median of the satellites' RMS.
For context, the paper's figures for 2013-14 (:data:`PUBLISHED_2013_14_M`).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from gnssrel.constants import C_M_S

SISRE_WEIGHTS = {"G": (0.98, 1 / 49), "R": (0.98, 1 / 45), "E": (0.98, 1 / 61),
                 "C_MEO": (0.98, 1 / 54), "C_IGSO_GEO": (0.99, 1 / 126), "J": (0.99, 1 / 126)}
"""(w_R, w_AC^2) per orbit class: Montenbruck et al. 2015, GPS Solutions 19:321, Table 2
(from memory: GPS MEO 0.98, 1/49; GLONASS 0.98, 1/45; Galileo 0.98, 1/61; BeiDou MEO 0.98, 1/54;
BeiDou IGSO/GEO and QZSS 0.99, 1/126)."""

PUBLISHED_2013_14_M = {"G": 0.7, "C": 1.5, "E": 1.6, "R": 1.9, "J": 0.6}
"""Global average SISRE 2013-14 of the same paper (abstract; published), for context only."""

SISRE_SOURCE = ("Montenbruck, Steigenberger, Hauschild (2015), GPS Solutions 19:321-333: "
                "sqrt((w_R R - c dt)^2 + w_AC^2 (A^2 + C^2)); weights from memory")

PER_EPOCH_COLUMNS = ("time", "sv", "system", "radial_m", "along_m", "cross_m", "clock_m",
                     "sisre_orbit_m", "sisre_clock_m", "sisre_m")

BEIDOU_MEO_MIN_RADIUS_M = 30_000e3
"""A BeiDou satellite whose precise radius stays below this is MEO (~27 900 km); IGSO/GEO ~42 160 km."""


def weights(sv, radius_m=None) -> tuple[np.ndarray, np.ndarray]:
    """(w_R, w_AC) per satellite; BeiDou told MEO from IGSO/GEO by ``radius_m`` (else by PRN:
    C01-C05 GEO, C06-C10, C13, C16, C38-C40, C59-C62 IGSO/GEO, from memory)."""
    sv = np.asarray(sv).astype(str)
    w_r = np.full(sv.shape, np.nan)
    w_ac2 = np.full(sv.shape, np.nan)
    high_prns = {1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 13, 16, 31, 38, 39, 40, 56, 59, 60, 61, 62}
    for k, name in enumerate(sv):
        letter = name[0]
        if letter == "C":
            if radius_m is not None and np.isfinite(radius_m[k]):
                high = radius_m[k] > BEIDOU_MEO_MIN_RADIUS_M
            else:
                high = int(name[1:]) in high_prns
            key = "C_IGSO_GEO" if high else "C_MEO"
        else:
            key = letter
        if key in SISRE_WEIGHTS:
            w_r[k], w_ac2[k] = SISRE_WEIGHTS[key]
    return w_r, np.sqrt(w_ac2)


def per_epoch_sisre(orbit: pd.DataFrame, clock: pd.DataFrame | None, radius_m: dict | None = None,
                    remove_mean_radial: bool = False) -> pd.DataFrame:
    """One row per epoch and satellite with ``PER_EPOCH_COLUMNS``.

    ``orbit``: :func:`gnssrel.orbits.compare.per_epoch_differences` (time, sv, radial_m,
    along_m, cross_m; broadcast minus precise).  ``clock``: time, sv and ``clock_m`` = c times
    the broadcast-minus-precise clock after the per-epoch datum, or None (clock part NaN, the
    total then equal to the orbit part is not given: NaN).  Only pairs present in ``orbit``.
    ``radius_m``: {sv: mean precise radius} to class BeiDou satellites.  ``remove_mean_radial``:
    subtract each satellite's mean radial difference first (a stand-in for the antenna offset when
    no ANTEX file is given; it removes any other constant radial bias too).
    """
    table = orbit[["time", "sv", "system", "radial_m", "along_m", "cross_m"]].copy()
    if remove_mean_radial:
        table["radial_m"] = table["radial_m"] - table.groupby("sv")["radial_m"].transform("mean")
    if clock is not None and len(clock):
        table = table.merge(clock[["time", "sv", "clock_m"]], on=["time", "sv"], how="left")
    else:
        table["clock_m"] = np.nan
    sv = table["sv"].to_numpy().astype(str)
    radius = None if radius_m is None else np.array([radius_m.get(s, np.nan) for s in sv])
    w_r, w_ac = weights(sv, radius)
    r, a, c, dt = (table[k].to_numpy(dtype=float) for k in ("radial_m", "along_m", "cross_m", "clock_m"))
    cross_part = w_ac * w_ac * (a * a + c * c)
    table["sisre_orbit_m"] = np.sqrt(w_r * w_r * r * r + cross_part)
    table["sisre_clock_m"] = np.abs(dt)
    table["sisre_m"] = np.sqrt((w_r * r - dt) ** 2 + cross_part)
    return table[list(PER_EPOCH_COLUMNS)]


def _rms(x: pd.Series) -> float:
    x = x.to_numpy(dtype=float)
    x = x[np.isfinite(x)]
    return float(np.sqrt(np.mean(x * x))) if x.size else float("nan")


def summarize_sisre(per_epoch: pd.DataFrame) -> tuple[pd.DataFrame, dict]:
    """Per-satellite RMS table and the summary {letter: {"total_m", "orbit_m", "clock_m", ...}}.

    ``total_m`` etc. are the global averages (RMS over every satellite and epoch of the system);
    ``median_satellite_total_m`` the median of the per-satellite RMS; ``published_2013_14_m``
    the paper's figure for context.
    """
    rows = []
    for sv, group in per_epoch.groupby("sv", sort=True):
        rows.append({"sv": sv, "system": sv[0], "n_epochs": len(group),
                     "n_clock_epochs": int(group["clock_m"].notna().sum()),
                     "sisre_m": _rms(group["sisre_m"]), "sisre_orbit_m": _rms(group["sisre_orbit_m"]),
                     "sisre_clock_m": _rms(group["sisre_clock_m"]),
                     "mean_radial_m": float(group["radial_m"].mean())})
    table = pd.DataFrame(rows, columns=["sv", "system", "n_epochs", "n_clock_epochs", "sisre_m",
                                        "sisre_orbit_m", "sisre_clock_m", "mean_radial_m"])
    summary = {}
    for letter, group in per_epoch.groupby("system", sort=False):
        sats = table[table["system"] == letter]
        summary[letter] = {"total_m": _rms(group["sisre_m"]), "orbit_m": _rms(group["sisre_orbit_m"]),
                           "clock_m": _rms(group["sisre_clock_m"]), "n_sat": len(sats),
                           "n_samples": int(group["sisre_m"].notna().sum()),
                           "median_satellite_total_m": float(sats["sisre_m"].median()),
                           "median_mean_radial_m": float(sats["mean_radial_m"].median()),
                           "published_2013_14_m": PUBLISHED_2013_14_M.get(letter)}
    return table, summary


def clock_errors_m(clock_table: pd.DataFrame) -> pd.DataFrame:
    """(time, sv, clock_m) from the table of :func:`gnssrel.clocks.compare.compare_clocks`:
    its residual is precise - broadcast - datum, so the broadcast-minus-precise error is minus it."""
    return pd.DataFrame({"time": clock_table["time"].to_numpy(), "sv": clock_table["sv"].to_numpy(),
                         "clock_m": -clock_table["residual_ns"].to_numpy(dtype=float) * 1e-9 * C_M_S})


def sisre_by_system(orbit: pd.DataFrame, clock_table: pd.DataFrame | None, radius_m: dict | None = None) -> dict:
    """The summary block {letter: {"total_m", "orbit_m", "clock_m", ...}} from the per-epoch orbit
    differences and a clock comparison table (``residual_ns``; None: orbit part only)."""
    clock = clock_errors_m(clock_table) if clock_table is not None and len(clock_table) else None
    return summarize_sisre(per_epoch_sisre(orbit, clock, radius_m))[1]
