"""``gnssrel demo``: the whole chain on the invented scenario in ``sample_logs/``, as a report.

Wiring only: find the scenario's files by their names (navigation ``*_MN.rnx``,
``*.SP3``, ``*.CLK``, observation logs ``*_MO.rnx`` whose first four letters name the
receiver, and that receiver's ``<NAME>_fixes.nmea`` and ``<NAME>_satellite_clocks.csv``),
then run :func:`gnssrel.pipeline.analysis.analyse` and the report builder.  The manifest
``scenario.json`` is read only for the scenario's title and notice; every verdict
comes from the analysis.
"""

from __future__ import annotations

import json
import logging
import time
from pathlib import Path

import gnssrel
from gnssrel.errors import GnssrelInputError
from gnssrel.io.writers import to_json_text
from gnssrel.jobs import common
from gnssrel.jobs.report import print_findings

HELP = "the whole chain on the bundled invented scenario (sample_logs/), as a report"
DESCRIPTION = (
    "Run orbits (broadcast vs precise), relativity terms (with the proper-time integral), clocks "
    "(vs the precise clock file and each receiver's satellite-clock table) and the audit of each "
    "receiver's log and fixes on the invented scenario in sample_logs/, and write the report "
    "(report.html, figures as PNG and SVG, tables as CSV, summary.json). Says at the end which "
    "receiver's firmware misapplies which relativistic term.")

log = logging.getLogger(__name__)
DEFAULT_OUTPUT = "gnssrel-demo"


def add_arguments(parser) -> None:
    parser.add_argument("--output", default=DEFAULT_OUTPUT, metavar="DIR",
                        help=f"report folder to write (default {DEFAULT_OUTPUT})")
    parser.add_argument("--logs", metavar="DIR", help="scenario folder (default: sample_logs/ of the "
                        "gnssrel source tree, else ./sample_logs)")
    parser.add_argument("--plots", metavar="DIR", help="also copy the PNG figures into this folder")
    common.add_json(parser, "print summary.json on stdout instead of the findings")


def find_sample_logs(given=None) -> Path:
    """The scenario folder: ``given``, else sample_logs/ beside the package, else ./sample_logs."""
    if given:
        folder = Path(given)
        if not folder.is_dir():
            raise GnssrelInputError("--logs: no such folder", folder)
        return folder
    candidates = [Path(gnssrel.__file__).resolve().parents[1] / "sample_logs", Path.cwd() / "sample_logs"]
    for folder in candidates:
        if folder.is_dir() and any(folder.glob("*_MN.rnx")):
            return folder
    raise GnssrelInputError("sample_logs/ not found (looked beside the gnssrel package and in the current "
                            "folder); pass --logs DIR")


def scenario_files(folder: Path) -> dict:
    """The scenario's files by kind, found by name (see the module text)."""
    folder = Path(folder)
    nav = sorted(folder.glob("*_MN.rnx"))
    if not nav:
        raise GnssrelInputError("no navigation file (*_MN.rnx) in the scenario folder", folder)
    obs = sorted(folder.glob("*_MO.rnx"))
    names = [p.name[:4] for p in obs]
    fixes = [folder / f"{n}_fixes.nmea" for n in names]
    clocks = [folder / f"{n}_satellite_clocks.csv" for n in names]
    return {"nav": nav, "precise": sorted(folder.glob("*.SP3")) + sorted(folder.glob("*.CLK")), "obs": obs,
            "fixes": fixes if all(p.is_file() for p in fixes) else [],
            "clocks": clocks if all(p.is_file() for p in clocks) else []}


def scenario_description(folder: Path) -> tuple[str, str | None]:
    """Title and a one-paragraph description from scenario.json (display only)."""
    path = Path(folder) / "scenario.json"
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return "gnssrel demo report", None
    sites = " and ".join(f"{s.get('marker', '?')} at {s.get('place', '?')}".replace(", ", " (", 1)
                         + (")" if ", " in s.get("place", "") else "") for s in manifest.get("sites", []))
    text = (f"{manifest.get('notice', '')} Scenario: {_when(manifest.get('start'))} to "
            f"{_when(manifest.get('end'))} {manifest.get('time_scale', 'GPST')}, receivers {sites}. "
            "The verdicts below come from gnssrel's analysis of the files, not from the scenario's manifest.")
    return "gnssrel demo report: an invented scenario (not real data)", text.strip()


def _when(text) -> str:
    return str(text or "?").replace("T", " ")


def run(args) -> dict:
    # deferred: the analysis pulls xarray and scipy, the report matplotlib (start-up of `gnssrel --help`)
    from gnssrel.pipeline.analysis import analyse
    from gnssrel.report.builder import check_report_folder, write_report

    quiet = args.quiet or args.json
    say = (lambda text: None) if quiet else (lambda text: print(text, flush=True))
    began = time.monotonic()
    check_report_folder(args.output)
    folder = find_sample_logs(args.logs)
    files = scenario_files(folder)
    title, description = scenario_description(folder)
    say(f"gnssrel demo: {folder}")
    content = analyse(files["nav"], files["precise"], files["obs"], files["fixes"], files["clocks"],
                      title=title, description=description, progress=lambda t: say(f"  {t}"),
                      clock_fallback=True)
    say("  drawing the figures and writing the report")
    out = write_report(content, args.output, plots=args.plots)
    if args.json:
        print(to_json_text(content.summary))
    elif not args.quiet:
        print(f"done in {time.monotonic() - began:.1f} s")
        print_findings(content, out / "report.html", verbose=bool(args.verbose))
    return content.summary
