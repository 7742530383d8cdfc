"""RINEX 3.04 observation file writer.

Layout of RINEX 3.04 (IGS/RTCM, 2018) section 5 and Tables A1-A3: header labels in column
61; epoch line ``'>',1X,I4,4(1X,I2.2),F11.7,2X,I1,I3``; one line per satellite ``A3`` then
per observable ``F14.3,I1,I1`` (value, loss of lock, signal strength 1-9), blank when absent.
The loss-of-lock digit is written where ``lli`` gives a non-zero flag (bit 0: lost lock between the
previous and this observation, a cycle slip is possible; RINEX 3.04 5.7), blank otherwise.
"""

from __future__ import annotations

import numpy as np

from gnssrel.simulate.textfile import calendar, header_line, write_lines


def strength_index(snr_dbhz: np.ndarray) -> np.ndarray:
    """RINEX signal strength 1-9 from dB-Hz (RINEX 3.04 5.7: about 6 dB-Hz per step)."""
    return np.clip(np.floor(np.asarray(snr_dbhz) / 6.0), 1, 9).astype(int)


def _time_line(t, label):
    y, mo, d, h, mi, s = calendar(t)
    return header_line(f"{y:6d}{mo:6d}{d:6d}{h:6d}{mi:6d}{s:13.7f}     GPS", label)


def observation_text(times, sv, observables: dict, obs_types: dict, header: dict, lli=None) -> list[str]:
    """Lines of the observation file.

    ``observables``: code -> (n_t, n_sat) values (NaN = not observed); ``obs_types``:
    letter -> list of codes; ``header``: program, run_by, date, comments, marker, marker_number,
    observer, agency, receiver_serial, receiver_type, receiver_version, antenna_serial,
    antenna_type, position_ecef_m, interval_s, leap_seconds, and optionally antenna_delta_hen_m (the
    antenna reference point above the marker and its east/north offsets, m; default zeros).
    ``lli``: optional code -> (n_t, n_sat) int loss-of-lock flags.
    """
    h = header
    x, y, z = h["position_ecef_m"]
    out = [header_line(f"{'3.04':>9}{'':11}{'OBSERVATION DATA':<20}M", "RINEX VERSION / TYPE"),
           header_line(f"{h['program']:<20}{h['run_by']:<20}{h['date']:<20}", "PGM / RUN BY / DATE")]
    out += [header_line(c, "COMMENT") for c in h.get("comments", ())]
    out += [header_line(h["marker"], "MARKER NAME"),
            header_line(h["marker_number"], "MARKER NUMBER"),
            header_line("GEODETIC", "MARKER TYPE"),
            header_line(f"{h['observer']:<20}{h['agency']:<40}", "OBSERVER / AGENCY"),
            header_line(f"{h['receiver_serial']:<20}{h['receiver_type']:<20}{h['receiver_version']:<20}",
                        "REC # / TYPE / VERS"),
            header_line(f"{h['antenna_serial']:<20}{h['antenna_type']:<16}NONE", "ANT # / TYPE"),
            header_line(f"{x:14.4f}{y:14.4f}{z:14.4f}", "APPROX POSITION XYZ"),
            header_line("".join(f"{v:14.4f}" for v in h.get("antenna_delta_hen_m", (0.0, 0.0, 0.0))),
                        "ANTENNA: DELTA H/E/N")]
    for letter, codes in obs_types.items():
        out.append(header_line(f"{letter}  {len(codes):3d}" + "".join(f" {c}" for c in codes),
                               "SYS / # / OBS TYPES"))
    out += [header_line("DBHZ", "SIGNAL STRENGTH UNIT"),
            header_line(f"{h['interval_s']:10.3f}", "INTERVAL"),
            _time_line(times[0], "TIME OF FIRST OBS"),
            _time_line(times[-1], "TIME OF LAST OBS"),
            header_line(f"{0:6d}", "RCV CLOCK OFFS APPL")]
    for letter, codes in obs_types.items():
        out += [header_line(f"{letter} {c} {0.0:8.5f}", "SYS / PHASE SHIFT") for c in codes if c[0] == "L"]
    out += [header_line(f"{h['leap_seconds']:6d}", "LEAP SECONDS"), header_line("", "END OF HEADER")]
    out += _body(times, sv, observables, obs_types, lli or {})
    return out


def _body(times, sv, observables, obs_types, lli) -> list[str]:
    letters = np.array([s[0] for s in sv])
    # Per satellite, the (n_t, n_obs) value matrix of its system's observable list.
    lines = []
    per_sat = []
    for j, s in enumerate(sv):
        codes = obs_types[letters[j]]
        values = np.stack([observables[c][:, j] for c in codes], axis=1)
        snr = observables["S" + codes[0][1:]][:, j]
        flags = np.stack([lli[c][:, j] if c in lli else np.zeros(len(values), int) for c in codes], axis=1)
        per_sat.append((codes, values, snr, flags))
    for i, t in enumerate(np.asarray(times, dtype="datetime64[ns]")):
        rows = []
        for j, s in enumerate(sv):
            codes, values, snr, flags = per_sat[j]
            if not np.isfinite(values[i]).any():
                continue
            ssi = strength_index(snr[i]) if np.isfinite(snr[i]) else 0
            fields = []
            for c, v, flag in zip(codes, values[i], flags[i]):
                if not np.isfinite(v):
                    fields.append(" " * 16)
                else:
                    fields.append(f"{v:14.3f}" + (str(int(flag)) if flag else " ") + (str(ssi) if c[0] != "S" else " "))
            rows.append((s + "".join(fields)).rstrip())
        y, mo, d, hh, mi, sec = calendar(t)
        lines.append(f"> {y:4d} {mo:02d} {d:02d} {hh:02d} {mi:02d}{sec:11.7f}  0{len(rows):3d}")
        lines += rows
    return lines


def write_observations(path, times, sv, observables, obs_types, header, lli=None):
    """Write a RINEX 3.04 observation file atomically; returns the path."""
    return write_lines(path, observation_text(times, sv, observables, obs_types, header, lli))
