"""The survey of one log: a static position from ionosphere-free code and phase, with term effects,
realistic sigma, convergence, residuals per satellite and k of the periodic term from phase.

Steps: pairs and arcs (:mod:`gnssrel.survey.arcs`), satellite terms at transmit time and the
geometry at the a-priori antenna reference point (:mod:`gnssrel.survey.model`), elevation mask,
short arcs dropped, normal equations per hour (:mod:`gnssrel.survey.solve`), one screening pass
of post-fit residuals (an observation whose phase residual exceeds max(5 RMS, 5 cm) or code
residual max(5 RMS, 5 m) is dropped and the system solved again), a new linearization while the
correction exceeds 0.5 m.  Every pseudorange left aside is retired in the ledger with its reason.
"""

from __future__ import annotations

import numpy as np

from gnssrel import geodesy
from gnssrel.accounting import Ledger
from gnssrel.audit.observables import code_variables
from gnssrel.errors import NoDataError
from gnssrel.orbits.selection import excluded_satellites
from gnssrel.orbits.status import STATUS_CODES, STATUS_EXCLUDED
from gnssrel.survey import arcs, effects, etrs, model, solve
from gnssrel.timescales import seconds_between

BELOW_MASK = "below the elevation mask"
NO_PRECISE = "no precise orbit or clock"
OUTLIER = "post-fit residual outlier"
NOT_REQUESTED = "system not requested"
NOT_SURVEYED = "system not surveyed (GPS and Galileo only)"
EXCLUDED = STATUS_CODES[STATUS_EXCLUDED]   # "excluded by rule": the satellites the selection rules exclude
MAX_ITERATIONS = 3
OPTIONS = {"elevation_mask_deg": 10.0, "min_arc_s": arcs.MIN_ARC_S, "zwd_node_s": 7200.0, "parts": 4,
           "block_s": 3600.0, "jackknife": True, "reference_frame": "itrf", "include_unhealthy": False}
REFERENCE_FRAMES = ("itrf", "etrf2000")
"""The frame of the reference position: that of the orbits (itrf), or ETRS89 as ETRF2000 (:mod:`etrs`):
the reference is then moved into the orbits' frame before every comparison."""


def gather(obs_ds, systems: str, ledger: Ledger) -> tuple[dict, dict]:
    """Flat arrays of every (epoch, satellite) with both codes and both phases of the pair, their
    arcs; and per-system info (pair, arc starts by reason)."""
    sv_all = np.asarray(obs_ds["sv"].values).astype(str)
    times = np.asarray(obs_ds["time"].values, "datetime64[ns]")
    codes = [v for v in code_variables(obs_ds) if not v.endswith(("lli", "ssi"))]
    parts, info, arc_offset = [], {}, 0
    for system in sorted({s[0] for s in sv_all}):
        cols = np.flatnonzero(np.char.startswith(sv_all, system))
        finite = {v: int(np.isfinite(np.asarray(obs_ds[v].values, float)[:, cols]).sum()) for v in codes}
        n_all = sum(finite.values())
        if system not in systems or system not in arcs.PAIRS:
            ledger.retire("observations", system, NOT_REQUESTED if system not in systems else NOT_SURVEYED, n_all)
            continue
        pair = arcs.choose_pair(obs_ds, system, cols)
        if pair is None:
            ledger.retire("observations", system, arcs.NO_PAIR, n_all)
            continue
        ledger.retire("observations", system, "another signal chosen (one pair per system)",
                      sum(n for v, n in finite.items() if v not in (pair[0], pair[2])))
        arr = arcs.system_arrays(obs_ds, system, cols, pair)
        valid = np.isfinite(arr["code_if_m"]) & np.isfinite(arr["phase_if_m"])
        ledger.retire("observations", system, arcs.NO_PHASE, int(arr["codes_present"][~valid].sum()))
        starts = arcs.arc_starts(times, valid, arr["lost_lock"], arr["gf_m"], arr["mw_cycles"])
        ids = arcs.arc_ids(starts["starts"], valid)
        ep, col = np.nonzero(valid)
        parts.append({"epoch": ep, "time": times[ep], "sv": sv_all[cols][col], "sv_index": cols[col],
                      "system": np.full(ep.size, system), "code_if_m": arr["code_if_m"][ep, col],
                      "phase_if_m": arr["phase_if_m"][ep, col], "arc": ids[ep, col] + arc_offset,
                      "f1": np.full(ep.size, arr["f1"]), "f2": np.full(ep.size, arr["f2"])})
        arc_offset += int(ids.max()) + 1 if ids.size and ids.max() >= 0 else 0
        info[system] = {"pair": "+".join(pair), "arc_starts": starts["reasons"]}
    if not parts or not sum(p["epoch"].size for p in parts):
        raise NoDataError("no epoch with dual-frequency code and carrier phase of GPS or Galileo in the log",
                          obs_ds.attrs.get("filename"))
    obs = {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}
    order = np.lexsort((obs["sv"], obs["epoch"]))
    return {k: v[order] for k, v in obs.items()}, info


def _subset(obs: dict, keep: np.ndarray, ledger: Ledger, reason: str) -> dict:
    """Keep the observations of ``keep``; retire the others (two codes each) with ``reason``."""
    for system in np.unique(obs["system"][~keep]):
        ledger.retire("observations", str(system), reason, 2 * int(np.sum(~keep & (obs["system"] == system))))
    return {k: (v[keep] if isinstance(v, np.ndarray) and v.shape[:1] == keep.shape else v) for k, v in obs.items()}


def _drop_short_arcs(obs, ledger, min_arc_s):
    t_s = seconds_between(obs["time"], obs["time"].min())
    first, last = arcs.arc_spans_s(obs["arc"], t_s)
    long_enough = (last - first) >= min_arc_s
    obs = _subset(obs, long_enough[obs["arc"]], ledger, arcs.SHORT_ARC)
    kept, dense = np.unique(obs["arc"], return_inverse=True)
    obs["arc"] = dense.ravel()
    return obs, int((~long_enough & np.isfinite(first)).sum()), int(kept.size)


class _System:
    """Design, weights, right-hand sides and hourly normal equations at one linearization point."""

    def __init__(self, obs, arp, options, k_systems):
        self.obs = obs
        self.geo = model.geometry(obs, arp)
        t_s = seconds_between(obs["time"], obs["time"].min())
        self.a, self.layout = solve.design(obs, self.geo, t_s, options["zwd_node_s"], k_systems)
        self.w = solve.weights(obs, self.geo)
        _, dense = np.unique(obs["epoch"], return_inverse=True)
        self.epoch_times = obs["time"][np.unique(dense.ravel(), return_index=True)[1]]
        self.epoch = np.concatenate([dense.ravel(), dense.ravel()])
        ep_s = seconds_between(self.epoch_times, self.epoch_times[0])
        self.block = np.floor(ep_s / options["block_s"]).astype(np.int64)
        self.n_blocks = int(self.block.max()) + 1
        self.names = ["full"] + list(effects.VARIANTS)
        ys = [model.observed_minus_computed(obs, self.geo, None)]
        ys += [model.observed_minus_computed(obs, self.geo, sw) for sw in effects.VARIANTS.values()]
        self.y = np.stack([np.concatenate(pair) for pair in ys], axis=1)
        self.row_sv = np.concatenate([obs["sv"], obs["sv"]])
        self.mask = np.ones(self.a.shape[0], bool)
        self.k_fixed0 = {c: 0.0 for c in self.layout["k"].values()}

    def form(self):
        self.normals, self.rhs = solve.normal_blocks(self.a, self.w, self.epoch, self.y, self.block,
                                                     self.n_blocks, self.mask)

    def solve_blocks(self, blocks):
        return solve.solve(self.normals[blocks].sum(0), self.rhs[blocks].sum(0), self.k_fixed0)


def survey(obs_ds, nav, precise: dict, systems: str = "GE", reference_ecef_m=None, ledger: Ledger | None = None,
           **options) -> dict:
    """Run the survey (module text); returns {"summary": dict, "residuals": DataFrame-ready dict}."""
    opts = dict(OPTIONS)
    opts.update({k: v for k, v in options.items() if v is not None})
    ledger = ledger if ledger is not None else Ledger.from_dict(obs_ds.attrs.get("accounting"))
    header = np.asarray(reference_ecef_m if reference_ecef_m is not None else obs_ds.attrs.get("position"), float)
    mid_time = np.asarray(obs_ds["time"].values)[obs_ds.sizes["time"] // 2]
    reference = header
    if opts["reference_frame"] == "etrf2000":               # the header in the orbits' frame
        reference = header - (etrs.itrf_to_etrf2000(header, mid_time) - header)
    arp_offset = model.arp_offset_ecef_m(reference, obs_ds.attrs.get("antenna_delta_hen_m") or (0.0, 0.0, 0.0))
    obs, info = gather(obs_ds, systems, ledger)
    if not opts["include_unhealthy"]:   # one rule with the broadcast and precise paths (README: which epochs)
        obs = _subset(obs, ~np.isin(obs["sv"], sorted(excluded_satellites(systems))), ledger, EXCLUDED)
    obs = model.satellite_terms(obs, nav, precise)
    ok = np.all(np.isfinite(obs["satellite_ecef_m"]), axis=1) & np.isfinite(obs["clock_m"])
    obs = _subset(obs, ok, ledger, NO_PRECISE)
    arp = reference + arp_offset
    geo = model.geometry(obs, arp, with_tide=False)
    obs = _subset(obs, np.degrees(geo["elevation_rad"]) >= opts["elevation_mask_deg"], ledger, BELOW_MASK)
    obs, n_short, n_arcs = _drop_short_arcs(obs, ledger, opts["min_arc_s"])
    if obs["sv"].size < 10:
        raise NoDataError("too few observations left for a carrier-phase solution after the elevation mask "
                          "and the minimum arc length", obs_ds.attrs.get("filename"))
    k_systems = [s for s in ("G", "E") if s in set(obs["system"])]
    for iteration in range(MAX_ITERATIONS):
        sys_ = _System(obs, arp, opts, k_systems)
        sys_.form()
        x, cov = sys_.solve_blocks(slice(None))
        v, _ = solve.residuals(sys_.a, sys_.w, sys_.epoch, sys_.y[:, :1], x[:, :1], sys_.mask)
        n = obs["sv"].size
        rms_c, rms_p = (float(np.sqrt(np.nanmean(v[sl, 0] ** 2))) for sl in (slice(0, n), slice(n, 2 * n)))
        bad = (np.abs(v[n:, 0]) > max(5 * rms_p, 0.05)) | (np.abs(v[:n, 0]) > max(5 * rms_c, 5.0))
        if bad.any():
            sys_.mask = np.concatenate([~bad, ~bad])
            sys_.form()
            x, cov = sys_.solve_blocks(slice(None))
        if np.linalg.norm(x[:3, 0]) < 0.5 or iteration == MAX_ITERATIONS - 1:
            break
        arp = arp + x[:3, 0]                                # linearize again at the new point
    n_outliers = int(bad.sum())
    for system in np.unique(obs["system"][bad]):
        ledger.retire("observations", str(system), OUTLIER, 2 * int(np.sum(bad & (obs["system"] == system))))
    summary = _summarise(sys_, x, cov, arp, arp_offset, reference, opts, info, ledger)
    marker = np.array([summary["position"][k] for k in ("x_m", "y_m", "z_m")])
    summary["position"]["reference_frame"] = opts["reference_frame"]
    summary["position"]["etrf2000_check_m"] = {
        **_etrf2000_check(marker, mid_time, header),
        "note": "the solution turned into ETRF2000 (approximate, a few cm) minus the header: for headers that "
                "hold ETRS89 coordinates (European networks)"}
    summary["position_product_convention"] = _product_convention_position(
        marker, x, sys_.names, reference, header, mid_time)
    summary["arcs"] = {"used": n_arcs, "dropped_short": n_short, "min_arc_s": opts["min_arc_s"],
                       "outliers_dropped": n_outliers,
                       "periodic_spec_from_state": int(obs["spec_from_state"].sum())}
    return {"summary": summary, "residuals": _residual_table(sys_, x)}


def _etrf2000_check(point, mid_time, header) -> dict:
    """East/north/up (m) of ``point`` turned into ETRF2000 (:mod:`etrs`) minus the header."""
    e, n, u = geodesy.enu_errors(etrs.itrf_to_etrf2000(point, mid_time), header)
    return {"east": round(float(e), 4), "north": round(float(n), 4), "up": round(float(u), 4)}


def _product_convention_position(marker, x, names, reference, header, mid_time) -> dict:
    """The point under the model the product's clocks were estimated with (IGS convention: -2 r.v/c^2
    on the precise state, no J2 term; :data:`gnssrel.survey.effects.VARIANTS`): what a user of such a
    product should take.  The full model (spec form + J2) stays the primary solution, since each term
    effect is defined against it."""
    j = list(names).index("product_convention")
    point = marker + x[:3, j] - x[:3, 0]
    enu = geodesy.enu_errors(point, reference)
    return {"x_m": round(float(point[0]), 4), "y_m": round(float(point[1]), 4), "z_m": round(float(point[2]), 4),
            "east_m": round(float(enu[0]), 4), "north_m": round(float(enu[1]), 4), "up_m": round(float(enu[2]), 4),
            "etrf2000_check_m": _etrf2000_check(point, mid_time, header),
            "model": "periodic term as -2 r.v/c^2 on the precise state, no J2 term (the IGS convention: the "
                     "product's clocks absorb the rest)"}


def _summarise(sys_, x, cov, arp, arp_offset, reference, opts, info, ledger) -> dict:
    a, w, y, mask, layout = sys_.a, sys_.w, sys_.y, sys_.mask, sys_.layout
    v, _ = solve.residuals(a, w, sys_.epoch, y[:, :1], x[:, :1], mask)
    n_free = int(np.sum(np.diag(sys_.normals.sum(0)) > 0)) - len(layout["k"])
    dof = max(int(mask.sum()) - n_free - sys_.epoch_times.size, 1)
    variance_factor = float(np.nansum(w * v[:, 0] ** 2) / dof)
    marker = arp + x[:3, 0] - arp_offset
    enu = geodesy.enu_errors(marker, reference)
    lat, lon, _ = geodesy.ecef_to_geodetic(reference)
    rot = geodesy.enu_rotation(lat, lon)
    formal = np.sqrt(np.diag(rot @ cov[:3, :3] @ rot.T) * variance_factor)
    to_ref = reference + arp_offset - arp                 # correction that puts the point on the reference
    parts = _parts(sys_, to_ref, reference, opts["parts"])
    summary = {
        "position": {"x_m": round(float(marker[0]), 4), "y_m": round(float(marker[1]), 4),
                     "z_m": round(float(marker[2]), 4), "reference": "header",
                     "east_m": round(float(enu[0]), 4), "north_m": round(float(enu[1]), 4),
                     "up_m": round(float(enu[2]), 4), "point": "marker (antenna reference point minus "
                                                          "ANTENNA: DELTA H/E/N)",
                     "formal_sigma_m": dict(zip(("east", "north", "up"), (round(float(s), 5) for s in formal))),
                     "realistic_sigma_m": parts["realistic_sigma_m"],
                     "n_epochs": int(sys_.epoch_times.size), "n_observations": int(mask.sum() // 2)},
        "parts": parts["parts"],
        "convergence": _convergence(sys_, to_ref),
        "term_effects_mm": effects.term_effects(x, sys_.names, reference),
        "model": {"estimator": "batch least squares, receiver clock eliminated per epoch", "pairs": {
            s: i["pair"] for s, i in info.items()}, "arc_starts": {s: i["arc_starts"] for s, i in info.items()},
            "zwd_node_s": opts["zwd_node_s"], "elevation_mask_deg": opts["elevation_mask_deg"],
            "full_terms": dict(model.FULL_TERMS), "a_posteriori_variance_factor": round(variance_factor, 3),
            "receiver_antenna_model": "none (no receiver phase-centre offset or variation applied)",
            "solid_earth_tide": "IERS 2010 7.1.1 step 1, degree 2"},
        "residuals_rms_m": _rms_per_satellite(sys_, v[:, 0]),
        "phase_residual_rms_mm": _rms_per_variant(sys_, x),
    }
    summary["relativity_k_phase"] = _k_phase(sys_, to_ref, opts)
    summary["accounting"] = ledger.as_dict()
    return summary


def _parts(sys_, to_ref, reference, n_parts) -> dict:
    blocks = np.arange(sys_.n_blocks)
    part_of = (blocks * n_parts) // sys_.n_blocks
    rows, sols = [], []
    for j in range(n_parts):
        sel = blocks[part_of == j]
        if not sel.size or not np.any(sys_.normals[sel].sum(0)[0, 0]):
            continue
        x, _ = sys_.solve_blocks(sel)
        e = effects.enu_mm(x[:3, 0] - to_ref, reference)
        sols.append([e["east"], e["north"], e["up"]])
        rows.append({"part": j, "first_hour": float(sel[0]), "hours": float(sel.size),
                     **{f"{k}_m": round(val / 1000.0, 4) for k, val in e.items()}})
    sols = np.asarray(sols) / 1000.0
    sigma = (sols.std(axis=0, ddof=1) / np.sqrt(len(sols))) if len(sols) > 1 else np.full(3, np.nan)
    return {"parts": rows, "realistic_sigma_m": {k: (round(float(s), 4) if np.isfinite(s) else None)
                                                  for k, s in zip(("east", "north", "up"), sigma)}}


def _convergence(sys_, to_ref) -> list[dict]:
    """Solutions on growing spans (whole blocks from the start): 3-D distance to the reference and to
    the solution of the whole log (the second is what converges where the reference is in another frame)."""
    final, _ = sys_.solve_blocks(slice(None))
    out = []
    for b in range(sys_.n_blocks):
        x, _ = sys_.solve_blocks(slice(0, b + 1))
        out.append({"hours": float(b + 1), "error_3d_m": round(float(np.linalg.norm(x[:3, 0] - to_ref)), 4),
                    "to_final_3d_m": round(float(np.linalg.norm(x[:3, 0] - final[:3, 0])), 4)})
    return out


def _rms_per_variant(sys_, x) -> dict:
    """RMS of the phase residuals (mm) of the full model and of each switched term: which model
    the product's clocks fit best."""
    v, _ = solve.residuals(sys_.a, sys_.w, sys_.epoch, sys_.y, x, sys_.mask)
    n = sys_.obs["sv"].size
    rms = np.sqrt(np.nanmean(v[n:] ** 2, axis=0)) * 1000.0
    return {name: round(float(r), 2) for name, r in zip(sys_.names, rms)}


def _rms_per_satellite(sys_, v) -> dict:
    n = sys_.obs["sv"].size
    out = {}
    for sv in np.unique(sys_.obs["sv"]):
        m = sys_.obs["sv"] == sv
        c, p = v[:n][m], v[n:][m]
        if np.isfinite(p).any():
            out[str(sv)] = {"code": round(float(np.sqrt(np.nanmean(c**2))), 3),
                            "phase": round(float(np.sqrt(np.nanmean(p**2))), 4), "n": int(np.isfinite(p).sum())}
    return out


def _k_phase(sys_, to_ref, opts) -> dict:
    normal, rhs = sys_.normals.sum(0), sys_.rhs.sum(0)[:, :1]
    est = effects.k_estimates(normal, rhs, sys_.layout, to_ref)
    jack = effects.jackknife_k(sys_.a, sys_.w, sys_.epoch, sys_.y[:, :1], sys_.row_sv, sys_.mask, sys_.layout,
                               to_ref) if opts["jackknife"] else {}
    n = sys_.obs["sv"].size
    code_rows = sys_.mask & (np.arange(sys_.a.shape[0]) < n)
    one_block = np.zeros(int(sys_.epoch.max()) + 1, np.int64)
    normals, rhs_code = solve.normal_blocks(sys_.a, sys_.w, sys_.epoch, sys_.y[:, :1], one_block, 1, code_rows)
    code_only = effects.k_estimates(normals[0], rhs_code[0], sys_.layout, to_ref)["with_position"]
    out = {}
    for s in sys_.layout["k"]:
        k, formal = est["with_position"][s]
        k_fixed, formal_fixed = est["position_fixed"][s]
        jk = jack.get("with_position", {}).get(s, (None, 0))
        jk_fixed = jack.get("position_fixed", {}).get(s, (None, 0))
        out[s] = {"k": round(k, 5), "sigma": round(jk[0], 5) if jk[0] is not None else None,
                  "sigma_formal": round(formal, 5), "n_satellites": jk[1],
                  "position_fixed": {"k": round(k_fixed, 5),
                                     "sigma": round(jk_fixed[0], 5) if jk_fixed[0] is not None else None,
                                     "sigma_formal": round(formal_fixed, 5)},
                  "sigma_method": "jackknife over satellites" if jk[0] is not None else "formal",
                  "code_only": {"k": round(code_only[s][0], 4), "sigma_formal": round(code_only[s][1], 4),
                                "note": "the same model and unknowns with the phase left out (the code "
                                        "path's k: gnssrel audit, +-0.015)"}}
    return out


def _residual_table(sys_, x) -> dict:
    v, clock = solve.residuals(sys_.a, sys_.w, sys_.epoch, sys_.y[:, :1], x[:, :1], sys_.mask)
    n = sys_.obs["sv"].size
    return {"time": sys_.obs["time"], "sv": sys_.obs["sv"], "arc": sys_.obs["arc"],
            "elevation_deg": np.round(np.degrees(sys_.geo["elevation_rad"]), 3),
            "code_residual_m": v[:n, 0], "phase_residual_m": v[n:, 0],
            "windup_m": sys_.geo["windup_m"], "receiver_clock_m": clock[sys_.epoch[:n], 0]}
