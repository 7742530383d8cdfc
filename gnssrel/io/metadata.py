"""Self-describing outputs: CF attributes for NetCDF and the same as Parquet column metadata.

gnssrel names carry their units (``clock_bias_s``, ``x_m``, ``vx_m_per_s``, ``elevation_deg``;
DEVELOPERS.md, the data model).  :func:`column_attributes` turns a name into the attributes of
the CF conventions (CF-1.10, section 3: ``units`` in UDUNITS spelling, ``long_name``,
``standard_name`` where the CF standard-name table has one), so that xarray, ncdump and
pyarrow show them.  Times are GPST: ``long_name = "GPS time"`` and ``time_scale = "GPST"``
on every time variable, and NetCDF stores them as integer nanoseconds since the GPS epoch
1980-01-06 00:00:00 (:data:`TIME_ENCODING`; GPST counts no leap seconds, as the
proleptic Gregorian calendar of numpy's datetime64 does).
"""

from __future__ import annotations

__all__ = ["CONVENTIONS", "TIME_ENCODING", "column_attributes", "split_hypothesis"]

CONVENTIONS = "CF-1.10"
TIME_ENCODING = {"units": "nanoseconds since 1980-01-06 00:00:00", "calendar": "proleptic_gregorian",
                 "dtype": "int64"}
"""NetCDF encoding of GPST times: the GPS epoch, whole nanoseconds (no rounding of the stored ns)."""

UNIT_SUFFIXES = (                        # longest first: the first match wins
    ("_m_per_s2", "m s-2"), ("_m_per_s", "m s-1"), ("_rad_per_s", "rad s-1"),
    ("_s_per_s2", "s-1"), ("_s_per_s", "1"), ("_us_per_day", "us day-1"), ("_sqrt_m", "m0.5"),
    ("_dbhz", "dB-Hz"), ("_hz", "Hz"), ("_deg", "degree"), ("_rad", "rad"), ("_km", "km"),
    ("_ns", "ns"), ("_ms", "ms"), ("_s", "s"), ("_m", "m"), ("_h", "h"),
)
"""Unit suffixes of gnssrel names (the data model of DEVELOPERS.md) and their UDUNITS spelling."""

LONG_NAMES = {
    "time": "GPS time", "sv": "satellite (RINEX name, e.g. G05)", "system": "GNSS (RINEX letter)",
    "status": "state status (see status_codes)", "axis": "ECEF axis",
    "x_m": "satellite position, ECEF x", "y_m": "satellite position, ECEF y", "z_m": "satellite position, ECEF z",
    "vx_m_per_s": "satellite velocity, ECEF x", "vy_m_per_s": "satellite velocity, ECEF y",
    "vz_m_per_s": "satellite velocity, ECEF z",
    "position_ecef_m": "satellite position, ECEF", "velocity_ecef_m_per_s": "satellite velocity, ECEF",
    "position_eci_m": "satellite position, inertial", "velocity_eci_m_per_s": "satellite velocity, inertial",
    "clock_poly_s": "broadcast satellite clock polynomial", "clock_s": "precise satellite clock offset",
    "periodic_icd_s": "periodic relativistic clock term, F e sqrt(A) sin E (specification form)",
    "periodic_state_s": "periodic relativistic clock term, -2 r.v/c^2 (state form)",
    "periodic_diff_s": "periodic relativistic clock term, specification minus state form",
    "j2_periodic_s": "periodic clock term from the Earth's J2",
    "rate_velocity": "fractional rate of proper time against TT, velocity part",
    "rate_gravity": "fractional rate of proper time against TT, gravity part",
    "rate_total": "fractional rate of proper time against TT (dtau/dTT - 1)",
    "proper_time_offset_s": "satellite proper time minus TT, integral along the orbit",
    "residual_ns": "precise minus broadcast satellite clock after the datum",
    "latitude_deg": "geodetic latitude (WGS-84)", "longitude_deg": "longitude (WGS-84)",
    "height_m": "height above the WGS-84 ellipsoid",
    "east_error_m": "position error, east", "north_error_m": "position error, north",
    "up_error_m": "position error, up", "error_3d_m": "3-D position error against the reference",
}
DIMENSIONLESS = ("rate_velocity", "rate_gravity", "rate_total", "coverage", "eccentricity")
STANDARD_NAMES = {"time": "time", "latitude": "latitude", "longitude": "longitude",
                  "height": "height_above_reference_ellipsoid"}
"""CF standard names for the quantities that have one (CF standard-name table, v84)."""
HYPOTHESES = ("sagnac_omitted", "applied", "omitted", "reversed", "doubled")
"""Hypothesis words in the names of the audit's position columns (gnssrel.audit.firmware.HYPOTHESES)."""
RECEIVER_LONG_NAMES = {"x_m": "receiver position, ECEF x", "y_m": "receiver position, ECEF y",
                       "z_m": "receiver position, ECEF z", "clock_m": "receiver clock offset times c"}


def split_hypothesis(name: str) -> tuple[str, str | None]:
    """``latitude_applied_deg`` -> (``latitude_deg``, ``applied``); ``error_3d_m_omitted`` ->
    (``error_3d_m``, ``omitted``); a name without a hypothesis word -> (name, None)."""
    for h in HYPOTHESES:
        if name.endswith(f"_{h}"):
            return name[: -len(h) - 1], h
        if f"_{h}_" in name:
            return name.replace(f"_{h}_", "_", 1), h
    return name, None


def _units(base: str) -> tuple[str | None, str]:
    """(UDUNITS units or None, the name without its unit suffix)."""
    if base in DIMENSIONLESS or base.startswith("rate_"):
        return "1", base
    for suffix, units in UNIT_SUFFIXES:
        if base.endswith(suffix) and len(base) > len(suffix):
            stem = base[: -len(suffix)]
            if units == "degree" and stem in ("latitude", "longitude"):
                units = "degrees_north" if stem == "latitude" else "degrees_east"
            return units, stem
    return None, base


def column_attributes(name: str, is_time: bool = False) -> dict[str, str]:
    """CF attributes of an output column or variable named by the gnssrel conventions.

    ``is_time``: the values are datetimes (GPST): then long_name "GPS time" (with the name's
    words), standard_name "time" for the time axis and ``time_scale = "GPST"``; the units go
    into the NetCDF encoding (:data:`TIME_ENCODING`), not the attributes.
    """
    name = str(name)
    if is_time:
        attrs = {"long_name": "GPS time" if name == "time" else f"{name.replace('_', ' ')} (GPS time)"}
        if name == "time":
            attrs["standard_name"] = "time"
        attrs["time_scale"] = "GPST"
        return attrs
    base, hypothesis = split_hypothesis(name)
    units, stem = _units(base)
    attrs = {"units": units} if units is not None else {}
    long_name = (hypothesis and RECEIVER_LONG_NAMES.get(base)) or LONG_NAMES.get(base) or stem.replace("_", " ")
    if hypothesis:
        long_name += f", hypothesis '{hypothesis.replace('_', '-')}' (gnssrel.audit.firmware)"
    attrs["long_name"] = long_name
    if stem in STANDARD_NAMES and units is not None:
        attrs["standard_name"] = STANDARD_NAMES[stem]
    return attrs
