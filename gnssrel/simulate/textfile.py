"""Small helpers shared by the simulator's file writers: header lines, calendar fields, atomic text."""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from gnssrel.io.writers import atomic_path


def header_line(content: str, label: str, label_column: int = 61) -> str:
    """A RINEX/clock header line: ``content`` left-justified up to the label column (1-based)."""
    width = label_column - 1
    if len(content) > width:
        raise ValueError(f"header content too long for {label!r}: {content!r}")
    return f"{content:<{width}}{label}"


def calendar(t: np.datetime64) -> tuple[int, int, int, int, int, float]:
    """(year, month, day, hour, minute, second with fraction) of a datetime64."""
    t = np.datetime64(t, "ns")
    day = t.astype("datetime64[D]")
    y, m, d = (int(v) for v in str(day).split("-"))
    ns = int((t - day).astype("int64"))
    hour, rem = divmod(ns, 3_600_000_000_000)
    minute, rem = divmod(rem, 60_000_000_000)
    return y, m, d, hour, minute, rem / 1e9


def write_lines(path: str | Path, lines) -> Path:
    """Write text lines (newline-terminated, ASCII) atomically."""
    path = Path(path)
    text = "\n".join(lines) + "\n"
    with atomic_path(path) as tmp:
        tmp.write_bytes(text.encode("ascii"))
        os.chmod(tmp, 0o644)  # an ordinary readable data file, not the temporary's 0600
    return path
