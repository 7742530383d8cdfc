"""gnssrel's own look: one colour per system, line styles per hypothesis, a matplotlib style.

System colours were chosen for gnssrel and checked for colour-vision deficiency:
simulated with the Machado, Oliveira & Fernandes (2009, IEEE TVCG 15(6)) matrices at
full severity, every pair of the five system colours and the ink stays at least
15 CIELAB units apart (protan 21.9, deutan 15.4, tritan 20.9; derived here, the
check is ``tests/test_report.py::test_palette_survives_colour_vision_deficiency``).
The lightness also differs from system to system, so the figures read in grey print.

The same colour means the same system in every figure; gnssrel's computed
hypotheses are drawn in ink, greys and violet with their own dash patterns; what a
receiver itself wrote (its fixes, its clock table) is drawn with vermilion markers.
"""

from __future__ import annotations

from contextlib import contextmanager

import matplotlib

from gnssrel.constants import SYSTEM_ORDER, SYSTEMS

SYSTEM_COLOURS = {
    "G": "#1D4F91",   # GPS: deep cobalt
    "E": "#F2A541",   # Galileo: saffron
    "C": "#3AAE8F",   # BeiDou: jade
    "R": "#C2639F",   # GLONASS: orchid
    "J": "#7A5C2E",   # QZSS: umber
}
SYSTEM_NAMES = {letter: SYSTEMS[letter].name for letter in SYSTEM_ORDER}
INK = "#111111"
OWN = "#C8412B"
"""What a receiver itself produced (its fixes, its clock table): vermilion, no system uses it."""
MUTED = "#8A8F98"
PAPER = "#FFFFFF"
PANEL = "#F7F6F2"
"""Axes background: a faint warm grey, so that white gaps (no data) stand out."""
REFERENCE = "#5A2A82"
"""Published reference lines (e.g. the IS-GPS-200 factory offset)."""

HYPOTHESIS_STYLES = {
    "applied": {"color": "#111111", "linestyle": "-", "linewidth": 1.5},
    "omitted": {"color": "#5A2A82", "linestyle": (0, (6, 2)), "linewidth": 1.4},
    "reversed": {"color": "#9AA0A8", "linestyle": (0, (1.5, 1.5)), "linewidth": 1.4},
    "doubled": {"color": "#5B5B5B", "linestyle": (0, (6, 2, 1.5, 2)), "linewidth": 1.1},
    "sagnac-omitted": {"color": "#B9B9B9", "linestyle": (0, (10, 3)), "linewidth": 1.1},
}
HYPOTHESIS_LABELS = {
    "applied": "periodic term applied (as specified)",
    "omitted": "periodic term omitted",
    "reversed": "periodic term reversed",
    "doubled": "periodic term doubled",
    "sagnac-omitted": "Earth rotation (Sagnac) omitted",
}

STYLE = {
    "figure.facecolor": PAPER,
    "figure.dpi": 110,
    "savefig.dpi": 150,
    "savefig.facecolor": PAPER,
    "font.family": "DejaVu Sans",
    "font.size": 9.0,
    "axes.titlesize": 10.0,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.titlepad": 8.0,
    "axes.labelsize": 9.0,
    "axes.labelcolor": "#30343B",
    "axes.facecolor": PANEL,
    "axes.edgecolor": "#9AA0A8",
    "axes.linewidth": 0.7,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "axes.grid.axis": "y",
    "axes.axisbelow": True,
    "grid.color": "#FFFFFF",
    "grid.linewidth": 1.1,
    "xtick.direction": "out",
    "ytick.direction": "out",
    "xtick.color": "#4A4F57",
    "ytick.color": "#4A4F57",
    "xtick.labelsize": 8.0,
    "ytick.labelsize": 8.0,
    "legend.frameon": False,
    "legend.fontsize": 8.0,
    "legend.handlelength": 2.6,
    "lines.linewidth": 1.1,
    "lines.solid_capstyle": "round",
    "svg.fonttype": "none",
}
"""The matplotlib rcParams of every gnssrel figure."""


def system_colour(sv_or_letter: str) -> str:
    """Colour of a satellite's system (``"G05"`` or ``"G"``); grey for an unknown letter."""
    return SYSTEM_COLOURS.get(str(sv_or_letter)[:1], MUTED)


def system_name(letter: str) -> str:
    return SYSTEM_NAMES.get(letter, letter)


@contextmanager
def gnssrel_style():
    """Apply :data:`STYLE` inside a ``with`` block (rcParams restored afterwards)."""
    with matplotlib.rc_context(STYLE):
        yield
