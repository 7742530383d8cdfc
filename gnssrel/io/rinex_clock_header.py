"""Header of RINEX clock files 2.x and 3.0x (labels from column 61, or 66 in 3.04).

A header defect that costs nothing is read around with a warning in the ledger
(the TIME SYSTEM ID name a column off, an unreadable LEAP SECONDS when the
built-in table can stand in); a header that cannot be read (not a clock file,
unknown version, no END OF HEADER, unknown time system) is refused.
"""

from __future__ import annotations

from pathlib import Path

from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError

# TIME SYSTEM ID values (3.x header) -> gnssrel scale; 2.x files are GPS time.
TIME_SYSTEMS = {"GPS": "GPST", "GAL": "GST", "QZS": "QZSST", "BDT": "BDT", "BDS": "BDT",
                "GLO": "GLONASST", "UTC": "UTC", "TAI": "TAI", "IRN": "GPST"}


def _time_system(line: str, path: Path, line_no: int, ledger: Ledger) -> str:
    """TIME SYSTEM ID: 3X,A3 (columns 4-6); read a column off when the name is alone and known."""
    exact = line[3:6].strip()
    if exact in TIME_SYSTEMS or not line[:10].strip():
        return exact or "GPS"
    near = line[:10].split()
    if len(near) == 1 and near[0] in TIME_SYSTEMS:
        ledger.warn(f"RINEX clock header: TIME SYSTEM ID {near[0]!r} read off its columns 4-6", path, line_no)
        return near[0]
    raise FileFormatError(f"RINEX clock header: unknown time system {exact!r}", path, line_no, line)


def parse_header(lines: list[bytes], path: Path, ledger: Ledger) -> tuple[dict, int]:
    """Header fields and the index of the first body line."""
    if not lines or not lines[0].strip():
        raise FileFormatError("empty file: not a RINEX clock file", path, 1)
    first = lines[0].decode("ascii", errors="replace")
    try:
        version = float(first[:9])
    except ValueError:
        raise FileFormatError("RINEX clock: version expected in columns 1-9 of line 1",
                              path, 1, first) from None
    kind = first[9:40].split()
    if "RINEX VERSION / TYPE" not in first or not kind or not kind[0].startswith("C"):
        raise FileFormatError("not a RINEX clock file (line 1 must be 'RINEX VERSION / TYPE' "
                              "with file type 'C' after the version)", path, 1, first)
    if not (2.0 <= version < 4.0):
        raise FileFormatError(f"RINEX clock version {version:.2f} not supported (2.x and 3.0x are)",
                              path, 1, first)
    header = {"version": f"{version:.2f}", "time_system": "GPS",
              "name_width": 9 if version >= 3.04 - 1e-9 else 4}
    for i, raw in enumerate(lines[1:], start=1):
        line = raw.decode("ascii", errors="replace")
        label = line[60:].strip()
        if "END OF HEADER" in label:
            return header, i + 1
        if "TIME SYSTEM ID" in label:
            header["time_system"] = _time_system(line, path, i + 1, ledger)
        elif "LEAP SECONDS" in label and line[:6].strip():
            try:
                header["leap_seconds"] = int(line[:6])
            except ValueError:
                ledger.warn("RINEX clock header: LEAP SECONDS unreadable in columns 1-6; the built-in "
                            "table is used", path, i + 1)
        elif "ANALYSIS CENTER" in label:
            header["agency"] = line[:3].strip()
    raise FileFormatError("RINEX clock header has no END OF HEADER line", path, len(lines),
                          lines[-1].decode("ascii", errors="replace"))
