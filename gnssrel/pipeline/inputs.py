"""The inputs of an analysis: navigation files merged, precise products told apart and read,
a receiver's clock table cut to the window, and the checks that files belong together.

Every function returns the data model of DEVELOPERS.md (NavigationData, xarray
Datasets on (time, sv), pandas tables) with the readers' counts attached.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import xarray as xr

from gnssrel.constants import SYSTEM_ORDER
from gnssrel.errors import FileFormatError, GnssrelInputError, NoDataError
from gnssrel.io.opening import read_bytes
from gnssrel.io.rinex_clock import read_rinex_clock
from gnssrel.io.rinex_nav import NavigationData, read_navigation
from gnssrel.io.sp3 import read_sp3
from gnssrel.orbits.spans import describe_navigation_span, navigation_span
from gnssrel.pipeline import accounting
from gnssrel.text import fmt_span, in_system_order

__all__ = ["check_files", "check_log_against_navigation", "precise_kind", "read_navigation_files", "read_precise",
           "read_precise_clocks", "receiver_rows_in_window", "split_precise"]

NAVIGATION_REACH = np.timedelta64(4, "h")
"""The widest validity half-window of a broadcast record: a log farther than this from every record is refused."""


def check_files(paths) -> None:
    """Refuse a path that is not a file, naming it (exit 2 on the command line)."""
    for p in paths:
        if not Path(p).is_file():
            raise GnssrelInputError("file not found", p)


def read_navigation_files(paths, systems: str | None = None):
    """Read and merge navigation files: ``(nav, present)``.

    ``systems``: letters (``"GE"``), None for every system.  ``nav``: a NavigationData
    (merged with :meth:`NavigationData.merge` when several files are given); ``present``:
    the requested letters that have records, in the order G E C J R.  Raises NoDataError
    when none has.
    """
    wanted = systems or SYSTEM_ORDER
    items = [read_navigation(p, systems=list(wanted)) for p in paths]
    nav = items[0] if len(items) == 1 else NavigationData.merge(items)
    present = "".join(s for s in wanted if s in nav.ephemerides and len(nav.ephemerides[s]))
    if not present:
        raise NoDataError(f"no records of systems {wanted} in the navigation data", paths[0])
    return nav, present


def precise_kind(path) -> str:
    """"sp3" or "clock" from the file's first line (not its name)."""
    first = read_bytes(path)[:400].decode("ascii", errors="replace").splitlines()
    line = first[0] if first else ""
    if line[:2] in ("#a", "#b", "#c", "#d"):
        return "sp3"
    # RINEX clock: file type "C" in column 21 (2.x, 3.00-3.02) or 22 (3.04), label from column 61/66.
    if "RINEX VERSION / TYPE" in line and "C" in line[20:22]:
        return "clock"
    raise FileFormatError("neither an SP3 file (first line '#c'/'#d') nor a RINEX clock file "
                          "(type C in RINEX VERSION / TYPE)", path, 1, line)


def split_precise(paths) -> tuple[list[str], list[str]]:
    """(SP3 paths, RINEX clock paths), told apart by content."""
    sp3, clk = [], []
    for p in paths:
        (sp3 if precise_kind(p) == "sp3" else clk).append(str(p))
    return sp3, clk


def read_precise_clocks(paths, systems=None):
    """Read SP3 or RINEX clock files (all of one kind): ``(Dataset, kind)``.

    The Dataset has ``clock_s`` (time, sv), seconds (SP3: also the orbits), each time and
    satellite once; ``kind`` is ``"SP3 clocks"`` or ``"RINEX clock file"``.
    """
    kind_of = {str(p): precise_kind(p) for p in paths}
    kinds = set(kind_of.values())
    if len(kinds) > 1:
        raise GnssrelInputError("--precise: give either SP3 files or RINEX clock files, not both ("
                                + "; ".join(f"{p}: {'SP3' if k == 'sp3' else 'RINEX clock'}"
                                            for p, k in kind_of.items()) + ")")
    if kinds.pop() == "sp3":
        return (accounting.unique_keys(read_sp3(list(paths), systems=systems), "sp3_records", "position_ecef_m"),
                "SP3 clocks")
    parts = [_clock_ledger_attached(read_rinex_clock(p, systems=systems)) for p in paths]
    if len(parts) == 1:
        return accounting.unique_keys(parts[0], "clock_records", "clock_s"), "RINEX clock file"
    ledger = accounting.gather(*(accounting.ledger_of(part) for part in parts))
    ds = xr.concat([part[["clock_s"]] for part in parts], dim="time", join="outer")
    ds.attrs = {"accounting": ledger.as_dict()}
    return accounting.unique_keys(ds, "clock_records", "clock_s"), "RINEX clock file"


def _clock_ledger_attached(ds):
    """A RINEX clock Dataset (``clock_s`` only) carrying its reader's counts, or counts of its values."""
    out = ds[["clock_s"]]
    out.attrs = dict(ds.attrs)
    out.attrs["accounting"] = accounting.precise_ledger(ds, "clock_records", "clock_s").as_dict()
    return out


def read_precise(paths, systems=None) -> dict:
    """SP3 orbits (needed) and optionally RINEX clock files, for the audit (told apart by content).

    Returns ``{"orbits": SP3 Dataset, "clocks": Dataset with clock_s (time, sv), "clock_files": bool}``;
    the clock files' clocks win over the SP3's.
    """
    sp3_paths, clk_paths = split_precise(paths)
    if not sp3_paths:
        raise GnssrelInputError("--precise: read as a RINEX clock file (its first line), not SP3: give at "
                                "least one SP3 file (the orbits); RINEX clock files only add clocks",
                                ", ".join(clk_paths) or None)
    orbits = accounting.unique_keys(read_sp3(sp3_paths, systems=systems), "sp3_records", "position_ecef_m")
    clocks = read_precise_clocks(clk_paths, systems)[0] if clk_paths else orbits[["clock_s"]]
    return {"orbits": orbits, "clocks": clocks, "clock_files": bool(clk_paths)}


def check_log_against_navigation(obs_ds, nav, systems, path) -> None:
    """Refuse a log whose epochs lie wholly outside the navigation records' reach (NoDataError, both spans)."""
    t = np.asarray(obs_ds["time"].values).astype("datetime64[ns]")
    if t.size == 0:
        return
    nav_start, nav_end = navigation_span(nav, systems)
    if t.max() < nav_start - NAVIGATION_REACH or t.min() > nav_end + NAVIGATION_REACH:
        raise NoDataError(f"no overlap: the log's epochs span {fmt_span(t.min(), t.max())}, the "
                          f"navigation records {describe_navigation_span(nav, systems)}", path)


def receiver_rows_in_window(receiver, path, start, end, systems, nav=None, present=None):
    """The rows of a receiver clock table inside [start, end] and of the requested systems; the
    others retired with their reason in the returned table's ``attrs["accounting"]``.
    No row left: a NoDataError naming the file and the real cause (exit 2)."""
    rows_ledger = accounting.receiver_clock_rows_ledger(receiver)
    letters = receiver["sv"].astype(str).str[0].to_numpy()
    t = receiver["time"].to_numpy().astype("datetime64[ns]")
    in_window = np.ones(t.size, bool)
    if start is not None:
        in_window &= t >= np.datetime64(start, "ns")
    if end is not None:
        in_window &= t <= np.datetime64(end, "ns")
    wanted = np.isin(letters, list(systems)) if systems else np.ones(t.size, bool)
    for letter in np.unique(letters):
        own = letters == letter
        rows_ledger.retire("receiver_clock_rows", str(letter), accounting.NOT_REQUESTED, int((own & ~wanted).sum()))
        rows_ledger.retire("receiver_clock_rows", str(letter), accounting.OUTSIDE_WINDOW,
                           int((own & wanted & ~in_window).sum()))
    keep = in_window & wanted
    if not keep.any():
        span = fmt_span(t.min(), t.max()) if t.size else "no rows"
        if not wanted.any():
            why = (f"it holds no row of the requested systems {''.join(systems)} (its systems: "
                   f"{''.join(in_system_order(set(letters)))})")
        else:
            window = fmt_span(start if start is not None else t.min(), end if end is not None else t.max())
            why = f"no overlap: its rows span {span}, the window is {window}"
        raise NoDataError(f"the receiver clock table cannot be checked: {why}", path)
    if nav is not None and present:
        nav_start, nav_end = navigation_span(nav, present)
        half_day = np.timedelta64(12, "h")
        if not ((t[keep] >= nav_start - half_day) & (t[keep] <= nav_end + half_day)).any():
            raise NoDataError(f"no overlap: the receiver clock table's rows ({fmt_span(t.min(), t.max())}) "
                              f"and the navigation records, {describe_navigation_span(nav, present)}", path)
    out = receiver[keep].copy()
    out.attrs = {**receiver.attrs, "accounting": rows_ledger.as_dict()}
    return out
