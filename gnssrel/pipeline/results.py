"""The results of a whole analysis, gathered in one place: what the report is made from.

:func:`gnssrel.pipeline.analysis.analyse` fills a :class:`ReportContent`; the figure,
table and HTML modules of :mod:`gnssrel.report` only read it.  Optional parts are None when
their input was not given (no precise files, no observation logs, ...), and the
report leaves out what it cannot show.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import xarray as xr


@dataclass
class ReceiverFindings:
    """Everything found about one receiver: its log's audit, its fixes, its clock table."""

    name: str
    observations_path: str | None = None
    fixes_path: str | None = None
    clocks_path: str | None = None
    audit: object | None = None                 # gnssrel.audit.summary.AuditResult
    audit_summary: dict | None = None
    position_errors: pd.DataFrame | None = None  # per_epoch_errors(audit)
    fixes: pd.DataFrame | None = None
    fixes_error_3d_m: np.ndarray | None = None   # the receiver's own fixes against the reference
    clock_rows: pd.DataFrame | None = None
    clock_check: dict | None = None
    clock_table: pd.DataFrame | None = None     # the clock-table rows checked (in the window)
    clock_series: pd.DataFrame | None = None    # the receiver's own clock series (--receiver-clock-bias)
    verdict: dict = field(default_factory=dict)  # gnssrel.pipeline.verdicts.receiver_verdict


@dataclass
class ReportContent:
    """Every stage's results on one set of inputs (None where an input was not given)."""

    title: str
    relativity: xr.Dataset                      # relativity_terms on broadcast states
    relativity_summary: dict
    inputs: dict[str, list[str]] = field(default_factory=dict)
    description: str | None = None
    orbit_table: pd.DataFrame | None = None
    orbit_summary: dict | None = None
    orbit_differences: pd.DataFrame | None = None  # per_epoch_differences: broadcast - precise, RAC per epoch
    clock_table: pd.DataFrame | None = None
    clock_summary: dict | None = None
    clock_source: str | None = None
    receivers: list[ReceiverFindings] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    summary: dict = field(default_factory=dict)
    accounting: dict | None = None              # Ledger.as_dict(): every record read, used or dropped

    @property
    def time_span(self) -> tuple[np.datetime64, np.datetime64]:
        t = self.relativity["time"].values
        return t[0], t[-1]
