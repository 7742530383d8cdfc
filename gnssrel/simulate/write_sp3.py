"""SP3-d precise orbit and clock writer (position records only).

Layout of "The Extended Standard Product 3 Orbit Format (SP3-d)", IGS, 2016: header lines
1-2 (``#dP`` / ``##``), satellite id (``+``) and accuracy (``++``) lines of 17 fields each
(at least 5 of each), ``%c``/``%f``/``%i`` lines, ``/*`` comments, then per epoch a ``*``
line and ``P`` records ``A1,A3,4F14.6`` (km, km, km, microseconds).  Missing clocks are
999999.999999.
"""

from __future__ import annotations

import numpy as np

from gnssrel.simulate.textfile import calendar, write_lines
from gnssrel.timescales import seconds_between, to_week_seconds

BAD_CLOCK_US = 999999.999999
MJD_ORIGIN = np.datetime64("1858-11-17T00:00:00", "ns")


def _epoch_fields(t) -> str:
    y, mo, d, h, mi, s = calendar(t)
    return f"{y:4d} {mo:2d} {d:2d} {h:2d} {mi:2d} {s:11.8f}"


def sp3_text(times, sv, position_ecef_m, clock_s, agency: str, comments=(),
             frame: str = "IGS20", accuracy_exponent: int = 4) -> list[str]:
    """Lines of an SP3-d file. ``position_ecef_m`` (n_t, n_sat, 3), ``clock_s`` (n_t, n_sat)."""
    times = np.asarray(times, dtype="datetime64[ns]")
    n_t, n_sat = len(times), len(sv)
    interval = seconds_between(times[1], times[0]) if n_t > 1 else 0.0
    week, sow = to_week_seconds(times[:1], "GPST")
    since_mjd0_s = seconds_between(times[0], MJD_ORIGIN)
    mjd = int(since_mjd0_s // 86400)
    fraction = (since_mjd0_s - 86400 * mjd) / 86400.0
    out = [f"#dP{_epoch_fields(times[0])} {n_t:7d} ORBIT {frame:5s} FIT {agency:4s}",
           f"## {int(week[0]):4d} {sow[0]:15.8f} {interval:14.8f} {mjd:5d} {fraction:15.13f}"]
    n_lines = max(5, -(-n_sat // 17))
    ids = list(sv) + ["  0"] * (17 * n_lines - n_sat)
    acc = [f"{accuracy_exponent:3d}"] * n_sat + ["  0"] * (17 * n_lines - n_sat)
    for k in range(n_lines):
        head = f"+  {n_sat:3d}   " if k == 0 else "+        "
        out.append(head + "".join(ids[17 * k:17 * k + 17]))
    for k in range(n_lines):
        out.append("++       " + "".join(acc[17 * k:17 * k + 17]))
    out += ["%c M  cc GPS ccc cccc cccc cccc cccc ccccc ccccc ccccc ccccc",
            "%c cc cc ccc ccc cccc cccc cccc cccc ccccc ccccc ccccc ccccc",
            "%f  1.2500000  1.025000000  0.00000000000  0.000000000000000",
            "%f  0.0000000  0.000000000  0.00000000000  0.000000000000000",
            "%i    0    0    0    0      0      0      0      0         0",
            "%i    0    0    0    0      0      0      0      0         0"]
    comments = list(comments) + ["/*"] * max(0, 4 - len(comments))
    out += [c if c.startswith("/*") else f"/* {c}"[:80] for c in comments]
    pos_km = np.asarray(position_ecef_m) / 1000.0
    clk_us = np.where(np.isfinite(clock_s), np.asarray(clock_s) * 1e6, BAD_CLOCK_US)
    for i, t in enumerate(times):
        out.append(f"*  {_epoch_fields(t)}")
        out += [f"P{s}{pos_km[i, j, 0]:14.6f}{pos_km[i, j, 1]:14.6f}{pos_km[i, j, 2]:14.6f}"
                f"{clk_us[i, j]:14.6f}" for j, s in enumerate(sv)]
    out.append("EOF")
    return out


def write_sp3(path, times, sv, position_ecef_m, clock_s, agency: str, comments=()):
    """Write an SP3-d file atomically; returns the path."""
    return write_lines(path, sp3_text(times, sv, position_ecef_m, clock_s, agency, comments))
