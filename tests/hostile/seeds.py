"""The valid seed inputs of the hostile-input campaign, cut from the invented demo data.

Every seed is a short window of a file in ``sample_logs/`` (invented data that
belongs to the project; see its README), cut so that one command runs in well
under a second, plus RINEX 2.11 navigation and observation texts derived here
from the RINEX 3.04 seeds (GPS only).  Nothing is read from the reference data.

Window: observations, precise clocks, fixes and clock tables 10:00-10:14:30 GPST
(30 epochs); navigation records with reference hour 10, 11 or 12 (file time);
SP3 09:00-11:45 (12 epochs; the interpolation needs 10, so one damaged SP3 epoch
leaves the log without precise orbits: a test of what the messages then say).
"""

from __future__ import annotations

import re
from pathlib import Path

SAMPLE_LOGS = Path(__file__).resolve().parents[2] / "sample_logs"

NAV3 = "KVRP00ZZZ_R_20251621000_03H_MN.rnx"
OBS3 = "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"
SP3 = "KVA0DEMFIN_20251620830_06H_15M_ORB.SP3"
CLK = "KVA0DEMFIN_20251621000_03H_30S_CLK.CLK"
# the seeds carry names that tell their own (shorter) spans
SEED_OBS3 = "KVRP00ZZZ_R_20251621000_15M_30S_MO.rnx"
SEED_SP3 = "KVA0DEMFIN_20251620900_03H_15M_ORB.SP3"
SEED_CLK = "KVA0DEMFIN_20251621000_15M_30S_CLK.CLK"
CSV = "KVRP_satellite_clocks.csv"
NMEA = "KVRP_fixes.nmea"
NAV2 = "kvrp-r2.25n"    # not a standard short name: no span claimed
OBS2 = "kvrp-r2.25o"

# kind -> file name of the seed (the names the commands see)
SEED_NAMES = {"nav3": NAV3, "nav2": NAV2, "obs3": SEED_OBS3, "obs2": OBS2, "sp3": SEED_SP3,
              "clk": SEED_CLK, "csv": CSV, "nmea": NMEA}


def _lines(name: str) -> list[str]:
    return (SAMPLE_LOGS / name).read_text().splitlines(keepends=True)


def _split_header(lines, end_label="END OF HEADER"):
    k = next(i for i, line in enumerate(lines) if end_label in line) + 1
    return lines[:k], lines[k:]


def cut_nav3() -> str:
    """RINEX 3.04 mixed navigation: the records whose epoch (file time) has hour 10, 11 or 12."""
    head, body = _split_header(_lines(NAV3))
    out, keep = [], False
    for line in body:
        if line[:1] != " ":
            keep = line[15:17] in ("10", "11", "12")
        if keep:
            out.append(line)
    return "".join(head + out)


def cut_obs3() -> str:
    """RINEX 3.04 observations of KVRP, 10:00:00-10:14:30 GPST (30 epochs)."""
    head, body = _split_header(_lines(OBS3))
    head = [("  2025     6    11    10    14   30.0000000     GPS         TIME OF LAST OBS\n"
             if "TIME OF LAST OBS" in line else line) for line in head]
    out, keep = [], False
    for line in body:
        if line.startswith(">"):
            keep = line[2:16] == "2025 06 11 10 " and int(line[16:18]) < 15
        if keep:
            out.append(line)
    return "".join(head + out)


def cut_sp3() -> str:
    """SP3-d, 09:00-11:45 (12 epochs of 15 min), every satellite of the file."""
    lines = _lines(SP3)
    k = next(i for i, line in enumerate(lines) if line.startswith("*"))
    head, body = lines[:k], lines[k:]
    out, keep = [], False
    for line in body:
        if line.startswith("*"):
            hh, mm = int(line[14:16]), int(line[17:19])
            keep = (9, 0) <= (hh, mm) <= (11, 45)
        elif line.startswith("EOF"):
            keep = True
        if keep:
            out.append(line)
    n_epochs = sum(line.startswith("*") for line in out)
    first = head[0]
    # line 1: start epoch (cols 4-31) and number of epochs (cols 33-39), SP3-d Table 2
    head[0] = first[:3] + "2025  6 11  9  0  0.00000000" + f"{n_epochs:8d}" + first[39:]
    second = head[1]     # GPS week, seconds of week (cols 4-23) of the first epoch
    head[1] = (second[:8] + f"{(3 * 86400 + 9 * 3600):15.8f}" + second[23:45]
               + f"{9 / 24:15.13f}" + second[60:])   # the MJD fraction of day (cols 46-60)
    return "".join(head + out)


def cut_clk() -> str:
    """RINEX clock 3.04, AS records 10:00:00-10:14:30."""
    head, body = _split_header(_lines(CLK))
    out = [line for line in body
           if line[13:27] == "2025 06 11 10 " and int(line[27:29]) < 15]
    return "".join(head + out)


def cut_csv() -> str:
    """The receiver's satellite clock table, 10:00:00-10:14:30."""
    out = []
    for line in _lines(CSV):
        if line.startswith(("#", "time,")) or line[:14] == "2025-06-11T10:" and int(line[14:16]) < 15:
            out.append(line)
    return "".join(out)


def cut_nmea() -> str:
    """The receiver's fixes: the ZDA sentence and the GGA fixes of 09:59:42-10:14:12 UTC."""
    out = []
    for line in _lines(NMEA):
        if "ZDA" in line[:7]:
            out.append(line)
        elif "GGA" in line[:7]:
            hhmm = line[7:11]
            if "0959" <= hhmm <= "1014":
                out.append(line)
    return "".join(out)


def _d(value: str) -> str:
    return value.replace("E", "D")


def nav3_to_nav2(nav3: str) -> str:
    """RINEX 2.11 GPS navigation text from the GPS records of a RINEX 3.04 seed.

    RINEX 2.11 Table A4: epoch line I2,1X,I2.2,5(1X,I2),F5.1,3D19.12 (the seconds take
    F5.1); orbit lines 3X,4D19.12 (RINEX 3 has 4X); ION ALPHA/BETA as 2X,4D12.4.
    """
    head, body = _split_header(nav3.splitlines(keepends=True))
    iono = {line[:4]: line[5:53] for line in head if "IONOSPHERIC CORR" in line}
    leap = next(line[:6] for line in head if "LEAP SECONDS" in line)
    out = ["     2.11           N: GPS NAV DATA                         RINEX VERSION / TYPE\n",
           "gnssrel-hostile     KVA                 20250611 150000 UTC PGM / RUN BY / DATE\n",
           "INVENTED DEMO DATA: NO REAL STATION, SATELLITE OR AGENCY    COMMENT\n"]
    for key, label in (("GPSA", "ION ALPHA"), ("GPSB", "ION BETA")):
        values = iono[key].split()
        out.append(("  " + "".join(f"{float(v):12.4E}".replace("E", "D") for v in values)).ljust(60)
                   + label + "\n")
    out.append(f"{leap:6s}".ljust(60) + "LEAP SECONDS\n")
    out.append(" " * 60 + "END OF HEADER\n")
    keep = False
    for line in body:
        if line[:1] != " ":
            keep = line[0] == "G"
            if keep:
                prn = int(line[1:3])
                y, mo, d, h, mi, s = (int(v) for v in line[4:23].split())
                out.append(f"{prn:2d} {y % 100:02d}{mo:3d}{d:3d}{h:3d}{mi:3d}{s:5.1f}"
                           + _d(line[23:].rstrip("\n")) + "\n")
            continue
        if keep:
            out.append("   " + _d(line[4:].rstrip("\n")) + "\n")
    return "".join(out)


R3_TO_R2 = {"C1C": "C1", "L1C": "L1", "S1C": "S1", "C2W": "P2", "L2W": "L2", "S2W": "S2"}


def obs3_to_obs2(obs3: str) -> str:
    """RINEX 2.11 GPS observation text from the GPS satellites of a RINEX 3.04 seed.

    RINEX 2.11 Table A1: epoch line 1X,I2.2,4(1X,I2),F11.7,2X,I1,I3,12(A1,I2);
    observations 5(F14.3,I1,I1) per line.
    """
    head, body = _split_header(obs3.splitlines(keepends=True))
    types3 = next(line[7:60].split() for line in head if line.startswith("G") and "OBS TYPES" in line)
    types2 = [R3_TO_R2[t] for t in types3]
    out = ["     2.11           OBSERVATION DATA    G (GPS)             RINEX VERSION / TYPE\n"]
    for line in head[1:]:
        label = line[60:].strip()
        if label in ("SYS / # / OBS TYPES", "SIGNAL STRENGTH UNIT", "SYS / PHASE SHIFT",
                     "RINEX VERSION / TYPE"):
            continue
        if label == "END OF HEADER":
            out.append(f"{len(types2):6d}" + "".join(f"{t:>6s}" for t in types2).ljust(54)
                       + "# / TYPES OF OBSERV\n")
            out.append("     1     1".ljust(60) + "WAVELENGTH FACT L1/2\n")
        out.append(line)
    epoch, sats = None, []

    def flush():
        if epoch is None:
            return
        names = [s for s, _ in sats]
        out.append(f" {epoch[0] % 100:02d}{epoch[1]:3d}{epoch[2]:3d}{epoch[3]:3d}{epoch[4]:3d}"
                   f"{epoch[5]:11.7f}  0{len(names):3d}" + "".join(names[:12]) + "\n")
        for k in range(12, len(names), 12):
            out.append(" " * 32 + "".join(names[k:k + 12]) + "\n")
        for _, fields in sats:
            for k in range(0, len(fields), 5):
                out.append("".join(fields[k:k + 5]).rstrip() + "\n")

    for line in body:
        if line.startswith(">"):
            flush()
            y, mo, d, h, mi = (int(v) for v in line[2:18].split())
            epoch, sats = (y, mo, d, h, mi, float(line[18:29])), []
        elif line.startswith("G"):
            text = line.rstrip("\n")[3:]
            fields = [text[k:k + 16].ljust(16) for k in range(0, 16 * len(types3), 16)]
            sats.append((line[:3], fields))
    flush()
    return "".join(out)


def seed_texts() -> dict[str, str]:
    """kind -> the valid seed text."""
    nav3, obs3 = cut_nav3(), cut_obs3()
    return {"nav3": nav3, "nav2": nav3_to_nav2(nav3), "obs3": obs3, "obs2": obs3_to_obs2(obs3),
            "sp3": cut_sp3(), "clk": cut_clk(), "csv": cut_csv(), "nmea": cut_nmea()}


# Which lines are the header, and which hold an epoch, per kind (used by the mutations).
HEADER_END = {"nav3": "END OF HEADER", "nav2": "END OF HEADER", "obs3": "END OF HEADER",
              "obs2": "END OF HEADER", "clk": "END OF HEADER"}
EPOCH_LINE = {
    "nav3": re.compile(rb"^[GECJR]\d\d \d{4}"),
    "nav2": re.compile(rb"^[ \d]\d \d\d[ \d]\d"),
    "obs3": re.compile(rb"^> "),
    "obs2": re.compile(rb"^ \d\d[ \d]\d[ \d]\d"),
    "sp3": re.compile(rb"^\*  "),
    "clk": re.compile(rb"^AS "),
    "csv": re.compile(rb"^\d{4}-\d\d-\d\dT"),
    "nmea": re.compile(rb"^\$..(ZDA|GGA)"),
}


def header_length(kind: str, lines: list[bytes]) -> int:
    """Number of header lines of a seed (0 when the kind has none)."""
    if kind in HEADER_END:
        label = HEADER_END[kind].encode()
        return next((i + 1 for i, line in enumerate(lines) if label in line), 0)
    if kind == "sp3":
        return next((i for i, line in enumerate(lines) if line.startswith(b"*")), 0)
    if kind == "csv":
        return next((i + 1 for i, line in enumerate(lines) if line.startswith(b"time,")), 0)
    return 0
