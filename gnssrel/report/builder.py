"""Write the report folder: report.html, each figure as PNG, SVG and PDF, tables as CSV, summary.json.

Everything is written into a temporary folder beside the target and renamed into
place at the end, so a failed run leaves no half-written report (an earlier report
of the same name stays untouched until the new one is complete).
"""

from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path

from gnssrel.errors import GnssrelInputError
from gnssrel.io import writers
from gnssrel.report.figures import build_figures, page_png, save_figure
from gnssrel.report.html import render_html
from gnssrel.report.tables import SHOWN_IN_HTML, report_tables

__all__ = ["write_folder_atomically", "write_report", "write_report_files"]


def write_report_files(content, folder: Path, figures=None) -> dict:
    """Write every file of the report into an existing, empty ``folder``; returns what was written."""
    figures = build_figures(content) if figures is None else figures
    rendered = []
    for item in figures:
        files = save_figure(item, folder)
        rendered.append((item, page_png(item, print_png=files.get("png")),
                         {fmt: Path(p).name for fmt, p in files.items()}))
    tables = report_tables(content)
    for stem, (_, df) in tables.items():
        writers.write_table(df, folder / f"{stem}.csv")
    page = render_html(content, rendered, tables, SHOWN_IN_HTML)
    (folder / "report.html").write_text(page, encoding="utf-8")
    writers.write_json(content.summary, folder / "summary.json")
    return {"figures": [f.key for f in figures], "tables": list(tables)}


def check_report_folder(output) -> Path:
    """Refuse a report folder we could not create (its parent missing, or a file of that name);
    the jobs call this before any work.  Returns the parent folder."""
    output = Path(output)
    parent = output.parent if str(output.parent) else Path(".")
    if not parent.is_dir():
        raise GnssrelInputError("the folder to write the report into does not exist", parent)
    if output.exists() and not output.is_dir():
        raise GnssrelInputError("exists and is not a folder: choose another --output", output)
    return parent


def write_report(content, output, plots=None) -> Path:
    """Write the report folder ``output`` atomically (see module text); with ``plots``, copy the PNGs there."""
    written = write_folder_atomically(output, lambda staging: write_report_files(content, staging))
    if plots:
        copy_plots(output, plots, written["figures"])
    return Path(output)


def write_folder_atomically(output, fill):
    """Stage a folder beside ``output``, ``fill(staging)`` it, rename it into place; returns what
    ``fill`` returned.  A failure removes the staged folder and leaves an earlier ``output`` as it was."""
    output = Path(output)
    parent = check_report_folder(output)
    staging = Path(tempfile.mkdtemp(prefix=f".{output.name}.", suffix=".part", dir=parent))
    try:
        written = fill(staging)
        _readable(staging)
        if output.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{output.name}.", suffix=".old", dir=parent))
            os.replace(output, old / output.name)
            os.replace(staging, output)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(staging, output)
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        raise
    return written


def _readable(folder: Path) -> None:
    """Give the staged folder and its files the usual permissions (temp files are private)."""
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(folder, 0o777 & ~umask)
    for path in folder.iterdir():
        os.chmod(path, 0o666 & ~umask)


def copy_plots(report_folder, plots, keys) -> None:
    """Copy the PNG figures of a finished report into ``plots`` (created if needed)."""
    plots = Path(plots)
    plots.mkdir(parents=True, exist_ok=True)
    for key in keys:
        src = Path(report_folder) / f"{key}.png"
        with writers.atomic_path(plots / src.name) as tmp:
            shutil.copyfile(src, tmp)
