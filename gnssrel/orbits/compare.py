"""Broadcast against precise orbits: per epoch, and per satellite (RMS in 3D and radial / along / cross).

The difference d = r_broadcast - r_precise (ECEF) is projected on the orbital
frame of the precise state: radial e_R = r / |r|, cross-track e_C = r x v / |r x v|
with v the inertial velocity (v_ecef + omega x r, so that "along" follows the
orbit rather than the Earth-fixed track), along-track e_A = e_C x e_R.
No antenna-offset correction here: broadcast orbits refer to the antenna phase
centre, SP3 to the centre of mass (a radial bias of up to ~1 m for GPS, common
practice); the radial RMS carries it unless the precise states were first moved to
the phase centre (:func:`gnssrel.orbits.antenna.to_phase_centre`, ``--antex``).
The user-range view of the same differences: :mod:`gnssrel.orbits.sisre`.

The per-satellite table gives the mean radial difference (``mean_radial_m``) beside the
RMS: the antenna offset is a constant radial bias (MOJN nav against GRG final orbits,
2020-06-25: G01, G03, G06, G08, G09, G10 about -1.0 m, G02, G05, G07 about 0, Galileo
-0.7 to -1.0 m, GLONASS about -2 m; measured, ``tests/test_orbit_differences.py``).
:func:`per_epoch_differences` gives the long table behind it, one row per epoch and satellite.

Only epochs where both sides have a position count; ``coverage`` is the share
of the precise epochs (with a precise position) where the broadcast side has one.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr

from gnssrel.orbits.frames import OMEGA_ECI_RAD_S, inertial_velocity

PER_EPOCH_COLUMNS = ("time", "sv", "system", "radial_m", "along_m", "cross_m", "difference_3d_m")
PER_SATELLITE_COLUMNS = ("sv", "system", "n_epochs", "n_precise_epochs", "coverage",
                         "rms_3d_m", "rms_radial_m", "rms_along_m", "rms_cross_m",
                         "mean_radial_m", "max_3d_m")


def orbital_frame_components(difference_m: np.ndarray, position_m: np.ndarray,
                             velocity_ecef_m_per_s: np.ndarray) -> np.ndarray:
    """Radial, along, cross components (..., 3) of ``difference_m`` (..., 3)."""
    r = position_m
    v = inertial_velocity(r, velocity_ecef_m_per_s, OMEGA_ECI_RAD_S)
    e_r = r / np.linalg.norm(r, axis=-1, keepdims=True)
    h = np.cross(r, v)
    e_c = h / np.linalg.norm(h, axis=-1, keepdims=True)
    e_a = np.cross(e_c, e_r)
    return np.stack([np.einsum("...i,...i->...", difference_m, e) for e in (e_r, e_a, e_c)], -1)


def _rms(values: np.ndarray, mask: np.ndarray) -> np.ndarray:
    count = mask.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.sqrt(np.where(mask, values * values, 0.0).sum(axis=0) / count)


def _aligned_differences(broadcast_ds: xr.Dataset, precise_ds: xr.Dataset):
    """(times, svs, both (time, sv) mask, have_p mask, rac (time, sv, 3) zero where not both)."""
    b, p = xr.align(broadcast_ds[["position_ecef_m"]], precise_ds[["position_ecef_m",
                    "velocity_ecef_m_per_s"]], join="inner")
    rb = b["position_ecef_m"].transpose("time", "sv", "axis").values
    rp = p["position_ecef_m"].transpose("time", "sv", "axis").values
    vp = p["velocity_ecef_m_per_s"].transpose("time", "sv", "axis").values
    have_p = np.isfinite(rp).all(axis=-1)
    both = have_p & np.isfinite(rb).all(axis=-1) & np.isfinite(vp).all(axis=-1)
    diff = np.where(both[..., None], rb - rp, 0.0)
    rac = orbital_frame_components(diff, np.where(both[..., None], rp, 1.0),
                                   np.where(both[..., None], vp, 1.0))
    return b["time"].values, [str(s) for s in b["sv"].values], both, have_p, rac


def per_epoch_differences(broadcast_ds: xr.Dataset, precise_ds: xr.Dataset) -> pd.DataFrame:
    """Broadcast minus precise position per epoch and satellite, in the orbital frame.

    A long table with ``PER_EPOCH_COLUMNS`` (time GPST, sv, system letter, radial_m, along_m,
    cross_m, difference_3d_m), only the (epoch, satellite) pairs where both sides have a
    position; sorted by satellite, then time.  The radial column holds the antenna offset
    (broadcast: phase centre, precise: centre of mass) as a constant bias.
    """
    times, svs, both, _, rac = _aligned_differences(broadcast_ds, precise_ds)
    i_sv, i_t = np.nonzero(both.T)                  # satellite-major order
    picked = rac[i_t, i_sv]
    sv = np.asarray(svs, dtype=object)[i_sv]
    return pd.DataFrame({"time": times[i_t], "sv": sv, "system": np.array([s[0] for s in svs], dtype=object)[i_sv],
                         "radial_m": picked[:, 0], "along_m": picked[:, 1], "cross_m": picked[:, 2],
                         "difference_3d_m": np.linalg.norm(picked, axis=-1)}, columns=list(PER_EPOCH_COLUMNS))


def compare_with_precise(broadcast_ds: xr.Dataset, precise_ds: xr.Dataset):
    """Per-satellite statistics and the summary dictionary of the ``orbits --precise`` command.

    Both Datasets follow the state-history contract; they are aligned on their
    common times and satellites.  Returns (DataFrame with ``PER_SATELLITE_COLUMNS``,
    summary {"by_system": {letter: {"n_sat", "median_rms_3d_m", "max_rms_3d_m",
    "median_coverage", "median_mean_radial_m"}}, "satellites": {sv: {"n_epochs", "rms_3d_m", "rms_radial_m",
    "rms_along_m", "rms_cross_m", "coverage", "mean_radial_m"}}}).  ``mean_radial_m`` is the
    mean of the per-epoch radial difference (the antenna offset's bias), apart from the RMS.
    """
    _, svs, both, have_p, rac = _aligned_differences(broadcast_ds, precise_ds)
    norm = np.linalg.norm(rac, axis=-1)              # the frame is orthonormal: |RAC| = |d|
    n_epochs, n_precise = both.sum(axis=0), have_p.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        coverage = n_epochs / n_precise
        mean_radial = np.where(both, rac[..., 0], 0.0).sum(axis=0) / n_epochs
    table = pd.DataFrame({
        "sv": svs, "system": [s[0] for s in svs], "n_epochs": n_epochs, "n_precise_epochs": n_precise,
        "coverage": coverage, "rms_3d_m": _rms(norm, both), "rms_radial_m": _rms(rac[..., 0], both),
        "rms_along_m": _rms(rac[..., 1], both), "rms_cross_m": _rms(rac[..., 2], both),
        "mean_radial_m": mean_radial,
        "max_3d_m": np.where(n_epochs > 0, np.where(both, norm, 0.0).max(axis=0, initial=0.0), np.nan),
    }, columns=list(PER_SATELLITE_COLUMNS))
    table = table[table["n_precise_epochs"] > 0].reset_index(drop=True)
    return table, summarize(table)


def summarize(table: pd.DataFrame) -> dict:
    """The summary dictionary from the per-satellite table (satellites with epochs only)."""
    used = table[table["n_epochs"] > 0]
    by_system = {}
    for letter, group in used.groupby("system", sort=False):
        by_system[letter] = {"n_sat": len(group),
                             "median_rms_3d_m": float(group["rms_3d_m"].median()),
                             "max_rms_3d_m": float(group["rms_3d_m"].max()),
                             "median_coverage": float(group["coverage"].median()),
                             "median_mean_radial_m": float(group["mean_radial_m"].median())}
    satellites = {}
    for row in table.itertuples(index=False):
        satellites[row.sv] = {"n_epochs": int(row.n_epochs), "rms_3d_m": float(row.rms_3d_m),
                              "rms_radial_m": float(row.rms_radial_m),
                              "rms_along_m": float(row.rms_along_m),
                              "rms_cross_m": float(row.rms_cross_m),
                              "coverage": float(row.coverage),
                              "mean_radial_m": float(row.mean_radial_m)}
    return {"by_system": by_system, "satellites": satellites}
