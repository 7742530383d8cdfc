"""gnssrel: relativity on every GNSS satellite clock and signal path.

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

__version__ = "0.1.0"

__all__ = [
    "__version__",
    "broadcast_states",
    "precise_states",
    "read_navigation",
    "read_observations",
    "read_rinex_clock",
    "read_sp3",
]


def __getattr__(name):
    # Lazy imports keep `gnssrel --help` fast and let each reader load its own dependencies.
    if name == "read_navigation":
        from gnssrel.io.rinex_nav import read_navigation
        return read_navigation
    if name == "read_observations":
        from gnssrel.io.rinex_obs import read_observations
        return read_observations
    if name == "read_sp3":
        from gnssrel.io.sp3 import read_sp3
        return read_sp3
    if name == "read_rinex_clock":
        from gnssrel.io.rinex_clock import read_rinex_clock
        return read_rinex_clock
    if name == "broadcast_states":
        from gnssrel.orbits.broadcast import broadcast_states
        return broadcast_states
    if name == "precise_states":
        from gnssrel.orbits.precise import precise_states
        return precise_states
    raise AttributeError(f"module 'gnssrel' has no attribute {name!r}")
