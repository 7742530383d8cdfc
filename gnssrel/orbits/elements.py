"""Precise states carrying the broadcast elements, for the specification form of the periodic term.

F e sqrt(A) sin E (IS-GPS-200 20.3.3.3.3.1) needs the broadcast e, sqrt(A) and E;
precise (SP3) states have positions and velocities only.  :func:`with_broadcast_elements`
copies the broadcast elements of the same epochs onto the precise states (NaN where
a satellite has no broadcast state), so that the relativity stage compares the
specification form with -2 r.v/c^2 of the precise orbit.
"""

from __future__ import annotations

import xarray as xr

__all__ = ["BROADCAST_ELEMENTS", "with_broadcast_elements"]

BROADCAST_ELEMENTS = ("eccentricity", "sqrt_a_sqrt_m", "eccentric_anomaly_rad", "inclination_rad",
                      "argument_of_latitude_rad")
"""The broadcast-state variables the closed forms of the periodic and J2 terms read."""


def with_broadcast_elements(states: xr.Dataset, broadcast: xr.Dataset) -> xr.Dataset:
    """``states`` (time, sv) with the BROADCAST_ELEMENTS of ``broadcast`` (same epochs) added.

    ``broadcast``: broadcast states on the same ``time`` values; satellites of ``states``
    it does not hold get NaN elements (the relativity stage then uses osculating ones).
    Returns a new Dataset; ``states`` is not changed.
    """
    out = states.copy()
    aligned = broadcast[list(BROADCAST_ELEMENTS)].reindex(sv=states["sv"].values)
    for name in BROADCAST_ELEMENTS:
        out[name] = aligned[name]
    return out
