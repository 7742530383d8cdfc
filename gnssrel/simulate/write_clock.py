"""RINEX clock 3.04 writer, satellite (AS) records only.

Layout of "RINEX Extensions to Handle Clock Information", version 3.04 (IGS, 8 July 2017):
header labels start in column 66; data records ``A2,1X,A9,1X,I4,4(1X,I2.2),1X,F9.6,1X,I2,
3X,D19.12`` (record type, 9-character name, epoch, number of values, clock bias in s).
"""

from __future__ import annotations

import numpy as np

from gnssrel.simulate.textfile import calendar, header_line, write_lines

LABEL_COLUMN = 66


def _h(content, label):
    return header_line(content, label, LABEL_COLUMN)


def clock_text(times, sv, clock_s, header: dict) -> list[str]:
    """Lines of the clock file; ``clock_s`` (n_t, n_sat), NaN values are left out.

    ``header``: ``program``, ``run_by``, ``date``, ``agency`` (3 letters), ``agency_name``,
    ``comments``, ``leap_seconds``.
    """
    out = [_h(f"{'3.04':<21}C{'':<20}M", "RINEX VERSION / TYPE"),
           _h(f"{header['program']:<21}{header['run_by']:<21}{header['date']:<21}", "PGM / RUN BY / DATE")]
    out += [_h(c, "COMMENT") for c in header.get("comments", ())]
    out += [_h("   GPS", "TIME SYSTEM ID"),
            _h(f"{header['leap_seconds']:6d}", "LEAP SECONDS"),
            _h(f"{1:6d}    AS", "# / TYPES OF DATA"),
            _h(f"{header['agency']:<3}  {header['agency_name']:<55}", "ANALYSIS CENTER"),
            _h(f"{len(sv):6d}", "# OF SOLN SATS")]
    for k in range(0, len(sv), 15):
        out.append(_h("".join(f"{s:<4}" for s in sv[k:k + 15]), "PRN LIST"))
    out.append(_h("", "END OF HEADER"))
    clock_s = np.asarray(clock_s)
    for i, t in enumerate(np.asarray(times, dtype="datetime64[ns]")):
        y, mo, d, h, mi, s = calendar(t)
        stamp = f"{y:4d} {mo:02d} {d:02d} {h:02d} {mi:02d} {s:9.6f}"
        out += [f"AS {name:<9} {stamp}  1   {clock_s[i, j]:19.12E}"
                for j, name in enumerate(sv) if np.isfinite(clock_s[i, j])]
    return out


def write_clock(path, times, sv, clock_s, header: dict):
    """Write a RINEX clock 3.04 file atomically; returns the path."""
    return write_lines(path, clock_text(times, sv, clock_s, header))
