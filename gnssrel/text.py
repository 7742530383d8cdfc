"""Text for people: numbers, uncertainties, instants and spans, system names, aligned tables.

Shared by the command line (``gnssrel.jobs``), the report (``gnssrel.report``) and
the library's messages, so the same quantity reads the same everywhere.  Pure
formatting: it imports nothing of gnssrel but the constants.
"""

from __future__ import annotations

import numpy as np

from gnssrel.constants import SYSTEM_ORDER, SYSTEMS

__all__ = ["SIGMA_FLOOR", "fmt", "fmt_k", "fmt_sigma", "fmt_span", "fmt_time", "in_system_order",
           "system_label", "text_table"]

SIGMA_FLOOR = 0.001
"""Uncertainties below this print as '< 0.001' rather than as a misleading 0.000."""


def fmt(value, spec: str = ".2f") -> str:
    """A number for a text table, or '-' where there is none."""
    try:
        if value is None or (isinstance(value, float) and np.isnan(value)):
            return "-"
        text = format(value, spec)
    except (TypeError, ValueError):
        return "-"
    if text.startswith("-") and text[1:2].isdigit():
        try:
            if float(text) == 0:
                return text[1:]                      # '-0.000' reads as a sign that is not there
        except ValueError:
            pass
    return text


def fmt_sigma(sigma, digits: int = 3) -> str:
    """An uncertainty: '-' when unknown, '< 0.001' when it would print as zero."""
    if sigma is None or not np.isfinite(sigma):
        return "-"
    floor = 10.0 ** -digits
    return f"< {floor:.{digits}f}" if abs(sigma) < floor / 2 else f"{abs(sigma):.{digits}f}"


def fmt_k(k, sigma, digits: int = 3) -> str:
    """A fitted factor with its uncertainty: '1.095 ± 0.093', '1.000 (σ < 0.001)', '0.200 (σ -)'."""
    value = fmt(None if k is None else round(float(k), digits) + 0.0, f".{digits}f")  # no '-0.000'
    text = fmt_sigma(sigma, digits)
    return f"{value} ± {text}" if text[0].isdigit() else f"{value} (σ {text})"


def fmt_span(start, end) -> str:
    """'2020-06-25 06:00:00 to 2020-06-25 08:00:00 GPST' (the date once when both share it)."""
    a, b = fmt_time(start).replace("T", " "), fmt_time(end).replace("T", " ")
    if a[:10] == b[:10]:
        b = b[11:]
    return f"{a} to {b} GPST"


def fmt_time(t) -> str:
    """A GPST instant for the terminal: to the second, or to the ns where it has a fraction."""
    t = np.datetime64(t, "ns")
    whole = t.astype("datetime64[s]")
    return str(whole) if whole == t else str(t)


def in_system_order(letters) -> list[str]:
    """System letters in the order gnssrel shows them (G E C J R)."""
    return sorted(letters, key=lambda s: SYSTEM_ORDER.index(s) if s in SYSTEM_ORDER else 99)


def system_label(letter: str) -> str:
    """'G GPS' for the first column of the text tables."""
    system = SYSTEMS.get(letter)
    return f"{letter} {system.name}" if system else letter


def _numeric(cell: str) -> bool:
    try:
        float(cell.removeprefix("< "))
        return True
    except ValueError:
        return cell == "-"


def text_table(headers, rows) -> str:
    """Aligned columns for the terminal: numeric columns right-aligned, text left-aligned.

    ``rows`` hold cells already formatted (see :func:`fmt`); the headers carry the units.
    """
    cells = [list(map(str, headers))] + [list(map(str, r)) for r in rows]
    n = len(headers)
    widths = [max(len(row[k]) for row in cells) for k in range(n)]
    right = [bool(rows) and all(_numeric(row[k]) for row in cells[1:]) for k in range(n)]
    lines = ["  ".join(c.rjust(w) if r else c.ljust(w) for c, w, r in zip(row, widths, right)).rstrip()
             for row in cells]
    return "\n".join(lines)
