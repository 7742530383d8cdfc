"""NMEA 0183 GGA position-fix writer (with one ZDA sentence giving the date first).

Sentence layout of NMEA 0183 v4.10 (GGA: UTC hhmmss.ss, latitude ddmm.mmmmm N/S, longitude
dddmm.mmmmm E/W, fix quality, satellites used, HDOP, altitude above mean sea level M,
geoid separation M, age, station; ZDA: UTC time, day, month, year, zone).  The checksum is
the XOR of every character between '$' and '*', in two hexadecimal digits (NMEA 0183 5.3;
common practice).  Times are UTC, as NMEA requires: GPST minus the leap seconds.
"""

from __future__ import annotations

import numpy as np

from gnssrel.simulate.textfile import calendar, write_lines


def checksum(body: str) -> str:
    """Two-digit hexadecimal XOR of the sentence body (between '$' and '*')."""
    value = 0
    for ch in body.encode("ascii"):
        value ^= ch
    return f"{value:02X}"


def sentence(body: str) -> str:
    return f"${body}*{checksum(body)}"


def _angle(value_deg: float, degree_digits: int, positive: str, negative: str) -> tuple[str, str]:
    hemisphere = positive if value_deg >= 0 else negative
    v = abs(value_deg)
    deg = int(v)
    minutes = round((v - deg) * 60.0, 5)
    if minutes >= 60.0:
        deg, minutes = deg + 1, 0.0
    return f"{deg:0{degree_digits}d}{minutes:08.5f}", hemisphere


def gga_sentences(times_utc, lat_deg, lon_deg, height_m, geoid_separation_m, n_used, hdop,
                  talker: str = "GN") -> list[str]:
    """ZDA (date of the first fix) then one GGA sentence per fix; NaN positions give no fix."""
    y, mo, d, h, mi, s = calendar(times_utc[0])
    out = [sentence(f"{talker}ZDA,{h:02d}{mi:02d}{s:05.2f},{d:02d},{mo:02d},{y:04d},00,00")]
    for t, la, lo, hh, n, dop in zip(times_utc, lat_deg, lon_deg, height_m, n_used, hdop):
        _, _, _, h, mi, s = calendar(t)
        stamp = f"{h:02d}{mi:02d}{s:05.2f}"
        if not np.isfinite(la):
            out.append(sentence(f"{talker}GGA,{stamp},,,,,0,00,,,M,,M,,"))
            continue
        lat_text, ns = _angle(la, 2, "N", "S")
        lon_text, ew = _angle(lo, 3, "E", "W")
        alt = hh - geoid_separation_m
        out.append(sentence(f"{talker}GGA,{stamp},{lat_text},{ns},{lon_text},{ew},1,{int(n):02d},"
                            f"{dop:.1f},{alt:.3f},M,{geoid_separation_m:.2f},M,,"))
    return out


def write_gga(path, times_utc, lat_deg, lon_deg, height_m, geoid_separation_m, n_used, hdop):
    """Write the fixes as NMEA sentences, one per line (CR LF as NMEA specifies is not used:
    plain newlines keep the demo file readable), atomically; returns the path."""
    return write_lines(path, gga_sentences(times_utc, lat_deg, lon_deg, height_m,
                                           geoid_separation_m, n_used, hdop))
