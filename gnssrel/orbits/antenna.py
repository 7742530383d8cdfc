"""Satellite antenna phase-centre offsets on state histories: centre of mass <-> phase centre.

Precise orbits (SP3) give the satellite's centre of mass; broadcast ephemerides give the
antenna phase centre of the signals each system's broadcast clock refers to (the ionosphere-free
combination of the pair below; IGS-style precise clocks refer to the same kind of pair).  The pair
per system, :data:`BROADCAST_COMBINATION` (ANTEX 1.4 frequency codes):

* GPS: L1/L2 (G01/G02), IS-GPS-200 20.3.3.3.3.2 (the clock is for the L1 P(Y)/L2 P(Y) pair);
* QZSS: L1/L2 (J01/J02), as GPS (IS-QZSS-PNT, from memory);
* Galileo: E1/E5b (E01/E07) for I/NAV, the record type the states use first; F/NAV refers to
  E1/E5a (E01/E05) (Galileo OS SIS ICD 5.1.4, from memory): :data:`RECORD_COMBINATION`, used
  where an F/NAV record serves the epoch (``nav_types`` of :func:`to_phase_centre`);
* BeiDou: B1I/B3I (C02/C06) (BDS-SIS-ICD-B1I 5.2.4.10 refers the clock to B3I and gives the B1I
  group delay, so the B1I/B3I pair is the one a dual-frequency user forms; from memory);
* GLONASS: G1/G2 (R01/R02) FDMA (the ratio f1/f2 = 9/7 for every channel, so the combination
  does not depend on the channel).

The ionosphere-free offset of a pair (f1, f2) is (f1^2 o1 - f2^2 o2) / (f1^2 - f2^2) (common
practice); IGS ANTEX files often give the same value for both frequencies of GPS and GLONASS.

A receiver's pseudorange refers to the phase centre of the signals it combines, whatever the
broadcast clock refers to: the audit moves precise (centre-of-mass) positions to the phase centre
of its own code pair (or single code), :func:`observation_offsets` / :func:`shift_to_phase_centre_m`.
The ANTEX frequency code of an observation code is the system letter and its RINEX band digit
("C1C" of GPS -> "G01", "C5Q" of Galileo -> "E05"; ANTEX 1.4 section 4, the RINEX 3 codes).

ANTEX satellite offsets are in the satellite body frame of the nominal yaw-steering attitude
(IGS axis convention, Montenbruck et al. 2015, Adv. Space Res. 56:1015, from memory): +z points
to the Earth's centre, +y along the solar-panel axis, y = z x s with s the unit vector from the
satellite to the Sun, and x = y x z completes the right-handed frame (x toward the Sun-lit side).
The Sun comes from the low-precision series of Montenbruck & Gill, Satellite Orbits (2000),
3.3.2 (ecliptic longitude and distance, ~0.1 % in distance, ~0.01 deg in direction), turned into
ECEF by the Greenwich mean sidereal angle (IAU 1982, linear term only; GPST taken for UT1, an
18 s error that turns the Sun direction by < 0.1 deg).  An offset of 1-3 m is thus placed to
well under 1 mm.  Orbit noon/midnight turns and eclipse seasons, where real attitudes leave the
nominal law, move only the x/y part (a few decimetres at most) and are not modelled.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from gnssrel.accounting import Ledger
from gnssrel.signals import frequency_hz

BROADCAST_COMBINATION = {"G": ("G01", "G02"), "J": ("J01", "J02"), "E": ("E01", "E07"),
                         "C": ("C02", "C06"), "R": ("R01", "R02")}
"""ANTEX frequency codes of the ionosphere-free pair each system's broadcast clock refers to."""

RECORD_COMBINATION = {("E", "FNAV"): ("E01", "E05")}
"""(system, record type) -> the pair of a record type whose clock refers to another pair than
:data:`BROADCAST_COMBINATION` (Galileo F/NAV: E1/E5a)."""

COMBINATION_WORDS = {"G": "GPS L1/L2", "J": "QZSS L1/L2", "E": "Galileo E1/E5b (I/NAV)",
                     "C": "BeiDou B1I/B3I", "R": "GLONASS G1/G2 (FDMA)"}
RECORD_COMBINATION_WORDS = {("E", "FNAV"): "Galileo E1/E5a (F/NAV)"}

AU_M = 149_597_870_700.0  # IAU 2012 Resolution B2 (published)


def sun_position_ecef_m(t_gpst) -> np.ndarray:
    """Low-precision Sun position (..., 3) in ECEF metres at GPST ``t_gpst`` (datetime64 array).

    Montenbruck & Gill (2000) 3.3.2, eqs. (3.43)-(3.46), with the 1.3972 deg/century precession
    term for the equinox of date; then Greenwich mean sidereal angle (IAU 1982 linear form,
    theta = 280.46061837 + 360.98564736629 d deg, d days from J2000.0).  GPST is taken for TT
    (51.184 s off) and UT1 (~18 s off): both negligible here (module docstring).
    """
    t = np.asarray(t_gpst).astype("datetime64[ns]")
    d = (t - np.datetime64("2000-01-01T12:00:00", "ns")).astype("int64") / 86_400e9
    centuries = d / 36_525.0
    m = np.radians(357.5256 + 35_999.049 * centuries)
    lam = np.radians(282.9400 + 1.3972 * centuries) + m + np.radians((6892.0 * np.sin(m)
                                                                        + 72.0 * np.sin(2 * m)) / 3600.0)
    r = (149.619e9 - 2.499e9 * np.cos(m) - 0.021e9 * np.cos(2 * m))
    eps = np.radians(23.43929111)
    x, y = r * np.cos(lam), r * np.sin(lam) * np.cos(eps)
    z = r * np.sin(lam) * np.sin(eps)
    theta = np.radians(np.mod(280.46061837 + 360.98564736629 * d, 360.0))
    c, s = np.cos(theta), np.sin(theta)
    return np.stack([c * x + s * y, -s * x + c * y, z], axis=-1)


def body_axes(position_m: np.ndarray, sun_m: np.ndarray) -> np.ndarray:
    """Nominal yaw-steering body axes (..., 3, 3): rows e_x, e_y, e_z in the frame of the inputs.

    ``position_m`` (..., 3) the satellite's centre of mass, ``sun_m`` (..., 3) the Sun, same frame.
    """
    e_z = -position_m / np.linalg.norm(position_m, axis=-1, keepdims=True)
    s = sun_m - position_m
    s = s / np.linalg.norm(s, axis=-1, keepdims=True)
    e_y = np.cross(e_z, s)
    e_y = e_y / np.linalg.norm(e_y, axis=-1, keepdims=True)
    e_x = np.cross(e_y, e_z)
    return np.stack([e_x, e_y, e_z], axis=-2)


def ionosphere_free_offset_m(offsets_mm: dict, system: str, pair=None) -> np.ndarray | None:
    """The body-frame offset (3,) m of ``pair`` (ANTEX codes; default the system's broadcast pair;
    one code: that frequency's offset), or None when a frequency lacks."""
    pair = BROADCAST_COMBINATION.get(system) if pair is None else tuple(pair)
    if not pair or any(code not in offsets_mm for code in pair):
        return None
    if len(pair) == 1:
        return np.asarray(offsets_mm[pair[0]], dtype=float) / 1000.0
    f1, f2 = (frequency_hz(system, "C" + code[2]) for code in pair)
    o1, o2 = (np.asarray(offsets_mm[code], dtype=float) / 1000.0 for code in pair)
    return (f1 * f1 * o1 - f2 * f2 * o2) / (f1 * f1 - f2 * f2)


def antex_codes(system: str, observation_codes) -> tuple[str, ...]:
    """ANTEX frequency codes of RINEX observation codes: ("C1C", "C5Q") of "E" -> ("E01", "E05")."""
    return tuple(f"{system}0{code[1]}" for code in observation_codes)


def satellite_offsets(antex, svs, t_gpst, ledger: Ledger | None = None, pair=None) -> tuple[dict, dict]:
    """Body-frame offsets {sv: (3,) m} of ``pair`` (ANTEX codes; default each system's broadcast
    pair), for the antennas valid at ``t_gpst``.

    The PRN -> antenna (SVN) mapping is the one valid at ``t_gpst`` (ANTEX VALID FROM/UNTIL).
    Returns (offsets, missing {sv: reason}); each missing satellite is warned in ``ledger``.
    """
    offsets, missing = {}, {}
    for sv in svs:
        antenna = antex.satellite(sv, t_gpst)
        if antenna is None:
            missing[sv] = "no satellite antenna in the ANTEX file for this PRN and date"
        else:
            value = ionosphere_free_offset_m({k: p.offset_mm for k, p in antenna.frequencies.items()}, sv[0],
                                             pair)
            if value is None:
                codes = "/".join(pair or BROADCAST_COMBINATION.get(sv[0], ("?",)))
                missing[sv] = (f"the ANTEX antenna {antenna.svn} lacks a frequency of the "
                               f"{'pair' if '/' in codes else 'code'} {codes}")
            else:
                offsets[sv] = value
        if sv in missing and ledger is not None:
            ledger.warn(f"antenna offset of {sv} not applied: {missing[sv]}", antex.path)
    return offsets, missing


def shift_to_phase_centre_m(position_m: np.ndarray, t_gpst, body_offset_m: np.ndarray) -> np.ndarray:
    """ECEF vectors (n, 3) m from the centre of mass to the phase centre, for centre-of-mass
    positions (n, 3) at GPST ``t_gpst`` (n,) and body-frame offsets (n, 3) (NaN rows give 0)."""
    position_m = np.asarray(position_m, dtype=float)
    good = np.all(np.isfinite(position_m), axis=-1, keepdims=True)
    axes = body_axes(np.where(good, position_m, 1.0), sun_position_ecef_m(t_gpst))
    shift = np.einsum("nij,ni->nj", axes, np.asarray(body_offset_m, dtype=float))
    return np.where(np.isfinite(shift) & good, shift, 0.0)


def observation_offsets(antex, system: str, observation_codes, svs, t_gpst,
                        ledger: Ledger | None = None) -> tuple[dict, dict]:
    """Body-frame offsets {sv: (3,) m} of the phase centre a receiver's ``observation_codes``
    (one code, or the ionosphere-free pair) refer to; (offsets, missing) as :func:`satellite_offsets`."""
    return satellite_offsets(antex, svs, t_gpst, ledger, antex_codes(system, observation_codes))


def offset_vectors_ecef_m(states: xr.Dataset, offsets: dict) -> np.ndarray:
    """ECEF offset vectors (time, sv, 3) m of the antenna from the centre of mass; NaN where none.
    ``offsets``: {sv: (3,)} body-frame metres, or {sv: (time, 3)} where they change with time."""
    r = states["position_ecef_m"].transpose("time", "sv", "axis").values
    sun = sun_position_ecef_m(states["time"].values)[:, None, :]
    axes = body_axes(np.where(np.isfinite(r), r, 1.0), np.broadcast_to(sun, r.shape))
    body = np.full(r.shape, np.nan)
    for j, sv in enumerate(map(str, states["sv"].values)):
        if sv in offsets:
            body[:, j] = np.asarray(offsets[sv], dtype=float)
    return np.einsum("tsij,tsi->tsj", axes, body)


def to_phase_centre(precise: xr.Dataset, antex, ledger: Ledger | None = None,
                    nav_types=None) -> tuple[xr.Dataset, dict]:
    """Precise (centre-of-mass) states moved to the broadcast phase centre; satellites without an
    offset keep the centre of mass.  ``nav_types``: None, or the record type (e.g. "INAV",
    "FNAV") of the broadcast record serving each (time, sv) of ``precise`` (array of strings):
    where :data:`RECORD_COMBINATION` names another pair for it (Galileo F/NAV: E1/E5a), that
    pair's offset is used there.  Returns (states, info {"applied": {sv: [x, y, z] m},
    "missing": {sv: reason}, "combination": {letter: words}}; with ``nav_types`` also
    "record_pairs": {sv: {record type: [x, y, z] m}} for the epochs served by such a record)."""
    return _shift(precise, antex, ledger, +1.0, nav_types)


def to_centre_of_mass(broadcast: xr.Dataset, antex, ledger: Ledger | None = None) -> tuple[xr.Dataset, dict]:
    """Broadcast (phase-centre) states moved to the centre of mass (the attitude from their own
    position); satellites without an offset are left as they are."""
    return _shift(broadcast, antex, ledger, -1.0)


def _record_offsets(antex, svs, t_mid, nav_types, offsets, ledger) -> tuple[dict, dict]:
    """Per-epoch offsets {sv: (time, 3)} where a record type with its own pair serves an epoch."""
    kinds = np.asarray(nav_types).astype(str)
    out, applied = dict(offsets), {}
    for (letter, kind), pair in RECORD_COMBINATION.items():
        for j, sv in enumerate(svs):
            at = kinds[:, j] == kind
            if sv[0] != letter or not at.any():
                continue
            own, _ = satellite_offsets(antex, [sv], t_mid, ledger, pair)
            base = np.broadcast_to(np.asarray(offsets.get(sv, (np.nan,) * 3), float), (kinds.shape[0], 3)).copy()
            base[at] = own.get(sv, (np.nan,) * 3)
            out[sv] = base
            if sv in own:
                applied.setdefault(sv, {})[kind] = [float(v) for v in own[sv]]
    return out, applied


def _shift(states: xr.Dataset, antex, ledger, sign: float, nav_types=None):
    times = states["time"].values
    t_mid = times[len(times) // 2] if len(times) else np.datetime64("2000-01-01", "ns")
    svs = [str(s) for s in states["sv"].values]
    offsets, missing = satellite_offsets(antex, svs, t_mid, ledger)
    record_pairs = {}
    if nav_types is not None:
        per_epoch, record_pairs = _record_offsets(antex, svs, t_mid, nav_types, offsets, ledger)
    else:
        per_epoch = offsets
    shift = offset_vectors_ecef_m(states, per_epoch)
    shift = np.where(np.isfinite(shift), shift, 0.0)
    out = states.copy()
    pos = states["position_ecef_m"].transpose("time", "sv", "axis")
    out["position_ecef_m"] = pos.copy(data=pos.values + sign * shift)
    out.attrs["antenna_offsets"] = "phase centre" if sign > 0 else "centre of mass"
    info = {"applied": {sv: [float(v) for v in o] for sv, o in offsets.items()}, "missing": missing,
            "combination": {s: COMBINATION_WORDS[s] for s in dict.fromkeys(sv[0] for sv in svs)
                            if s in COMBINATION_WORDS}}
    if nav_types is not None:
        info["record_pairs"] = record_pairs
        kinds = {kind for pairs in record_pairs.values() for kind in pairs}
        for (letter, kind), words in RECORD_COMBINATION_WORDS.items():
            if kind in kinds and letter in info["combination"]:
                info["combination"][letter] += f"; {words} where such a record serves"
    return out, info
