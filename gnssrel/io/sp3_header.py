"""Header of SP3-c and SP3-d files (SP3-c section 3; SP3-d keeps the same lines).

A header defect that costs nothing is read around with a warning in the ledger
(leading blank lines, the "%c" time system one column off, a garbled satellite
count on the "+" line); a header that cannot be read (not SP3, unknown version,
no epoch) is refused with :class:`~gnssrel.errors.FileFormatError`.
"""

from __future__ import annotations

from pathlib import Path

from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError
from gnssrel.io.precise_fields import STRICT_NUMBER

# SP3 time system names (SP3-c 3.4 "%c" line; SP3-d adds QZS, BDT, IRN) -> gnssrel scale.
TIME_SYSTEMS = {"GPS": "GPST", "GAL": "GST", "QZS": "QZSST", "BDT": "BDT", "BDS": "BDT",
                "GLO": "GLONASST", "UTC": "UTC", "TAI": "TAI", "IRN": "GPST"}


def _time_system(line: str, path: Path, line_no: int, ledger: Ledger) -> str:
    """The "%c" time system, columns 10-12 (SP3-c 3.4); read one column off when unambiguous."""
    exact = line[9:12].strip()
    if exact in TIME_SYSTEMS or exact in ("", "ccc"):
        return exact
    near = line[8:13].split()  # one column left or right: a single known name and nothing else
    if len(near) == 1 and near[0] in TIME_SYSTEMS:
        ledger.warn(f"SP3 header: time system {near[0]!r} read one column off its columns 10-12",
                    path, line_no)
        return near[0]
    raise FileFormatError(f"SP3 header: unknown time system {exact!r} in columns 10-12", path, line_no, line)


# The other fields of the "##" line (SP3-c 3.2): GPS week I4, seconds of week F15.8, MJD I5,
# fraction of day F15.13.  gnssrel takes the time from the epoch lines, so these are not used;
# a field a strict reading refuses (e.g. "289_800.0") is said, not read silently.
_WEEK_LINE_FIELDS = (("GPS week", 3, 7, "int"), ("seconds of week", 8, 23, 604_800.0),
                     ("modified Julian day", 39, 44, "int"), ("fraction of day", 45, 60, 1.0))


def _check_week_line(line: str, path: Path, line_no: int, ledger: Ledger) -> None:
    """Warn (not used, so nothing refused) where a "##" field is not what SP3-c 3.2 says."""
    for name, a, b, kind in _WEEK_LINE_FIELDS:
        text = line[a:b].strip().encode()
        if kind == "int":
            good = text.isdigit()
        else:
            good = bool(STRICT_NUMBER.fullmatch(text)) and 0.0 <= float(text) < kind
        if not good:
            ledger.warn(f"SP3 header: {name} (columns {a + 1}-{b}) unreadable {line[a:b].strip()!r}; "
                        "not used (the epochs give the time)", path, line_no)


def _check_listed(line: str, path: Path, line_no: int, ledger: Ledger) -> None:
    """Warn where an id of a "+" line (SP3-c 3.3: 17 x A1,I2 from column 10, "  0" or "000" unused)
    is garbled."""
    for k in range(9, 60, 3):
        sv = line[k:k + 3]
        if not sv.replace(" ", "").strip("0") or (sv[:1].isalpha() and sv[1:].replace(" ", "0").isdigit()
                                              and sv.isascii()):
            continue
        ledger.warn(f"SP3 header: satellite id {sv!r} (columns {k + 1}-{k + 3}) of the '+' list unreadable; "
                    "not listed", path, line_no)


def _check_bases(line: str, path: Path, line_no: int, ledger: Ledger) -> None:
    """Warn where a "%f" base (SP3-c 3.5: F10.7, F12.9, then unused F14.11/F18.15) is not a strict real."""
    for token in line[2:].split():
        if not STRICT_NUMBER.fullmatch(token.encode()):
            ledger.warn(f"SP3 header: '%f' value {token!r} unreadable; not used (gnssrel uses no "
                        "accuracy exponent)", path, line_no)
            return


def parse_header(lines: list[str], path: Path, ledger: Ledger, first: int = 0) -> tuple[dict, int]:
    """Header fields and the index of the first body line.

    ``lines`` is the whole file decoded; ``first`` the index of its first non-blank
    line (leading blank lines cost nothing and are warned about by the caller).
    """
    if first >= len(lines):
        raise FileFormatError("empty file: not an SP3 file", path, 1)
    head = lines[first]
    n1 = first + 1
    if not head.startswith("#"):
        raise FileFormatError("not an SP3 file: the first line must start with '#'", path, n1, head)
    version = head[1:2]
    if version not in ("c", "d"):
        raise FileFormatError(f"SP3 version {version!r} not supported (SP3-c and SP3-d are)", path, n1, head)
    if len(head) < 32:
        raise FileFormatError("SP3 header line 1 is too short", path, n1, head)
    header = {
        "version": version,
        "position_velocity_flag": head[2:3],
        "data_used": head[40:45].strip(),
        "coordinate_system": head[46:51].strip(),
        "orbit_type": head[52:55].strip(),
        "agency": head[56:60].strip(),
    }
    try:
        header["number_of_epochs"] = int(head[32:39])
    except ValueError:
        header["number_of_epochs"] = None
        ledger.warn("SP3 header: number of epochs (columns 33-39) unreadable; not checked", path, n1)
    second = next((i for i in range(first + 1, len(lines)) if lines[i].strip()), len(lines))
    header["epoch_interval_s"] = None  # None: taken from the epochs by the reader
    if second < len(lines) and lines[second].startswith("##"):
        text = lines[second][24:38].strip().encode()
        if STRICT_NUMBER.fullmatch(text) and float(text) > 0:
            header["epoch_interval_s"] = float(text)
        else:
            ledger.warn("SP3 header: epoch interval (columns 25-38) unreadable; taken from the epochs",
                        path, second + 1)
        _check_week_line(lines[second], path, second + 1, ledger)
    else:
        ledger.warn("SP3 header: no '##' line after line 1; epoch interval taken from the epochs",
                    path, second + 1)
        second -= 1
    time_system = None
    n_sat = None
    listed: list[str] = []
    body = None
    for i in range(second + 1, len(lines)):
        line = lines[i]
        if line.startswith("*"):
            body = i
            break
        if line.startswith("+ "):  # satellite ids, 17 per line from column 10 (SP3-c 3.3)
            listed += [line[k:k + 3] for k in range(9, 60, 3) if line[k:k + 1].isalpha()]  # "  0": unused
            _check_listed(line, path, i + 1, ledger)
        if line.startswith("+ ") and n_sat is None:
            try:
                n_sat = int(line[2:6])
            except ValueError:
                n_sat = -1
                ledger.warn("SP3 header: number of satellites (columns 3-6) unreadable; not used",
                            path, i + 1)
        elif line.startswith("%c") and time_system is None:
            time_system = _time_system(line, path, i + 1, ledger)
        elif line.startswith("%f"):
            _check_bases(line, path, i + 1, ledger)
        elif line.startswith(("+", "%", "/*")) or not line.strip():
            continue
        elif line.startswith("EOF"):
            break
        elif line[:1] in ("P", "V"):  # the first epoch line itself is damaged: the body starts here
            body = i
            break
        else:
            ledger.warn("SP3 header: unexpected line before the first epoch skipped", path, i + 1)
    if body is None:
        raise FileFormatError("SP3 file has no epoch record ('*' line): empty or truncated", path, len(lines))
    if n_sat is None:
        ledger.warn("SP3 header has no '+' satellite line", path, body + 1)
    if time_system in (None, "", "ccc"):
        time_system = "GPS"  # SP3-a/b had no field; SP3-c 3.4 keeps GPS as the default
    header["time_system"] = time_system
    header["number_of_satellites"] = n_sat
    ids = [sv[0] + sv[1:].replace(" ", "0") for sv in listed]
    header["satellites"] = [sv for sv in ids if sv.isascii() and sv[1:].isdigit()]  # a garbled id: not listed
    return header, body
