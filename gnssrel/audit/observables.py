"""Receiver-independent part of every observation: the code used, transmit time,
satellite position and clock at transmit time (:mod:`gnssrel.audit.satellites`).

The light-time step that needs the receiver position (Earth rotation during the
flight) is in :mod:`gnssrel.audit.corrections`.

The result is a dict of 1-D arrays over observations (``n``): ``epoch`` (index
into the observation times), ``time`` (datetime64 GPST receive tag), ``sv``,
``system``, ``pseudorange_m`` (ionosphere-free where a pair exists),
``code`` (e.g. ``C1C+C2W``), ``frequency_hz`` (NaN for a combination),
``transmit_offset_s`` (t_tx - time, seconds), ``satellite_ecef_m`` ``(n, 3)``
in the Earth-fixed frame of the transmit time, ``satellite_velocity_ecef_m_per_s``,
``satellite_clock_s`` (broadcast polynomial or precise clock), ``periodic_s``,
``periodic_in_clock`` (bool: the clock already holds the periodic term, GLONASS
broadcast), ``j2_s``, ``group_delay_m``, ``ephemeris_row``, ``state_status``; and
``clock_source`` ("broadcast" or "precise").
"""

from __future__ import annotations

import logging

import numpy as np

from gnssrel import signals
from gnssrel.accounting import Ledger
from gnssrel.audit import ionosphere, satellites, smoothing
from gnssrel.errors import NoDataError
from gnssrel.orbits import selection
from gnssrel.orbits.selection import take_rows
from gnssrel.systems import system_model

log = logging.getLogger(__name__)

# Plausible code pseudoranges in metres for a receiver on or near the ground (derived from
# the orbit radii: GPS 26 560 km, Galileo 29 600 km, BeiDou MEO 27 900 km and GEO/IGSO 42 160 km,
# QZSS 39 000-45 300 km, GLONASS 25 500 km; from the range at zenith, radius - 6371 km, to the
# range at the horizon, sqrt(radius^2 - 6371^2 km^2); plus a +-10 ms receiver clock margin of
# 3000 km: low-cost receivers run milliseconds off, e.g. -3.9 to -4.4 ms over 36 min, issue 13).
# Values outside are gross errors, dropped before any fit.
PLAUSIBLE_RANGE_M = {"G": (1.7e7, 2.9e7), "E": (2.0e7, 3.2e7), "C": (1.8e7, 4.5e7), "J": (2.9e7, 4.8e7),
                     "R": (1.6e7, 2.8e7)}

AUDIT_SYSTEMS = "GECJR"
"""Systems the audit handles."""


NOT_REQUESTED = "system not requested"
NOT_AUDITED = "system not audited"
NO_CODE = "no usable code observable"
OTHER_SIGNAL = "another signal chosen (one code or pair per system)"
NO_SECOND = "no second frequency"
IMPLAUSIBLE = "implausible pseudorange"
NO_RECORD = "no navigation record for this satellite"
UNHEALTHY = "unhealthy"
NO_STATE = "no satellite state"
NO_PRECISE = "no precise orbit or clock"


def _empty_like_fields():
    return {k: [] for k in ("epoch", "sv", "system", "pseudorange_m", "code", "frequency_hz", "n_codes")}


def code_variables(obs_ds) -> list[str]:
    """The pseudorange variables of an observation Dataset (RINEX codes C.., and P1/P2 of RINEX 2)."""
    return [str(v) for v in obs_ds.data_vars if str(v)[:1] in ("C", "P")]


def pseudorange_counts(obs_ds, time_mask=None) -> dict[str, int]:
    """{system letter: finite pseudoranges} of the Dataset (at the epochs of ``time_mask``)."""
    sv = np.asarray(obs_ds["sv"].values).astype(str)
    letters = np.array([s[:1] for s in sv])
    per_sv = np.zeros(sv.size, dtype=np.int64)
    for v in code_variables(obs_ds):
        values = np.asarray(obs_ds[v].values, dtype=float)
        if time_mask is not None:
            values = values[np.asarray(time_mask, bool)]
        per_sv += np.isfinite(values).sum(axis=0)
    return {str(s): int(per_sv[letters == s].sum()) for s in np.unique(letters) if per_sv[letters == s].sum()}


def _finite_per_variable(obs_ds, variables, cols) -> dict[str, np.ndarray]:
    return {v: np.isfinite(np.asarray(obs_ds[v].values, dtype=float)[:, cols]) for v in variables}


ONLY_ONE_FREQUENCY = "single frequency only (--frequencies dual)"


def select_pseudoranges(obs_ds, systems=None, frequencies: str = "auto",
                        smooth_code_s: float | None = None) -> dict[str, np.ndarray]:
    """Choose, per system, the code pair or single code (``ionosphere.choose_codes`` with
    ``frequencies``: "auto", "single" or "dual") and return the flat arrays ``epoch``, ``sv``,
    ``system``, ``pseudorange_m``, ``code``, ``frequency_hz`` of every (epoch, satellite) with
    a usable pseudorange.  ``smooth_code_s``: carrier-smooth the codes over this window, s
    (Hatch filter, :mod:`gnssrel.audit.smoothing`; None = raw codes); the result's
    ``smoothing`` then holds per system what was smoothed and how."""
    sv_all = np.asarray(obs_ds["sv"].values).astype(str)
    variables = [v for v in code_variables(obs_ds) if not v.endswith(("lli", "ssi"))]   # with_flags
    parts = _empty_like_fields()
    smoothing_info, noise = {}, {}
    wanted = set(systems) if systems else set(AUDIT_SYSTEMS)
    drops = Ledger()          # what this stage leaves aside, per system (retired from "used")
    for system in sorted({s[0] for s in sv_all}):
        cols = np.flatnonzero(np.char.startswith(sv_all, system))
        finite = _finite_per_variable(obs_ds, variables, cols)
        n_all = int(sum(f.sum() for f in finite.values()))
        if system not in wanted or system not in AUDIT_SYSTEMS:
            drops.retire("observations", system, NOT_REQUESTED if system not in wanted else NOT_AUDITED, n_all)
            continue
        # Codes this system has data in (a mixed file holds every system's codes as variables).
        held = {v for v in variables if finite[v].any()}
        codes = ionosphere.choose_codes(system, held, frequencies)
        if codes is None:
            single_only = frequencies == "dual" and ionosphere.choose_codes(system, held) is not None
            log.warning("%s for system %s; skipped", ONLY_ONE_FREQUENCY if single_only else NO_CODE, system)
            drops.retire("observations", system, ONLY_ONE_FREQUENCY if single_only else NO_CODE, n_all)
            continue
        if len(codes) == 2:
            codes, noise[system] = _pair_or_single(obs_ds, system, codes, cols, held, frequencies)
        drops.retire("observations", system, OTHER_SIGNAL,
                     int(sum(f.sum() for v, f in finite.items() if v not in codes)))
        arrays = [np.asarray(obs_ds[c].values, dtype=float)[:, cols] for c in codes]
        if len(codes) == 2:
            f1, f2 = (signals.frequency_hz(system, c) for c in codes)
            p = ionosphere.ionosphere_free(arrays[0], arrays[1], f1, f2)
            freq = np.nan
        else:
            p = arrays[0]
            freq = signals.frequency_hz(system, codes[0])
        if smooth_code_s:
            p, smoothing_info[system] = smoothing.smooth_code(obs_ds, system, codes, cols, p, smooth_code_s)
        lo, hi = PLAUSIBLE_RANGE_M[system]
        if len(codes) == 2:              # one code of a pair alone cannot make the combination
            drops.retire("observations", system, NO_SECOND, int((finite[codes[0]] ^ finite[codes[1]]).sum()))
        formed = np.isfinite(p)
        plausible = formed & (p > lo) & (p < hi)
        drops.retire("observations", system, IMPLAUSIBLE, len(codes) * int((formed & ~plausible).sum()))
        p = np.where(plausible, p, np.nan)        # gross errors and empty fields
        ep, col = np.nonzero(np.isfinite(p))
        parts["epoch"].append(ep)
        parts["sv"].append(sv_all[cols][col])
        parts["system"].append(np.full(ep.size, system))
        parts["pseudorange_m"].append(p[ep, col])
        parts["code"].append(np.full(ep.size, "+".join(codes)))
        parts["frequency_hz"].append(np.full(ep.size, freq))
        parts["n_codes"].append(np.full(ep.size, len(codes), dtype=np.int64))
    if not parts["epoch"] or not sum(e.size for e in parts["epoch"]):
        raise NoDataError(_no_pseudorange_message(obs_ds, sv_all, wanted, drops),
                          obs_ds.attrs.get("path") or obs_ds.attrs.get("filename"))
    out = {k: np.concatenate(v) for k, v in parts.items()}
    order = np.lexsort((out["sv"], out["epoch"]))
    out = {k: v[order] for k, v in out.items()}
    out["accounting"] = drops
    out["code_noise"] = {s: v for s, v in noise.items() if v is not None}   # pairs: noise from the data
    if smooth_code_s:
        out["smoothing"] = smoothing_info
    return out


def _pair_or_single(obs_ds, system, codes, cols, held, frequencies):
    """(codes, noise) for a system with a pair: the pair's noise measured in the data
    (:func:`gnssrel.audit.ionosphere.pair_noise_m`), and with ``frequencies`` "auto" one code
    instead when the combination is noisier than :data:`gnssrel.audit.ionosphere.NOISY_COMBINATION_M`
    (low-cost receivers: the broadcast model's error is then the smaller one)."""
    f1, f2 = (signals.frequency_hz(system, c) for c in codes)
    noise = ionosphere.pair_noise_m(*(np.asarray(obs_ds[c].values, dtype=float)[:, cols] for c in codes), f1, f2)
    if noise is None:
        return codes, None
    noise["choice"] = "+".join(codes)
    single = ionosphere.choose_codes(system, held, "single")
    if frequencies == "auto" and single and noise["ionosphere_free_m"] > ionosphere.NOISY_COMBINATION_M:
        log.info("system %s: the %s combination is too noisy (%.1f m); %s with the broadcast ionosphere model",
                 system, "+".join(codes), noise["ionosphere_free_m"], single[0])
        noise["choice"] = single[0]
        codes = single
    return codes, noise


def _no_pseudorange_message(obs_ds, sv_all, wanted, drops) -> str:
    n_epochs = int(obs_ds.sizes.get("time", 0))
    systems = "".join(sorted({s[0] for s in sv_all}))
    text = (f"no pseudoranges of a supported system (GPS, Galileo, BeiDou, QZSS, GLONASS) in the "
            f"observation data: {n_epochs} epoch{'s' if n_epochs != 1 else ''} read")
    if systems:
        text += f", satellites of {systems}"
        reasons = drops.dropped("observations")
        if reasons:
            text += "; " + ", ".join(f"{n} {r}" for r, n in reasons.items())
        if not set(systems) & wanted:
            text += f" (systems requested: {''.join(sorted(wanted))})"
    else:
        text += " (header only, truncated or not an observation file?)"
    return text


def _state_reasons(st, sv, eph, precise: bool) -> np.ndarray:
    """Per observation: "" where the satellite has a state, else why not (from the status codes)."""
    ok = np.all(np.isfinite(st["position_ecef_m"]), axis=1)
    status = np.asarray(st["status"])
    out = np.full(status.shape, "", dtype=object)
    if precise:
        out[~ok | (status != 0)] = NO_PRECISE
        return out
    labels = dict(selection.STATUS_CODES)
    text = np.array([NO_STATE + (f" ({labels[c]})" if c in labels else "") for c in range(max(labels) + 1)],
                    dtype=object)
    text[selection.STATUS_UNHEALTHY] = UNHEALTHY
    text[selection.STATUS_NO_SATELLITE] = NO_RECORD
    bad = ~ok | (status != 0)
    codes = np.clip(status.astype(np.int64), 0, len(text) - 1)
    out[bad] = np.where(status[bad] == 0, NO_STATE, text[codes[bad]])
    out[bad & ~np.isin(sv, np.asarray(eph["sv"]))] = NO_RECORD
    return out


def stage_drops(obs: dict, extra_reasons=None) -> Ledger:
    """The select stage's drops plus one count per (system, reason) of the observations left
    aside later: ``obs["drop_reason"]`` and ``extra_reasons`` (an object array, "" = used);
    each observation weighs its number of codes (two for a combination)."""
    drops = Ledger().merge(obs.get("accounting"))
    reasons = obs["drop_reason"].copy()
    if extra_reasons is not None:
        reasons = np.where(reasons == "", extra_reasons, reasons)
    weight = obs.get("n_codes", np.ones(reasons.size, dtype=np.int64))
    dropped = reasons != ""
    if dropped.any():
        keys = np.char.add(np.char.add(obs["system"][dropped].astype(str), "|"), reasons[dropped].astype(str))
        uniq, inverse = np.unique(keys, return_inverse=True)
        sums = np.bincount(inverse, weights=weight[dropped])
        for key, n in zip(uniq, sums):
            system, reason = str(key).split("|", 1)
            drops.retire("observations", system, reason, int(n))
    return drops


_FIELDS = {"satellite_clock_s": "satellite_clock_s", "periodic_s": "periodic_s", "j2_s": "j2_s",
           "periodic_in_clock": "periodic_in_clock", "state_status": "status",
           "satellite_ecef_m": "position_ecef_m", "satellite_velocity_ecef_m_per_s": "velocity_ecef_m_per_s",
           "transmit_offset_s": "transmit_offset_s"}
"""Observation key <- key of the per-system state dict of :mod:`gnssrel.audit.satellites`."""


def signal_strengths(obs_ds, obs: dict) -> dict[str, np.ndarray]:
    """The logged signal strength (RINEX ``S`` observable of the same band and attribute as each
    code: ``C1C`` -> ``S1C``, RINEX 2 ``C1``/``P1`` -> ``S1``) of every selected observation.

    Returns ``cn0_dbhz`` (the first code's), ``cn0_second_dbhz`` (the second code's of a
    combination, else NaN) and ``combination_gains`` ``(n, 2)``: |g1|, |g2| of the ionosphere-free
    combination g1 P1 - g2 P2 (g1 = f1^2 / (f1^2 - f2^2), g2 = f2^2 / (f1^2 - f2^2)), (1, 0) for
    one code; NaN where the file has no such variable.  Values are as logged (RINEX 3: dB-Hz);
    the weight model decides what it accepts.
    """
    n = obs["epoch"].size
    out = {"cn0_dbhz": np.full(n, np.nan), "cn0_second_dbhz": np.full(n, np.nan),
           "combination_gains": np.column_stack([np.ones(n), np.zeros(n)])}
    if n == 0:
        return out
    sv_names = np.asarray(obs_ds["sv"].values).astype(str)
    column = {name: k for k, name in enumerate(sv_names)}
    col = np.array([column[s] for s in obs["sv"]], dtype=np.int64)
    for code in np.unique(obs["code"]):
        idx = np.flatnonzero(obs["code"] == code)
        parts = str(code).split("+")
        for key, part in zip(("cn0_dbhz", "cn0_second_dbhz"), parts):
            name = "S" + part[1:]
            if name in obs_ds.data_vars:
                out[key][idx] = np.asarray(obs_ds[name].values, dtype=float)[obs["epoch"][idx], col[idx]]
        if len(parts) == 2:
            system = str(obs["system"][idx[0]])
            f1, f2 = (signals.frequency_hz(system, c) for c in parts)
            out["combination_gains"][idx] = (f1**2 / (f1**2 - f2**2), f2**2 / (f1**2 - f2**2))
    return out


def _to_phase_centre(st: dict, precise: dict, system: str, codes, sv, t) -> None:
    """Move the precise transmit-time positions of ``st`` (in place) from the centre of mass to the
    phase centre of ``codes``; record the offsets in ``precise["antenna_offsets"]``."""
    from gnssrel.orbits.antenna import antex_codes, observation_offsets, shift_to_phase_centre_m

    ledger = precise.setdefault("antenna_ledger", Ledger())
    t_mid = t[t.size // 2]
    offsets, missing = observation_offsets(precise["antex"], system, codes, np.unique(sv), t_mid, ledger)
    body = np.array([offsets.get(name, (np.nan,) * 3) for name in sv], dtype=float).reshape(-1, 3)
    t_tx = t + np.round(np.nan_to_num(st["transmit_offset_s"]) * 1e9).astype("timedelta64[ns]")
    st["position_ecef_m"] = st["position_ecef_m"] + shift_to_phase_centre_m(st["position_ecef_m"], t_tx, body)
    precise.setdefault("antenna_offsets", {})[system] = {
        "codes": "+".join(codes), "antex_codes": "/".join(antex_codes(system, codes)),
        "offsets_body_m": {name: [float(v) for v in o] for name, o in offsets.items()}, "missing": missing}


def prepare_observations(obs_ds, nav, systems=None, include_unhealthy: bool = False, precise=None,
                         rule: str = "post", code_options: dict | None = None) -> dict:
    """Flat per-observation arrays with transmit time, satellite state and clock terms.

    ``nav``: a ``NavigationData`` (records for the choice of group delays and, without
    ``precise``, the orbits and clocks).  ``precise``: None, or a mapping with ``orbits``
    (an SP3 Dataset) and ``clocks`` (a Dataset with ``clock_s``: the SP3 or a RINEX clock file),
    and optionally ``antex`` (an ``AntexData``, ``--antex``): the precise positions (centre of
    mass) are then moved to the phase centre of the code pair (or single code) each system's
    pseudoranges use (:func:`gnssrel.orbits.antenna.observation_offsets`), and what was applied
    is written back to ``precise["antenna_offsets"]`` ({letter: {"codes", "antex_codes",
    "offsets_body_m", "missing"}}), each satellite without an offset warned in
    ``precise["antenna_ledger"]`` (a Ledger the caller merges).
    ``rule``: the record-selection rule, ``"post"`` or ``"receiver"`` (:mod:`gnssrel.orbits.selection`).
    ``code_options``: keywords of :func:`select_pseudoranges` (``frequencies``, ``smooth_code_s``).
    """
    obs = select_pseudoranges(obs_ds, systems, **(code_options or {}))   # frequencies, smooth_code_s
    obs.update(signal_strengths(obs_ds, obs))            # C/N0 for the weights of the fixes
    times = np.asarray(obs_ds["time"].values, dtype="datetime64[ns]")
    obs["time"] = times[obs["epoch"]]
    n = obs["epoch"].size
    obs["transmit_offset_s"] = np.full(n, np.nan)
    obs["satellite_ecef_m"] = np.full((n, 3), np.nan)
    obs["satellite_velocity_ecef_m_per_s"] = np.full((n, 3), np.nan)
    obs["ephemeris_row"] = np.full(n, -1, dtype=np.int64)
    obs["state_status"] = np.full(n, -1, dtype=np.int8)
    obs["periodic_in_clock"] = np.zeros(n, bool)
    obs["clock_source"] = "broadcast" if precise is None else "precise"
    obs["drop_reason"] = np.full(n, "", dtype=object)     # why an observation has no state ("" = has one)
    for name in ("satellite_clock_s", "periodic_s", "j2_s", "group_delay_m"):
        obs[name] = np.full(n, np.nan)
    for system in np.unique(obs["system"]):
        eph = nav.ephemerides.get(system) if hasattr(nav.ephemerides, "get") else None
        idx = np.flatnonzero(obs["system"] == system)
        if eph is None or len(eph) == 0:
            log.warning("no broadcast records for system %s in the navigation data", system)
            obs["drop_reason"][idx] = NO_RECORD
            continue
        sv, t, p = obs["sv"][idx], obs["time"][idx], obs["pseudorange_m"][idx]
        if precise is None:
            st = satellites.broadcast_at_transmit(eph, system, sv, t, p, include_unhealthy, rule=rule)
            rows = st["ephemeris_row"]
        else:
            rows, _ = satellites.choose_records(eph, system, sv, t, include_unhealthy, rule=rule)
            st = satellites.precise_at_transmit(precise["orbits"], precise["clocks"], system, sv, t, p)
            if precise.get("antex") is not None:
                _to_phase_centre(st, precise, system, obs["code"][idx[0]].split("+"), sv, t)
        for key, source in _FIELDS.items():
            obs[key][idx] = st[source]
        obs["ephemeris_row"][idx] = rows
        obs["drop_reason"][idx] = _state_reasons(st, sv, eph, precise is not None)
        codes = tuple(obs["code"][idx[0]].split("+"))
        if system_model(system).fdma and len(codes) == 1:   # FDMA: the carrier of the satellite's channel
            obs["frequency_hz"][idx] = signals.glonass_frequency_hz(
                codes[0][1], take_rows(eph, "frequency_channel", rows))
        obs["group_delay_m"][idx] = np.where(rows >= 0, ionosphere.group_delay_m(
            system, codes, eph.iloc[np.where(rows >= 0, rows, 0)]), np.nan)
    return obs
