"""The stages of an analysis, one call each, taking and returning the data model.

Shapes: ``n_t`` epochs (GPST ``datetime64[ns]``), ``n_sv`` satellites (RINEX names);
state and term Datasets are on the (time, sv) grid of DEVELOPERS.md, with units in
the variable names (``_s`` seconds, ``_m`` metres, rates dimensionless s/s).
The command line, the report, the demo and the tests all call these.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
import pandas as pd
import xarray as xr

from gnssrel.accounting import Ledger
from gnssrel.audit import summary as _audit
from gnssrel.audit.receiver_clock import receiver_clock_series
from gnssrel.clocks.compare import compare_clocks as _compare_clocks
from gnssrel.clocks.compare import select_epochs
from gnssrel.orbits.broadcast import broadcast_states
from gnssrel.orbits.elements import with_broadcast_elements
from gnssrel.orbits.selection import DEFAULT_RULE
from gnssrel.pipeline.accounting import audit_accounting
from gnssrel.relativity import engine

__all__ = ["ClockComparison", "LogAudit", "audit_log", "compare_clocks", "relativity_summary", "relativity_terms"]

relativity_summary = engine.relativity_summary


def relativity_terms(states: xr.Dataset, nav=None, rule: str = DEFAULT_RULE,
                     include_unhealthy: bool = False) -> xr.Dataset:
    """Every relativistic clock term of every satellite at every epoch of ``states``.

    ``states``: a state Dataset (broadcast or precise): ``position_ecef_m`` and
    ``velocity_ecef_m_per_s`` (time, sv, axis) in m and m/s, GPST times.  Precise states
    lack the broadcast elements (e, sqrt(A), E) the specification form F e sqrt(A) sin E
    needs: with ``nav`` given, they are taken from the broadcast states of the same epochs
    (``rule``/``include_unhealthy`` choose the records; see gnssrel.orbits.selection),
    else osculating elements of the state stand in.

    Returns the states with, on (time, sv): ``periodic_icd_s``, ``periodic_state_s``,
    ``periodic_diff_s``, ``j2_periodic_s`` (s), ``rate_velocity``, ``rate_gravity``,
    ``rate_total`` (dtau/dTT - 1, s/s), ``proper_time_offset_s`` (s); and
    ``user_applies_periodic`` (sv).  See :mod:`gnssrel.relativity.engine`; its
    per-satellite summary: :func:`relativity_summary`.
    """
    if nav is not None and "eccentricity" not in states:
        letters = "".join(dict.fromkeys(str(s)[0] for s in states["sv"].values))
        broadcast = broadcast_states(nav, states["time"].values, systems=letters,
                                     include_unhealthy=include_unhealthy, rule=rule)
        states = with_broadcast_elements(states, broadcast)
    return engine.relativity_terms(states)


class ClockComparison(NamedTuple):
    """Broadcast against precise clocks (unpacks as ``table, summary, states``)."""

    table: pd.DataFrame       # one row per satellite and epoch with a residual (precise - broadcast, s)
    summary: dict             # by_system / satellites (gnssrel.clocks.compare), std in ns, k of the periodic term
    states: xr.Dataset | None  # the broadcast states at the compared epochs (None when no epoch)


def compare_clocks(nav, precise: xr.Dataset, systems=None, start=None, end=None, step_s: float | None = None,
                   source: str = "precise clocks", rule: str = DEFAULT_RULE, include_unhealthy: bool = False,
                   datum_method: str = "robust") -> ClockComparison:
    """Broadcast against precise satellite clocks on the precise epochs in [start, end].

    ``precise``: a Dataset with ``clock_s`` (time, sv), seconds (SP3 or RINEX clock,
    :func:`gnssrel.pipeline.inputs.read_precise_clocks`); ``systems``: letters or None (all
    present in both); ``start``/``end``: GPST datetime64 or None; ``step_s``: keep only
    epochs on multiples of it; ``datum_method``: ``"robust"`` or ``"epoch-median"``.
    The broadcast states of those epochs are built once, with ``rule``, and returned with
    the table and summary of :func:`gnssrel.clocks.compare.compare_clocks`.
    """
    t = precise["time"].values
    keep = t[select_epochs(t, start, end, step_s)]
    states = broadcast_states(nav, keep, systems=systems, include_unhealthy=include_unhealthy,
                              rule=rule) if keep.size else None
    table, summary = _compare_clocks(nav, precise, systems=systems, start=start, end=end, step_s=step_s,
                                     datum_method=datum_method, states=states, precise_source=source,
                                     include_unhealthy=include_unhealthy)
    return ClockComparison(table, summary, states)


@dataclass
class LogAudit:
    """The audit of one receiver log: its tables, its summary and its accounting."""

    result: _audit.AuditResult   # corrections, k fits, positions per hypothesis, firmware checks
    summary: dict                 # the ``gnssrel audit`` summary, with "accounting" (a Ledger dict)
    ledger: Ledger                # what was read, used or dropped with a reason

    @property
    def corrections(self) -> pd.DataFrame:
        """One row per code observation with every correction, m and s."""
        return self.result.corrections

    @property
    def positions(self) -> dict[str, pd.DataFrame]:
        """Per-epoch single-point positions (ECEF m, clock m) per hypothesis ("applied", "omitted", ...)."""
        return self.result.positions

    def position_errors(self) -> pd.DataFrame:
        """Per-epoch 3-D error against the reference position for each hypothesis, m."""
        return _audit.per_epoch_errors(self.result)

    def receiver_clock(self) -> pd.DataFrame:
        """Per-epoch receiver clock of the "applied" fixes: ``time`` (GPST), ``clock_bias_s``,
        ``clock_drift_s_per_s``, ``clock_jump_s`` (:mod:`gnssrel.audit.receiver_clock`)."""
        return receiver_clock_series(self.result.positions["applied"])


def audit_log(obs: xr.Dataset, nav, systems=None, precise: dict | None = None, fixes: pd.DataFrame | None = None,
              receiver_clocks: pd.DataFrame | None = None, receiver_position_ecef_m=None,
              elevation_mask_deg: float = 10.0, weighting: str = "auto", rule: str = DEFAULT_RULE,
              receiver_clock_verdict: str | None = None, count_navigation: bool = True,
              counted_clock_rows: pd.DataFrame | None = None, frequencies: str = "auto",
              smooth_code_s: float | None = None, fix_options: dict | None = None) -> LogAudit:
    """Audit one receiver log: corrections per observation, positions, the k of the periodic term.

    ``obs``: observation Dataset (time, sv) of :func:`gnssrel.read_observations`; ``nav``:
    NavigationData; ``systems``: letters or None; ``precise``: None or
    ``{"orbits": SP3 Dataset, "clocks": Dataset with clock_s, "clock_files": bool}``
    (:func:`gnssrel.pipeline.inputs.read_precise`); ``fixes``: the receiver's own fixes
    (:func:`gnssrel.io.receiver_fixes.read_receiver_fixes`); ``receiver_clocks``: its
    satellite-clock table, checked over the log's span; ``receiver_position_ecef_m``: (3,) m,
    default the header's; ``elevation_mask_deg``: degrees.

    The accounting counts the navigation records too unless ``count_navigation`` is False
    (a report counts them once for every stage); ``counted_clock_rows``: a clock table
    checked elsewhere whose rows are counted here.  ``receiver_clock_verdict`` replaces
    the clock-table verdict of the summary.  ``frequencies`` ("auto", "single", "dual") and
    ``smooth_code_s`` (carrier-smoothing window, s, or None): the codes used (issue 13).
    ``fix_options``: the residual test and gates of the fixes (keywords of
    :func:`gnssrel.audit.positioning.single_point_positions`: ``false_alarm``, ``max_pdop``, ...).
    """
    result = _audit.audit_log(obs, nav, receiver_position_ecef_m=receiver_position_ecef_m, systems=systems,
                              elevation_mask_deg=elevation_mask_deg, fixes=fixes, precise=precise,
                              weighting=weighting, rule=rule, receiver_clocks=receiver_clocks,
                              frequencies=frequencies, smooth_code_s=smooth_code_s, fix_options=fix_options)
    summary = _audit.audit_summary(result, receiver_clock_verdict=receiver_clock_verdict)
    counted = None
    if precise is not None:     # the clocks apart only when clock files gave them
        counted = {"orbits": precise["orbits"], "clocks": precise["clocks"] if precise.get("clock_files") else None}
    letters = list(systems) if systems else sorted({str(s)[0] for s in np.asarray(obs["sv"].values)})
    ledger = audit_accounting(result, obs, nav, letters, precise=counted, fixes=fixes,
                              receiver_clocks=receiver_clocks if counted_clock_rows is None else counted_clock_rows,
                              navigation=count_navigation)
    summary["accounting"] = ledger.as_dict()
    return LogAudit(result, summary, ledger)
