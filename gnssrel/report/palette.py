"""gnssrel's own look: one colour per system, line styles per hypothesis, a matplotlib style.

System colours were chosen for gnssrel and checked by simulation of colour-vision
deficiency (``gnssrel.report.colour_vision``: Machado, Oliveira & Fernandes 2009, IEEE
TVCG 15(6), severity 1.0 matrices for protanopia, deuteranopia and tritanopia, on the
opaque colours as drawn): every pair of the seven system colours, the reference line,
the receiver's own accent and the ink stays at least :data:`MIN_DELTA_E_2000` CIEDE2000
units apart in normal vision and under each simulation (smallest pair today 11.8:
GLONASS and QZSS under tritanopia), and every colour at least
:data:`MIN_DELTA_E_2000_PANEL` from the axes background.  The check is
``tests/test_palette.py``.  System colours are drawn opaque (never faded with alpha),
since fading moves them towards the background and towards each other.

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
    "C": "#229966",   # BeiDou: jade
    "J": "#553300",   # QZSS: dark umber
    "R": "#883355",   # GLONASS: wine
    "I": "#11AAFF",   # NavIC: sky
    "S": "#BB6699",   # SBAS: mauve
}
MIN_DELTA_E_2000 = 10.0
"""Smallest CIEDE2000 distance allowed between any two palette colours, in normal vision and
under each simulated deficiency (our choice: about 10 reads as 'clearly different' for lines
and markers; common practice puts 'just noticeable' near 1-2)."""
MIN_DELTA_E_2000_PANEL = 25.0
"""Smallest CIEDE2000 distance allowed between a palette colour and the axes background."""
SYSTEM_NAMES = {"I": "NavIC", "S": "SBAS"} | {letter: SYSTEMS[letter].name for letter in SYSTEM_ORDER}
INK = "#111111"
OWN = "#C8412B"
"""What a receiver itself produced (its fixes, its clock table): vermilion, no system uses it."""
MUTED = "#8A8F98"
PAPER = "#FFFFFF"
PANEL = "#F7F6F2"
"""Axes background: a faint warm grey, so that white gaps (no data) stand out."""
REFERENCE = "#8833FF"
"""Published reference lines (e.g. the IS-GPS-200 factory offset): bright violet, apart from
GPS cobalt under every simulated deficiency (the former deep violet #5A2A82 read as GPS blue
with deuteranopia, CIEDE2000 3.1)."""

HYPOTHESIS_STYLES = {
    "applied": {"color": "#111111", "linestyle": "-", "linewidth": 1.5},
    "omitted": {"color": REFERENCE, "linestyle": (0, (6, 2)), "linewidth": 1.4},
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
    "savefig.dpi": 300,
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
