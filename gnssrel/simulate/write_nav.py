"""RINEX 3.04 mixed navigation file writer (GPS LNAV, Galileo F/NAV, BeiDou D1).

Column layout of RINEX 3.04 (IGS/RTCM, 2018) section 6 and Tables A6 (header), A8 (GPS),
A10 (Galileo), A14 (BeiDou): the first record line is ``A1,I2.2,1X,I4,5(1X,I2.2),3D19.12``,
the next seven ``4X,4D19.12``; written here with an E exponent and 12-digit mantissa
(``%19.12E``), as RINEX 3 allows.  Epochs are in each system's own time (BDT for BeiDou).
Input: the contract ephemeris tables (``NavigationData.ephemerides`` column names).
"""

from __future__ import annotations

import numpy as np

from gnssrel.simulate.textfile import calendar, header_line, write_lines
from gnssrel.timescales import from_gpst, seconds_between

BLANK = " " * 19
SYSTEM_ORDER = "GEC"


def _f(v) -> str:
    return BLANK if v is None else f"{float(v):19.12E}"


def _line(*values) -> str:
    return "    " + "".join(_f(v) for v in values)


def _record_lines(row, letter: str) -> list[str]:
    scale = {"G": "GPST", "E": "GST", "C": "BDT"}[letter]
    toc_sys = from_gpst(np.array([row.toc]), scale)[0]
    y, mo, d, h, mi, s = calendar(toc_sys)
    tx_sow = row.toe_sow_s - seconds_between(row.toe, row.transmission_time)
    first = f"{row.sv} {y:04d} {mo:02d} {d:02d} {h:02d} {mi:02d} {round(s):02d}" \
        + _f(row.clock_bias_s) + _f(row.clock_drift_s_per_s) + _f(row.clock_drift_rate_s_per_s2)
    lines = [first,
             _line(row.iode, row.crs_m, row.delta_n_rad_per_s, row.mean_anomaly_rad),
             _line(row.cuc_rad, row.eccentricity, row.cus_rad, row.sqrt_a_sqrt_m),
             _line(row.toe_sow_s, row.cic_rad, row.omega0_rad, row.cis_rad),
             _line(row.inclination_rad, row.crc_m, row.perigee_argument_rad, row.omega_dot_rad_per_s)]
    if letter == "G":
        lines += [_line(row.idot_rad_per_s, 1.0, row.week, 0.0),
                  _line(row.accuracy_m, row.health, row.tgd_s, row.iodc),
                  _line(tx_sow, row.fit_interval_h)]
    elif letter == "E":
        lines += [_line(row.idot_rad_per_s, row.data_sources, row.week, None),
                  _line(row.accuracy_m, row.health, row.bgd_e5a_e1_s, row.bgd_e5b_e1_s),
                  _line(tx_sow)]
    else:
        lines += [_line(row.idot_rad_per_s, None, row.week, None),
                  _line(row.accuracy_m, row.health, row.tgd1_b1_b3_s, row.tgd2_b2_b3_s),
                  _line(tx_sow, row.aodc)]
    return [ln.rstrip() if i == 0 else ln for i, ln in enumerate(lines)]


def navigation_text(ephemerides: dict, header: dict) -> list[str]:
    """Lines of the navigation file for ``{letter: DataFrame}`` and a header description:
    ``program``, ``run_by``, ``date`` (text), ``comments``, ``klobuchar_alpha``,
    ``klobuchar_beta``, ``nequick_ai``, ``leap_seconds``, ``week`` and ``sow`` for the
    time-system lines."""
    out = [header_line("     3.04           N: GNSS NAV DATA    M: MIXED", "RINEX VERSION / TYPE"),
           header_line(f"{header['program']:<20}{header['run_by']:<20}{header['date']:<20}",
                       "PGM / RUN BY / DATE")]
    out += [header_line(c, "COMMENT") for c in header.get("comments", ())]
    ion = lambda name, vals: header_line(
        f"{name:<4} " + "".join(f"{v:12.4E}" for v in vals), "IONOSPHERIC CORR")
    out += [ion("GAL", tuple(header["nequick_ai"]) + (0.0,)),
            ion("GPSA", header["klobuchar_alpha"]), ion("GPSB", header["klobuchar_beta"])]
    for name in ("GAGP", "GPUT"):
        # Galileo and BeiDou are on GPST here (GST = GPST, BDT = GPST - 14 s exactly); UTC
        # offsets are integer seconds (the leap seconds), so every polynomial is zero.
        out.append(header_line(f"{name:<4} {0.0:17.10E}{0.0:16.9E} {int(header['sow']):6d} "
                               f"{int(header['week']):4d}", "TIME SYSTEM CORR"))
    out.append(header_line(f"{header['leap_seconds']:6d}", "LEAP SECONDS"))
    out.append(header_line("", "END OF HEADER"))
    for letter in SYSTEM_ORDER:
        table = ephemerides.get(letter)
        if table is None:
            continue
        for row in table.itertuples(index=False):
            out += _record_lines(row, letter)
    return out


def write_navigation(path, ephemerides: dict, header: dict):
    """Write the RINEX 3.04 navigation file atomically; returns the path."""
    return write_lines(path, navigation_text(ephemerides, header))
