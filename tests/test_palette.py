"""The palette against simulated colour-vision deficiency (protanopia, deuteranopia, tritanopia).

The rule (stated in ``gnssrel.report.palette``): every pair of the seven system colours
(G E C J R I S), the reference line, the receiver's own accent and the ink stays at least
MIN_DELTA_E_2000 = 10 CIEDE2000 units apart, in normal vision and under each of the
Machado, Oliveira & Fernandes (2009, IEEE TVCG 15(6)) severity-1.0 simulations; each colour
at least 25 units from the axes background.  The palette of issue 12's start fails the rule
(BeiDou jade and GLONASS orchid 13.3 apart under deuteranopia, 5.1 as drawn faded;
the reference violet 3.1 from GPS cobalt; QZSS umber and the vermilion accent 0.6 apart
under protanopia): a test keeps that failure, so the check cannot silently lose its teeth.
"""

from __future__ import annotations

import numpy as np
import pytest

from gnssrel.report import palette
from gnssrel.report.colour_vision import DEFICIENCIES, delta_e_2000, distances, lab

SYSTEMS = "GECJRIS"

PALETTE_BEFORE_ISSUE_12 = {"G": "#1D4F91", "E": "#F2A541", "C": "#3AAE8F", "R": "#C2639F", "J": "#7A5C2E",
                           "reference": "#5A2A82", "own": "#C8412B", "ink": "#111111"}
"""The colours as they were (git history, gnssrel/report/palette.py before issue 12)."""


def checked_colours() -> dict:
    return {**{s: palette.SYSTEM_COLOURS[s] for s in SYSTEMS}, "reference": palette.REFERENCE,
            "own": palette.OWN, "ink": palette.INK}


def worst_pair(colours: dict) -> tuple[float, str, tuple]:
    found = []
    for name in DEFICIENCIES:
        d = distances(colours, name, metric="2000")
        pair = min(d, key=d.get)
        found.append((d[pair], name, pair))
    return min(found)


# Sharma, Wu & Dalal 2005 (Color Res. Appl. 30(1)), CIEDE2000 test data, pairs 1, 7, 17, 18, 19, 20, 25
# (published table; values as remembered, and they agree to the table's 4 decimals).
SHARMA_PAIRS = [((50.0, 2.6772, -79.7751), (50.0, 0.0, -82.7485), 2.0425),
                ((50.0, 0.0, 0.0), (50.0, -1.0, 2.0), 2.3669),
                ((50.0, 2.5, 0.0), (73.0, 25.0, -18.0), 27.1492),
                ((50.0, 2.5, 0.0), (61.0, -5.0, 29.0), 22.8977),
                ((50.0, 2.5, 0.0), (56.0, -27.0, -3.0), 31.9030),
                ((50.0, 2.5, 0.0), (58.0, 24.0, 15.0), 19.4535),
                ((60.2574, -34.0099, 36.2677), (60.4626, -34.1751, 39.4387), 1.2644)]


@pytest.mark.parametrize("lab1, lab2, expected", SHARMA_PAIRS)
def test_ciede2000_matches_the_published_test_pairs(lab1, lab2, expected):
    assert delta_e_2000(lab1, lab2) == pytest.approx(expected, abs=1e-4)
    assert delta_e_2000(lab2, lab1) == pytest.approx(expected, abs=1e-4)     # symmetric


def test_simulation_keeps_greys_and_white_and_moves_the_confused_hues():
    # each Machado matrix has rows summing to 1 (published), so neutral greys are unchanged
    for name in DEFICIENCIES:
        white, grey = lab(["#FFFFFF", "#808080"], name)
        assert white == pytest.approx([100.0, 0.0, 0.0], abs=0.05)
        assert grey[1:] == pytest.approx([0.0, 0.0], abs=0.05)
    # pure red and green, far apart in normal vision, nearly meet under deuteranopia (common knowledge)
    rg_normal = delta_e_2000(*lab(["#FF0000", "#00FF00"]))
    rg_deutan = delta_e_2000(*lab(["#CC3333", "#669900"], "deuteranopia"))
    assert rg_normal > 80 and rg_deutan < 10


def test_every_pair_of_palette_colours_stays_apart_in_every_vision():
    colours = checked_colours()
    assert len(set(colours.values())) == len(colours)
    worst, vision, pair = worst_pair(colours)
    assert worst >= palette.MIN_DELTA_E_2000, (vision, pair, round(worst, 1))
    assert worst == pytest.approx(11.8, abs=0.1)    # the code's own figure today (regression)


def test_every_palette_colour_stands_out_from_the_axes_background():
    colours = checked_colours()
    for name in DEFICIENCIES:
        labs = lab(list(colours.values()) + [palette.PANEL], name)
        gaps = delta_e_2000(labs[:-1], labs[-1])
        assert gaps.min() >= palette.MIN_DELTA_E_2000_PANEL, (name, dict(zip(colours, gaps.round(1))))


def test_the_palette_before_issue_12_fails_the_rule():
    worst, vision, pair = worst_pair(PALETTE_BEFORE_ISSUE_12)
    assert worst < palette.MIN_DELTA_E_2000
    assert (vision, set(pair)) == ("protanopia", {"J", "own"}) and worst < 1.0
    deutan = distances(PALETTE_BEFORE_ISSUE_12, "deuteranopia")
    assert deutan[("G", "reference")] < 4.0          # the violet reference line read as GPS blue
    # BeiDou and GLONASS faded (alpha 0.55 over the axes background, as the periodic figure drew them)
    lin = np.array([[int(h[i:i + 2], 16) / 255 for i in (1, 3, 5)] for h in ("#3AAE8F", "#C2639F", "#F7F6F2")])
    lin = np.where(lin <= 0.04045, lin / 12.92, ((lin + 0.055) / 1.055) ** 2.4)
    faded = 0.55 * lin[:2] + 0.45 * lin[2]
    back = np.where(faded <= 0.0031308, faded * 12.92, 1.055 * faded ** (1 / 2.4) - 0.055)
    hexes = ["#" + "".join(f"{round(v * 255):02X}" for v in c) for c in back]
    assert delta_e_2000(*lab(hexes, "deuteranopia")) < 6.0


def test_system_names_cover_every_coloured_system():
    for s in SYSTEMS:
        assert palette.system_name(s) != s
    assert palette.system_colour("I05") == palette.SYSTEM_COLOURS["I"]
