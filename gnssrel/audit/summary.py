"""The receiver audit as a whole: corrections, k fit, positions per hypothesis, verdict.

:func:`audit_log` runs the stages on an observation Dataset and navigation data;
:func:`audit_summary` turns the results into the summary dictionary of the
``gnssrel audit`` command, with exactly these keys (more are added beside them):

    observations {n_epochs, n_sat, systems}
    relativity_k {<system>: {k, sigma, rms_m {applied, omitted, reversed, doubled}}}
    position {reference, median_error_3d_m, median_error_3d_m_without_periodic}
    receiver_verdict (a string when receiver fixes or a receiver clock table were given, else None)

The receiver verdict joins, with "; ", the fixes verdict (:mod:`gnssrel.audit.firmware`)
and the clock-table verdict (:func:`gnssrel.clocks.firmware.check_receiver_clocks`,
one status per system).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from gnssrel.audit import firmware
from gnssrel.audit.corrections import corrections_table
from gnssrel.audit.observables import prepare_observations, stage_drops
from gnssrel.audit.positioning import position_errors_3d_m, single_point_positions
from gnssrel.audit.relativity_fit import relativity_k
from gnssrel.clocks.firmware import check_receiver_clocks


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
              receiver_clocks: pd.DataFrame | None = None, weighting: str = "elevation",
              rule: str = "post") -> AuditResult:
    """Run the receiver audit on one log (see the module text).

    ``precise``: None or ``{"orbits": SP3 Dataset, "clocks": Dataset with clock_s}``
    (:func:`gnssrel.audit.observables.prepare_observations`); ``receiver_clocks``: a table of
    :func:`gnssrel.io.receiver_clocks.read_receiver_clocks`, checked over the log's time span.
    ``rule``: the broadcast record-selection rule, ``"post"`` or ``"receiver"``.
    """
    if receiver_position_ecef_m is not None:
        reference, ref = "given", np.asarray(receiver_position_ecef_m, float)
    elif obs_ds.attrs.get("position") is not None and np.linalg.norm(obs_ds.attrs["position"]) > 6.0e6:
        reference, ref = "header", np.asarray(obs_ds.attrs["position"], float)
    else:
        reference, ref = "none", None
    obs = prepare_observations(obs_ds, nav, systems, precise=precise, rule=rule)
    iono = getattr(nav, "header", {}).get("ionosphere")
    times = obs_ds["time"].values
    hypotheses = dict(firmware.HYPOTHESES) if fixes is not None else \
        {k: firmware.HYPOTHESES[k] for k in ("applied", "omitted")}
    used_in_fix: dict = {}            # the "applied" fix says which observations were used
    positions = {name: single_point_positions(obs, times.size, times, terms=terms,
                                              elevation_mask_deg=elevation_mask_deg,
                                              initial_ecef_m=ref, ionosphere_header=iono,
                                              weighting=weighting,
                                              diagnostics=used_in_fix if name == "applied" else None)
                 for name, terms in hypotheses.items()}
    if ref is None:                       # no position known: the corrections use our own median fix
        ref = np.nanmedian(positions["applied"][["x_m", "y_m", "z_m"]].to_numpy(), axis=0)
    corrections = corrections_table(obs, ref, iono)
    fits = relativity_k(corrections, elevation_mask_deg=elevation_mask_deg)
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
                              "ephemeris_rows": _rows_by_system(obs)})


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
        return f"{k:.3f} (sigma < 0.001)" if sigma < 1e-3 else f"{k:.3f} +- {sigma:.3f}"

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
                "weighting": result.extra.get("weighting", "elevation")}
    if result.reference != "none":
        for key, name in (("median_error_3d_m", "applied"), ("median_error_3d_m_without_periodic", "omitted")):
            err = position_errors_3d_m(result.positions[name], result.reference_ecef_m)
            position[key] = float(np.nanmedian(err)) if np.isfinite(err).any() else None
        position["n_epochs_solved"] = int(np.isfinite(
            position_errors_3d_m(result.positions["applied"], result.reference_ecef_m)).sum())
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
    if result.clock_check is not None:
        summary["receiver_clocks"] = result.clock_check
    if result.firmware is not None:
        summary["receiver_fixes"] = {k: result.firmware[k] for k in ("median_distance_m", "n_matched",
                                                                      "closest", "margin_m")}
    return summary


def per_epoch_errors(result: AuditResult) -> pd.DataFrame:
    """Per-epoch 3-D error against the reference for every computed hypothesis (the table behind
    the position figures: a whole-day average would hide the periodic term)."""
    out = pd.DataFrame({"time": result.positions["applied"]["time"].to_numpy()})
    if result.reference_ecef_m is None:
        return out
    for name, pos in result.positions.items():
        out[f"error_3d_m_{name.replace('-', '_')}"] = position_errors_3d_m(pos, result.reference_ecef_m)
    return out
