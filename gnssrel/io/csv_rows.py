"""The text layout shared by the receiver CSV tables (satellite-clock table, clock series).

Lines starting with ``#`` and blank lines are comments; the first other line names the
columns (comma-separated, any order); every following line is one row.  The cells are kept
as stripped strings: each reader checks and converts its own columns, so that a damaged row
costs that row only.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from gnssrel.accounting import Ledger
from gnssrel.errors import FileFormatError
from gnssrel.io.opening import read_text


def read_csv_cells(path: str | Path, ledger: Ledger, what: str, required, optional: str) -> tuple[pd.DataFrame, list]:
    """Rows of the table in ``path`` as strings: a DataFrame with ``line`` (line number in the
    file), ``line_text`` (the line), ``n_cells`` and one column per header name; and the header's column names.

    ``what`` names the table in errors ("receiver clock table"); ``required`` are the columns
    the header must name, ``optional`` says in words what else it may name.  Raises
    :class:`FileFormatError` when the file is empty, lacks a required column or has no rows.
    """
    lines = read_text(path, ledger).splitlines()
    body = [(n, s) for n, s in enumerate(lines, start=1) if s.strip() and not s.lstrip().startswith("#")]
    if not body:
        raise FileFormatError(f"{what} is empty", path)
    header_line, header = body[0]
    columns = [c.strip() for c in header.split(",")]
    missing = [c for c in required if c not in columns]
    if missing:
        raise FileFormatError(f"{what} lacks column(s) {', '.join(missing)}; the header must name "
                              f"{', '.join(required)} (and optionally {optional})", path, header_line, header)
    rows = body[1:]
    if not rows:
        raise FileFormatError(f"{what} has a header but no rows", path, header_line, header)
    cells = [[c.strip() for c in s.split(",")] for _, s in rows]
    df = pd.DataFrame({"line": np.array([n for n, _ in rows], dtype=np.int64),
                       "line_text": [s for _, s in rows],
                       "n_cells": np.array([len(c) for c in cells], dtype=np.int64)})
    for k, name in enumerate(columns):
        df[name] = [c[k] if k < len(c) else "" for c in cells]
    return df, columns
