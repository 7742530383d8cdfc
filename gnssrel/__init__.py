"""gnssrel: relativity on every GNSS satellite clock and signal path.

The analysis, stage by stage (each takes and returns the data model of DEVELOPERS.md;
``help(gnssrel.<name>)`` gives the units and shapes)::

    nav = gnssrel.read_navigation("BRDC.rnx")              # NavigationData: .ephemerides[letter] tables
    obs = gnssrel.read_observations("SITE.crx.gz")         # xarray (time, sv), one variable per observable
    sp3 = gnssrel.read_sp3(["A.SP3", "B.SP3"])              # xarray: position_ecef_m, clock_s
    clk = gnssrel.read_rinex_clock("A.CLK")                 # xarray: clock_s (time, sv)
    atx = gnssrel.read_antex("igs20.atx")                   # AntexData: .satellite(prn, t), .receiver(type)
    states = gnssrel.broadcast_states(nav, obs.time.values)  # positions, velocities, status (time, sv)
    precise = gnssrel.precise_states(sp3, obs.time.values)  # the same, interpolated from SP3
    terms = gnssrel.relativity_terms(states, nav)           # periodic, J2, rates, proper time (time, sv)
    gnssrel.relativity_summary(terms)                       # per satellite and system (dict)
    clocks = gnssrel.compare_clocks(nav, clk)               # (table, summary, states): precise - broadcast
    audit = gnssrel.audit_log(obs, nav)                     # .corrections, .positions, .summary, .ledger
    content = gnssrel.analyse(["BRDC.rnx"], obs_paths=["SITE.crx.gz"])  # the whole chain on files
    gnssrel.write_report(content, "report-folder")          # HTML, figures, tables, summary.json

Stages: read_navigation, read_observations, read_sp3, read_rinex_clock, read_antex (readers);
broadcast_states, precise_states (orbits); relativity_terms, relativity_summary
(relativity); compare_clocks (clocks); audit_log (a receiver log); analyse (all of
them on files); write_report (the HTML report).

Package-wide conventions
------------------------
* SI units; the unit is in every name where the type cannot carry it
  (``clock_bias_s``, ``position_ecef_m``, ``periodic_icd_s``).
* Times are ``numpy.datetime64[ns]`` on GPST unless a name says otherwise;
  readers convert the file's scale (BDT, GLONASST, UTC) at the edge.
* Positions are Earth-centred Earth-fixed (ECEF) unless a name says ``eci``.
* Satellites are named by the RINEX convention: ``G05``, ``E11``, ``C20``,
  ``R07``, ``J02``.
* Per-epoch, per-satellite results live on one (time, sv) grid in xarray
  Datasets; tables handed to users are long pandas DataFrames.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

_PUBLIC = {
    "read_navigation": "gnssrel.io.rinex_nav",
    "read_observations": "gnssrel.io.rinex_obs",
    "read_sp3": "gnssrel.io.sp3",
    "read_rinex_clock": "gnssrel.io.rinex_clock",
    "read_antex": "gnssrel.io.antex",
    "broadcast_states": "gnssrel.orbits.broadcast",
    "precise_states": "gnssrel.orbits.precise",
    "relativity_terms": "gnssrel.pipeline.stages",
    "relativity_summary": "gnssrel.pipeline.stages",
    "compare_clocks": "gnssrel.pipeline.stages",
    "audit_log": "gnssrel.pipeline.stages",
    "analyse": "gnssrel.pipeline.analysis",
    "write_report": "gnssrel.report.builder",
}
"""Public name -> the module that defines it."""

__all__ = ["__version__", "analyse", "audit_log", "broadcast_states", "compare_clocks", "precise_states",
           "read_antex", "read_navigation", "read_observations", "read_rinex_clock", "read_sp3", "relativity_summary",
           "relativity_terms", "write_report"]


def __getattr__(name):
    # Lazy imports: `import gnssrel` and `gnssrel --help` stay fast (no xarray, pandas or
    # matplotlib until a stage is used), and each stage loads only its own dependencies.
    if name in _PUBLIC:
        value = getattr(importlib.import_module(_PUBLIC[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'gnssrel' has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))
