"""The receiver audit as a whole: corrections, k fit, positions per hypothesis, verdict.

:func:`audit_log` runs the stages on an observation Dataset and navigation data;
:func:`audit_summary` turns the results into the summary dictionary of the
``gnssrel audit`` command, with exactly these keys (more are added beside them):

    observations {n_epochs, n_sat, systems}
    relativity_k {<system>: {k, sigma, rms_m {applied, omitted, reversed, doubled}}}
    position {reference, median_error_3d_m, median_error_3d_m_without_periodic}
    receiver_verdict (a string when receiver fixes or a receiver clock table were given, else None)
    relativity_k_not_fitted {<system>: why it has no k}
    codes {frequencies, by_system {<system>: {code, ionosphere (model, coefficients, note,
           expected_error; or the combination), pair_noise_m}}, smoothing {<system>: ...}}

The receiver verdict joins, with "; ", the fixes verdict (:mod:`gnssrel.audit.firmware`)
and the clock-table verdict (:func:`gnssrel.clocks.firmware.check_receiver_clocks`,
one status per system).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from gnssrel.audit import firmware, integrity, ionosphere
from gnssrel.audit.corrections import corrections_table
from gnssrel.audit.observables import prepare_observations, stage_drops
from gnssrel.audit.positioning import OUTLIER, position_errors_3d_m, single_point_positions
from gnssrel.audit.receiver_clock import clock_summary, receiver_clock_series
from gnssrel.audit.relativity_fit import relativity_k, why_no_k
from gnssrel.clocks.firmware import check_receiver_clocks
from gnssrel.geodesy import ecef_to_geodetic, enu_errors


@dataclass
class AuditResult:
    corrections: pd.DataFrame
    k_fits: dict
    positions: dict[str, pd.DataFrame]          # hypothesis name -> per-epoch positions
    reference: str                              # "header", "given" or "none"
    reference_ecef_m: np.ndarray | None
    n_epochs: int
    n_sat: int
    systems: list[str]
    firmware: dict | None = None
    clock_check: dict | None = None             # gnssrel.clocks.firmware.check_receiver_clocks summary
    clock_source: str = "broadcast"
    extra: dict = field(default_factory=dict)


def audit_log(obs_ds, nav, receiver_position_ecef_m=None, systems=None, elevation_mask_deg: float = 10.0,
              fixes: pd.DataFrame | None = None, precise=None,
              receiver_clocks: pd.DataFrame | None = None, weighting: str = "auto",
              rule: str = "post", frequencies: str = "auto", smooth_code_s: float | None = None,
              fix_options: dict | None = None) -> AuditResult:
    """Run the receiver audit on one log (see the module text).

    ``precise``: None or ``{"orbits": SP3 Dataset, "clocks": Dataset with clock_s}``
    (:func:`gnssrel.audit.observables.prepare_observations`); ``receiver_clocks``: a table of
    :func:`gnssrel.io.receiver_clocks.read_receiver_clocks`, checked over the log's time span.
    ``rule``: the broadcast record-selection rule, ``"post"`` or ``"receiver"``.
    ``frequencies`` ("auto", "single", "dual") and ``smooth_code_s`` (Hatch window, s, or None):
    the codes used (:func:`gnssrel.audit.observables.select_pseudoranges`).
    ``fix_options``: keywords of :func:`gnssrel.audit.positioning.single_point_positions`
    (``false_alarm``, ``max_pdop``, ``min_satellites``, ``variance_factor``, ``system_variances``).
    The fixes of the other hypotheses use the observations, variance factors and s0^2 the
    "applied" fixes kept (``screening``), so that they differ by the periodic term alone: their
    own residual test would exclude the satellites a wrong hypothesis hurts most.
    """
    if receiver_position_ecef_m is not None:
        reference, ref = "given", np.asarray(receiver_position_ecef_m, float)
    elif obs_ds.attrs.get("position") is not None and np.linalg.norm(obs_ds.attrs["position"]) > 6.0e6:
        reference, ref = "header", np.asarray(obs_ds.attrs["position"], float)
    else:
        reference, ref = "none", None
    obs = prepare_observations(obs_ds, nav, systems, precise=precise, rule=rule,
                               code_options={"frequencies": frequencies, "smooth_code_s": smooth_code_s})
    iono = getattr(nav, "header", {}).get("ionosphere")
    times = obs_ds["time"].values
    hypotheses = dict(firmware.HYPOTHESES) if fixes is not None else \
        {k: firmware.HYPOTHESES[k] for k in ("applied", "omitted")}
    used_in_fix: dict = {}            # the "applied" fix says which observations were used
    positions = {}
    for name in ["applied"] + [h for h in hypotheses if h != "applied"]:   # the others on its observations
        positions[name] = single_point_positions(obs, times.size, times, terms=hypotheses[name],
                                                 elevation_mask_deg=elevation_mask_deg,
                                                 initial_ecef_m=ref, ionosphere_header=iono,
                                                 weighting=weighting, **(fix_options or {}),
                                                 diagnostics=used_in_fix if name == "applied" else None,
                                                 screening=None if name == "applied" else used_in_fix)
    positions = {name: positions[name] for name in hypotheses}
    if ref is None:                       # no position known: the corrections use our own median fix
        ref = np.nanmedian(positions["applied"][["x_m", "y_m", "z_m"]].to_numpy(), axis=0)
    corrections = corrections_table(obs, ref, iono)
    fits = relativity_k(corrections, elevation_mask_deg=elevation_mask_deg)
    codes = _codes_used(obs, iono, frequencies, obs.get("smoothing"))
    codes["k_not_fitted"] = why_no_k(corrections, fits, elevation_mask_deg)
    firm = firmware.compare_with_hypotheses(fixes, positions) if fixes is not None else None
    clock_check = None
    if receiver_clocks is not None:
        clock_check = check_clock_table(receiver_clocks, nav, times, systems)
    return AuditResult(corrections=corrections, k_fits=fits, positions=positions, reference=reference,
                       reference_ecef_m=ref, n_epochs=int(np.unique(obs["epoch"]).size),
                       n_sat=int(np.unique(obs["sv"]).size), systems=sorted(np.unique(obs["system"]).tolist()),
                       firmware=firm, clock_check=clock_check, clock_source=obs["clock_source"],
                       extra={"log": _log_health(obs_ds), "weighting": weighting, "selection_rule": rule,
                              "observation_drops": stage_drops(obs, used_in_fix.get("reasons")),
                              "ephemeris_rows": _rows_by_system(obs), "codes": codes,
                              "integrity": _integrity(positions["applied"], used_in_fix, fix_options),
                              "receiver_clock": clock_summary(receiver_clock_series(positions["applied"]))})


def _integrity(fixes: pd.DataFrame, diagnostics: dict, fix_options: dict | None) -> dict:
    """The summary's ``position["integrity"]`` block: the residual test and gates of the fixes
    (:mod:`gnssrel.audit.integrity`) and what they excluded, per satellite."""
    options = {"false_alarm": integrity.DEFAULT_FALSE_ALARM, "max_pdop": integrity.DEFAULT_MAX_PDOP,
               "min_satellites": integrity.DEFAULT_MIN_SATELLITES, **(fix_options or {})}
    reasons = diagnostics.get("reasons", np.array([], dtype=object))
    tested = fixes["test_statistic"].notna()
    return {"false_alarm_probability": options["false_alarm"], "max_pdop": options["max_pdop"],
            "min_satellites": options["min_satellites"],
            "variance_of_unit_weight": diagnostics.get("variance_factor"),
            "system_variance_factors": diagnostics.get("system_variance_factors", {}),
            "n_excluded_by_test": int((reasons == integrity.EXCLUDED).sum()),
            "n_outliers": int((reasons == OUTLIER).sum()),
            "excluded_by_satellite": diagnostics.get("excluded_by_satellite", {}),
            "n_epochs_failing_test": int((fixes["test_statistic"] > fixes["test_threshold"]).sum()),
            "n_epochs_tested": int(tested.sum()),
            "n_epochs_above_pdop_gate": int((fixes["pdop"] > options["max_pdop"]).sum())
            if options["max_pdop"] is not None else 0,
            "median_pdop": float(fixes["pdop"].median()) if fixes["pdop"].notna().any() else None}



def _codes_used(obs, iono_header, frequencies, smoothing) -> dict:
    """The summary's ``codes`` block: per system the code (pair) used and its ionosphere
    correction (model, coefficients, expected error), the frequency choice, the smoothing."""
    out = {"frequencies": frequencies, "by_system": {}}
    models = ionosphere.models_used(np.unique(obs["system"]).tolist(), iono_header)
    for system in np.unique(obs["system"]):
        code = str(obs["code"][obs["system"] == system][0])
        entry = {"code": code}
        if "+" in code:
            entry["ionosphere"] = "ionosphere-free combination (first order)"
        else:
            entry["ionosphere"] = models[str(system)]
        if str(system) in obs.get("code_noise", {}):           # a pair's noise measured in the data
            entry["pair_noise_m"] = obs["code_noise"][str(system)]
        out["by_system"][str(system)] = entry
    if smoothing is not None:
        out["smoothing"] = smoothing
    return out


def _rows_by_system(obs) -> dict[str, np.ndarray]:
    """{system: the navigation table rows any observation used}, for the accounting of records."""
    rows = obs["ephemeris_row"]
    return {str(s): np.unique(rows[(obs["system"] == s) & (rows >= 0)]) for s in np.unique(obs["system"])}


def _log_health(obs_ds) -> dict:
    """What the reader skipped or found odd in the log, so nothing is lost silently."""
    attrs = obs_ds.attrs
    return {"epochs_in_file_read": int(obs_ds.sizes.get("time", 0)),
            "skipped_epochs": int(attrs.get("skipped_epochs", 0) or 0),
            "skipped_epoch_lines": list(attrs.get("skipped_epoch_lines", []) or []),
            "reader_warnings": list(attrs.get("warnings", []) or [])}


def check_clock_table(receiver_clocks: pd.DataFrame, nav, times, systems=None) -> dict:
    """The receiver clock-table check (:func:`gnssrel.clocks.firmware.check_receiver_clocks`)
    over the span of the observation epochs ``times``; returns its summary dict."""
    t = receiver_clocks["time"].to_numpy().astype("datetime64[ns]")
    span = (t >= np.min(times)) & (t <= np.max(times))
    _, check = check_receiver_clocks(receiver_clocks[span], nav, systems=systems)
    return check


def clock_table_verdict(check: dict) -> str:
    """One line from the clock-table check: the status and k of each system."""
    def k_text(k, sigma):
        k = 0.0 if abs(k) < 5e-4 else k             # no "-0.000"
        return f"{k:.3f} (sigma < 0.001)" if sigma < 1e-3 else f"{k:.3f} ± {sigma:.3f}"

    parts = [f"{s} {e['status']} (k = {k_text(e['convention_k'], e['convention_k_sigma'])}, "
             f"expected {e['expected_k']:g})" for s, e in check["by_system"].items()]
    return "clock table: " + ", ".join(parts)


def audit_summary(result: AuditResult, receiver_clock_verdict: str | None = None) -> dict:
    """The summary dictionary of the audit (keys in the module text).  The clock-table verdict
    is taken from ``result.clock_check`` unless ``receiver_clock_verdict`` is given."""
    if receiver_clock_verdict is None and result.clock_check is not None:
        receiver_clock_verdict = clock_table_verdict(result.clock_check)
    position = {"reference": result.reference, "median_error_3d_m": None,
                "median_error_3d_m_without_periodic": None,
                "weighting": result.extra.get("weighting", "auto")}
    if result.reference != "none":
        for key, name in (("median_error_3d_m", "applied"), ("median_error_3d_m_without_periodic", "omitted")):
            err = position_errors_3d_m(result.positions[name], result.reference_ecef_m)
            position[key] = float(np.nanmedian(err)) if np.isfinite(err).any() else None
        position["n_epochs_solved"] = int(np.isfinite(
            position_errors_3d_m(result.positions["applied"], result.reference_ecef_m)).sum())
    if "integrity" in result.extra:     # issue 13: residual test, gates, exclusions per satellite
        position["integrity"] = result.extra["integrity"]
    fixes_verdict = (result.firmware or {}).get("verdict")
    verdicts = [v for v in (f"fixes: {fixes_verdict}" if fixes_verdict else None, receiver_clock_verdict) if v]
    summary = {
        "observations": {"n_epochs": result.n_epochs, "n_sat": result.n_sat, "systems": result.systems,
                         **result.extra.get("log", {})},
        "relativity_k": {s: {"k": f["k"], "sigma": f["sigma"], "rms_m": f["rms_m"],
                             "expected_k": f["expected_k"], "status": f["status"],
                             "sigma_formal": f["sigma_formal"], "n_obs": f["n_obs"],
                             "n_rejected": f["n_rejected"], "n_sat": f["n_sat"]}
                         for s, f in result.k_fits.items()},
        "clock_source": result.clock_source,
        "selection_rule": result.extra.get("selection_rule", "post"),
        "position": position,
        "receiver_verdict": "; ".join(verdicts) if verdicts else None,
    }
    if "receiver_clock" in result.extra:    # issue 13: the receiver clock of the fixes, its jumps
        summary["receiver_clock_estimate"] = result.extra["receiver_clock"]
    codes = result.extra.get("codes")
    if codes is not None:           # issue 13: codes, ionosphere model, smoothing, k not fitted and why
        summary["relativity_k_not_fitted"] = codes.get("k_not_fitted", {})
        summary["codes"] = {k: v for k, v in codes.items() if k != "k_not_fitted"}
        for s, f in result.k_fits.items():
            summary["relativity_k"][s].update({k: f[k] for k in ("sigma_model", "frequencies") if k in f})
    if result.clock_check is not None:
        summary["receiver_clocks"] = result.clock_check
    if result.firmware is not None:
        summary["receiver_fixes"] = dict(result.firmware)
    return summary


HEADER_POSITION_NOTE = ("the reference is the observation file header's approximate position (good to a few "
                        "metres at best): errors are relative to it; give --position for a surveyed one")
"""Said (terminal, summary ``position.reference_note``, report notes) where the header position is the reference."""


def per_epoch_errors(result: AuditResult) -> pd.DataFrame:
    """Per-epoch positions and errors for every computed hypothesis (the table behind the position
    figures: a whole-day average would hide the periodic term).

    Columns, per hypothesis ``h`` (``-`` written ``_``): ``error_3d_m_h`` (m, against the
    reference), ``latitude_h_deg``, ``longitude_h_deg``, ``height_h_m`` (WGS-84, degrees and m
    above the ellipsoid) and ``east_error_h_m``, ``north_error_h_m``, ``up_error_h_m`` (m, in the
    reference's local frame); errors only when there is a reference (``result.reference``:
    "given", or "header", the observation file's approximate position).  Times GPST.
    """
    out = pd.DataFrame({"time": result.positions["applied"]["time"].to_numpy()})
    ref = result.reference_ecef_m
    if ref is not None:
        for name, pos in result.positions.items():
            out[f"error_3d_m_{name.replace('-', '_')}"] = position_errors_3d_m(pos, ref)
    for name, pos in result.positions.items():
        h = name.replace("-", "_")
        xyz = pos[["x_m", "y_m", "z_m"]].to_numpy(dtype=float)
        lat, lon, height = ecef_to_geodetic(xyz)
        out[f"latitude_{h}_deg"], out[f"longitude_{h}_deg"] = np.degrees(lat), np.degrees(lon)
        out[f"height_{h}_m"] = height
        if ref is not None:
            enu = enu_errors(xyz, ref)
            for k, axis in enumerate(("east", "north", "up")):
                out[f"{axis}_error_{h}_m"] = enu[:, k]
    return out
