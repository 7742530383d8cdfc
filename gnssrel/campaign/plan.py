"""The plan of a campaign: inputs grouped into station-days, each with the files it uses.

Without a manifest, observation logs are placed by their RINEX file names (long names
``SSSSMRCCC_K_YYYYDDDHHMM_PPU_..._MO.rnx``, short names ``ssssdddf.yyo``/``.yyd``), else by
their header (MARKER NAME, TIME OF FIRST OBS).  Navigation and precise files are matched
to every log whose span they overlap (a day's navigation files from other stations are
merged), by the span of their names (else their headers).  A manifest (CSV or TOML) names
the files of each station-day itself (:func:`read_manifest`).
"""

from __future__ import annotations

import csv
import glob
import gzip
import re
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from pathlib import Path

from gnssrel.errors import GnssrelInputError

__all__ = ["StationDay", "describe_plan", "expand_inputs", "plan_campaign", "read_manifest"]

LONG_NAME = re.compile(r"^(?P<station>[A-Z0-9]{9})_[A-Z]_(?P<year>\d{4})(?P<doy>\d{3})(?P<hour>\d{2})(?P<minute>\d{2})"
                       r"_(?P<period>\d{2}[MHDUY])(?:_\d{2}[SMHDCU])?_(?P<kind>[A-Z]{2})", re.IGNORECASE)
"""RINEX 3/4 long file name: station (9), data source, start (year, day of year, hh mm), period, kind (MO, GN...)."""
PRODUCT_NAME = re.compile(r"^[A-Z0-9]{10}_(?P<year>\d{4})(?P<doy>\d{3})(?P<hour>\d{2})(?P<minute>\d{2})"
                          r"_(?P<period>\d{2}[MHDUY])_", re.IGNORECASE)
"""Long product names (SP3, clock): ``AAAVPPPTTT_YYYYDDDHHMM_LEN_SMP_CNT.FMT``."""
SHORT_NAME = re.compile(r"^(?P<station>[a-z0-9]{4})(?P<doy>\d{3})[a-z0-9]\.(?P<yy>\d{2})(?P<kind>[a-z])",
                        re.IGNORECASE)
"""RINEX 2 short file name ``ssssdddf.yyt`` (t: o or d observations, n g l p f q h navigation)."""
PERIOD_UNITS = {"M": timedelta(minutes=1), "H": timedelta(hours=1), "D": timedelta(days=1),
                "U": timedelta(days=1), "Y": timedelta(days=365)}
MANIFEST_SUFFIXES = (".csv", ".toml")
MANIFEST_LIST_FIELDS = ("nav", "precise")
SLACK = timedelta(0)
"""How far a navigation or precise file may end before (start after) a log and still serve it: none, so a
station-day uses the files of its own span (those of the day before stay with the day before)."""


@dataclass
class StationDay:
    """One task: a station's log of one day and the files it is audited with."""

    station: str
    date: str                                 # YYYY-MM-DD of the first epoch, "unknown" when not found
    obs: str
    nav: list[str] = field(default_factory=list)
    precise: list[str] = field(default_factory=list)
    fixes: str | None = None
    clocks: str | None = None
    missing: list[str] = field(default_factory=list)   # what the task lacks, in words

    @property
    def name(self) -> str:
        return f"{self.station}_{self.date}"


def expand_inputs(inputs) -> list[Path]:
    """Files from files, folders (their files, not recursing) and glob patterns, in a stable order."""
    out: list[Path] = []
    for item in inputs:
        p = Path(item)
        if p.is_dir():
            out.extend(sorted(q for q in p.iterdir() if q.is_file() and not q.name.startswith(".")))
        elif p.is_file():
            out.append(p)
        else:
            matches = sorted(Path(m) for m in glob.glob(str(item)) if Path(m).is_file())
            if not matches:
                raise GnssrelInputError("no such file, folder or matching pattern", item)
            out.extend(matches)
    return list(dict.fromkeys(out))


def _header_lines(path: Path, limit: int = 200) -> list[str]:
    """The header lines of a plain or gzip RINEX file (empty when it cannot be read that way)."""
    opener = gzip.open if path.suffix.lower() == ".gz" else open
    lines = []
    try:
        with opener(path, "rt", encoding="ascii", errors="replace") as f:
            for _, line in zip(range(limit), f):
                lines.append(line.rstrip("\r\n"))
                if "END OF HEADER" in line[60:]:
                    break
    except (OSError, EOFError, ValueError):
        return []
    return lines


def _header_label(lines, label):
    return next((line for line in lines if line[60:].strip() == label), None)


def describe_file(path: Path) -> dict:
    """``{"kind": "obs"|"nav"|"sp3"|"clock"|"unknown", "station", "start", "end"}`` from the name,
    else the header (start/end datetimes, None when not known)."""
    name = path.name
    m = LONG_NAME.match(name)
    if m:
        start = datetime.strptime(f"{m['year']}{m['doy']}{m['hour']}{m['minute']}", "%Y%j%H%M")
        kind = m["kind"].upper()
        return {"kind": "obs" if kind.endswith("O") else "nav" if kind.endswith("N") else "unknown",
                "station": m["station"].upper(), "start": start,
                "end": start + int(m["period"][:2]) * PERIOD_UNITS[m["period"][2].upper()]}
    m = PRODUCT_NAME.match(name)
    if m and re.search(r"\.(sp3|clk)", name, re.IGNORECASE):
        start = datetime.strptime(f"{m['year']}{m['doy']}{m['hour']}{m['minute']}", "%Y%j%H%M")
        return {"kind": "sp3" if ".SP3" in name.upper() else "clock", "station": None, "start": start,
                "end": start + int(m["period"][:2]) * PERIOD_UNITS[m["period"][2].upper()]}
    m = SHORT_NAME.match(name)
    if m:
        yy = int(m["yy"])
        start = datetime.strptime(f"{1900 + yy if yy >= 80 else 2000 + yy}{m['doy']}", "%Y%j")
        kind = m["kind"].lower()
        return {"kind": "obs" if kind in "od" else "nav" if kind in "nglpfqh" else "unknown",
                "station": m["station"].upper(), "start": start, "end": start + timedelta(days=1)}
    return _describe_by_header(path)


def _describe_by_header(path: Path) -> dict:
    lines = _header_lines(path)
    out = {"kind": "unknown", "station": None, "start": None, "end": None}
    if lines and lines[0][:1] == "#" and lines[0][1:2] in "abcd":
        out["kind"] = "sp3"
        return out
    version = _header_label(lines, "RINEX VERSION / TYPE") or _header_label(lines, "CRINEX VERS   / TYPE")
    if version is None:
        return out
    kind = version[20:21].upper()
    if "CRINEX" in version or kind == "O":
        out["kind"] = "obs"
        version = _header_label(lines, "RINEX VERSION / TYPE") or ""
    elif kind in "NGHLJFIP":
        out["kind"] = "nav"
    elif kind == "C":
        out["kind"] = "clock"
    marker = _header_label(lines, "MARKER NAME")
    if marker and marker[:60].strip():
        out["station"] = marker[:60].strip().replace(" ", "_").upper()
    first = _header_label(lines, "TIME OF FIRST OBS")
    if first:
        try:
            y, mo, d, h, mi = (int(v) for v in first[:30].split()[:5])
            out["start"] = datetime(y, mo, d, h, mi)
            out["end"] = out["start"] + timedelta(days=1)
        except ValueError:
            pass
    return out


def _overlaps(a, b) -> bool:
    """Do the spans a and b (dicts with start/end datetimes) overlap, with SLACK?  Unknown spans match."""
    if a["start"] is None or b["start"] is None:
        return True
    return a["start"] < b["end"] + SLACK and b["start"] < a["end"] + SLACK


def plan_campaign(inputs, precise=(), fixes_dir=None) -> tuple[list[StationDay], list[str]]:
    """(station-days, notes) from INPUT paths (files, folders, globs; or one or more manifests)."""
    files = expand_inputs(inputs)
    manifests = [p for p in files if _is_manifest(p)]
    notes: list[str] = []
    tasks = [t for m in manifests for t in read_manifest(m)]
    described = {p: describe_file(p) for p in files if p not in manifests}
    precise_described = {p: describe_file(p) for p in expand_inputs(precise)} if precise else {}
    precise_described.update({p: d for p, d in described.items() if d["kind"] in ("sp3", "clock")})
    navs = {p: d for p, d in described.items() if d["kind"] == "nav"}
    for p, d in described.items():
        if d["kind"] == "unknown":
            notes.append(f"{p}: neither an observation log nor a navigation or precise file (by its name "
                         "and header): left out")
    for p, d in described.items():
        if d["kind"] != "obs":
            continue
        station = d["station"] or p.name.split(".")[0][:9].upper()
        date = d["start"].strftime("%Y-%m-%d") if d["start"] else "unknown"
        task = StationDay(station, date, str(p))
        task.nav = [str(q) for q, n in navs.items() if _overlaps(d, n)]
        task.precise = [str(q) for q, n in precise_described.items() if _overlaps(d, n)]
        if d["start"] is None:
            task.missing.append("the log's first epoch (neither its name nor its header gives it)")
        tasks.append(task)
    for task in tasks:
        if not task.nav:
            task.missing.append("navigation data (no navigation file covers the log's span)")
        if fixes_dir is not None and task.fixes is None:
            task.fixes = _find_fixes(Path(fixes_dir), task.station)
            if task.fixes is None:
                task.missing.append(f"receiver fixes (none named {task.station[:4]}* in {fixes_dir})")
    names = [t.name for t in tasks]
    for name in sorted({n for n in names if names.count(n) > 1}):
        raise GnssrelInputError(f"two logs make the same station-day {name}: "
                                + ", ".join(t.obs for t in tasks if t.name == name))
    tasks.sort(key=lambda t: (t.station, t.date))
    return tasks, notes


def _is_manifest(path: Path) -> bool:
    """A TOML file, or a CSV file whose header names the station and obs columns."""
    suffix = path.suffix.lower()
    if suffix not in MANIFEST_SUFFIXES:
        return False
    if suffix == ".toml":
        return True
    try:
        with open(path, encoding="utf-8", errors="replace") as f:
            header = {c.strip().lower() for c in f.readline().split(",")}
    except OSError:
        return False
    return {"station", "obs"} <= header


def _find_fixes(folder: Path, station: str) -> str | None:
    """The receiver fixes of a station in ``folder``: a file named after its 9- or 4-character id."""
    if not folder.is_dir():
        raise GnssrelInputError("--receiver-fixes-dir: not a folder", folder)
    files = sorted(p for p in folder.iterdir() if p.is_file() and describe_file(p)["kind"] == "unknown")
    for prefix in (station, station[:4]):
        found = [p for p in files if p.name.upper().startswith(prefix)]
        if found:
            return str(found[0])
    return None


def read_manifest(path: Path) -> list[StationDay]:
    """Station-days from a CSV (header ``station,day,obs,nav,precise,fixes,clocks``; several nav or
    precise files separated by ``;`` or spaces) or TOML manifest (``[[task]]`` tables with the same
    keys, nav and precise as lists).  Relative paths are taken from the manifest's folder."""
    path = Path(path)
    if path.suffix.lower() == ".toml":
        import tomllib  # deferred: only manifests need it
        try:
            rows = tomllib.loads(path.read_text(encoding="utf-8")).get("task", [])
        except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
            raise GnssrelInputError(f"unreadable TOML manifest ({exc})", path) from None
    else:
        with open(path, newline="", encoding="utf-8") as f:
            rows = list(csv.DictReader(f))
    tasks = []
    for i, row in enumerate(rows, start=2):
        row = {str(k).strip().lower(): v for k, v in row.items() if k is not None}
        if not row.get("obs") or not row.get("station"):
            raise GnssrelInputError("a manifest row needs station and obs", path, i)

        def local(p):
            q = Path(str(p).strip())
            return str(q if q.is_absolute() else path.parent / q)

        def many(value):
            items = value if isinstance(value, list) else re.split(r"[;\s]+", str(value or "").strip())
            return [local(p) for p in items if str(p).strip()]

        tasks.append(StationDay(str(row["station"]).strip(), str(row.get("day") or "unknown").strip(),
                                local(row["obs"]), nav=many(row.get("nav")), precise=many(row.get("precise")),
                                fixes=local(row["fixes"]) if row.get("fixes") else None,
                                clocks=local(row["clocks"]) if row.get("clocks") else None))
    return tasks


def describe_plan(tasks, notes=()) -> list[str]:
    """The plan as lines of text: how many station-days, the files each uses, what is missing."""
    stations = sorted({t.station for t in tasks})
    lines = [f"campaign plan: {len(tasks)} station-day(s), {len(stations)} station(s)"
             + (f" ({', '.join(stations)})" if stations else "")]
    for t in tasks:
        lines.append(f"  {t.station} {t.date}: obs {Path(t.obs).name}; nav "
                     + (", ".join(Path(p).name for p in t.nav) or "-")
                     + (f"; precise {', '.join(Path(p).name for p in t.precise)}" if t.precise else "")
                     + (f"; fixes {Path(t.fixes).name}" if t.fixes else "")
                     + (f"; clocks {Path(t.clocks).name}" if t.clocks else ""))
        for what in t.missing:
            lines.append(f"    missing: {what}")
    lines.extend(f"  note: {n}" for n in notes)
    return lines
