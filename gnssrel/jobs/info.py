"""`gnssrel info`: versions, readers, systems, and what reference data is found."""

from __future__ import annotations

import importlib
import os
import platform
from pathlib import Path

from gnssrel import __version__
from gnssrel.constants import SYSTEMS
from gnssrel.io.writers import to_json_text
from gnssrel.jobs import common

HELP = "show versions, available readers and systems, and the reference data found"

READERS = {
    "RINEX navigation 2/3/4": "gnssrel.io.rinex_nav",
    "RINEX observation 2/3/4 (+Hatanaka)": "gnssrel.io.rinex_obs",
    "SP3-c/d precise orbits": "gnssrel.io.sp3",
    "RINEX clock 2/3": "gnssrel.io.rinex_clock",
    "receiver satellite-clock CSV": "gnssrel.io.receiver_clocks",
    "receiver fixes (NMEA GGA, CSV)": "gnssrel.io.receiver_fixes",
}
LIBRARIES = ("numpy", "scipy", "pandas", "xarray", "matplotlib", "hatanaka", "pyarrow", "georinex")


def add_arguments(parser):
    common.add_json(parser, "print the information as JSON on stdout instead of the text")


def collect() -> dict:
    libs = {}
    for name in LIBRARIES:
        try:
            libs[name] = getattr(importlib.import_module(name), "__version__", "installed")
        except ImportError:
            libs[name] = None
    readers = {}
    for label, module in READERS.items():
        try:
            importlib.import_module(module)
            readers[label] = "available"
        except ImportError:
            readers[label] = "missing"
    refdata = Path(os.environ.get("GNSSREL_REFDATA",
                                  Path(__file__).resolve().parents[2].parent / "shared" / "refdata"))
    found = sorted(p.name for p in refdata.iterdir() if p.is_dir()) if refdata.is_dir() else []
    return {
        "gnssrel": __version__,
        "python": platform.python_version(),
        "libraries": libs,
        "readers": readers,
        "systems": {k: f"{s.name} ({s.time_scale}; {s.source})" for k, s in SYSTEMS.items()},
        "reference_data": {"folder": str(refdata), "days": found},
    }


def run(args):
    info = collect()
    if args.json:
        print(to_json_text(info))
        return info
    print(f"gnssrel {info['gnssrel']} on Python {info['python']}")
    print("libraries:  " + ", ".join(f"{k} {v or '(not installed)'}" for k, v in info["libraries"].items()))
    print("readers:")
    for label, state in info["readers"].items():
        print(f"  {label:<38} {state}")
    print("systems:")
    for letter, text in info["systems"].items():
        print(f"  {letter}  {text}")
    ref = info["reference_data"]
    print(f"reference data: {ref['folder']} ({', '.join(ref['days']) or 'none found'})")
    return info
