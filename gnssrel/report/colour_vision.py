"""Colours as readers with a colour-vision deficiency see them, and how far apart they look.

The chain, for an sRGB colour ``#RRGGBB``:

1. sRGB -> linear RGB (IEC 61966-2-1, the sRGB transfer function);
2. linear RGB -> simulated linear RGB with the matrices of Machado, Oliveira & Fernandes
   (2009), "A physiologically-based model for simulation of color vision deficiency",
   IEEE TVCG 15(6), 1291-1298, severity 1.0 (dichromacy), clipped to [0, 1];
3. linear RGB -> CIE XYZ (sRGB primaries, D65) -> CIELAB (CIE 15:2004, D65 white);
4. the distance of two colours: CIEDE2000 (Sharma, Wu & Dalal 2005, Color Res. Appl. 30(1),
   eq. 1-15), or CIE76 (Euclidean in CIELAB) for comparison.

Used by the palette check (``tests/test_palette.py``) and at import by nothing else: a
design tool, not a figure dependency.
"""

from __future__ import annotations

from itertools import combinations

import numpy as np

__all__ = ["DEFICIENCIES", "delta_e_76", "delta_e_2000", "distances", "lab", "simulate_linear", "srgb_to_linear"]

# Machado, Oliveira & Fernandes 2009 (IEEE TVCG 15(6)), Table 1 / supplementary matrices,
# severity 1.0 (published). Applied to linear RGB, as in the paper's model.
DEFICIENCIES = {
    "normal": np.eye(3),
    "protanopia": np.array([[0.152286, 1.052583, -0.204868],
                            [0.114503, 0.786281, 0.099216],
                            [-0.003882, -0.048116, 1.051998]]),
    "deuteranopia": np.array([[0.367322, 0.860646, -0.227968],
                              [0.280085, 0.672501, 0.047413],
                              [-0.011820, 0.042940, 0.968881]]),
    "tritanopia": np.array([[1.255528, -0.076749, -0.178779],
                            [-0.078411, 0.930809, 0.147602],
                            [0.004733, 0.691367, 0.303900]]),
}

# IEC 61966-2-1 (sRGB): linear RGB -> XYZ, D65 white point (published)
_RGB_TO_XYZ = np.array([[0.4124, 0.3576, 0.1805],
                        [0.2126, 0.7152, 0.0722],
                        [0.0193, 0.1192, 0.9505]])
_D65 = np.array([0.95047, 1.0, 1.08883])


def _rgb(hex_colours) -> np.ndarray:
    """``"#RRGGBB"`` strings -> (n, 3) sRGB in [0, 1]."""
    return np.array([[int(h.lstrip("#")[i:i + 2], 16) / 255.0 for i in (0, 2, 4)] for h in hex_colours])


def srgb_to_linear(c) -> np.ndarray:
    """IEC 61966-2-1 transfer function, inverted: sRGB in [0, 1] -> linear light."""
    c = np.asarray(c, float)
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def simulate_linear(linear_rgb, deficiency: str) -> np.ndarray:
    """Linear RGB (..., 3) as seen with ``deficiency`` (a key of :data:`DEFICIENCIES`)."""
    return np.clip(np.asarray(linear_rgb) @ DEFICIENCIES[deficiency].T, 0.0, 1.0)


def _xyz_to_lab(xyz) -> np.ndarray:
    """CIE 15:2004 CIELAB from XYZ (D65, Y of white = 1)."""
    t = np.asarray(xyz) / _D65
    d = 6.0 / 29.0
    f = np.where(t > d**3, np.cbrt(t), t / (3 * d**2) + 4.0 / 29.0)
    return np.stack([116 * f[..., 1] - 16, 500 * (f[..., 0] - f[..., 1]), 200 * (f[..., 1] - f[..., 2])], -1)


def lab(hex_colours, deficiency: str = "normal") -> np.ndarray:
    """CIELAB (n, 3) of ``hex_colours`` as seen with ``deficiency``."""
    return _xyz_to_lab(simulate_linear(srgb_to_linear(_rgb(hex_colours)), deficiency) @ _RGB_TO_XYZ.T)


def delta_e_76(lab1, lab2) -> np.ndarray:
    """CIE76: Euclidean distance in CIELAB."""
    return np.linalg.norm(np.asarray(lab1, float) - np.asarray(lab2, float), axis=-1)


def delta_e_2000(lab1, lab2) -> np.ndarray:
    """CIEDE2000 colour difference (k_L = k_C = k_H = 1), Sharma, Wu & Dalal 2005 eq. 1-15."""
    L1, a1, b1 = np.moveaxis(np.asarray(lab1, float), -1, 0)
    L2, a2, b2 = np.moveaxis(np.asarray(lab2, float), -1, 0)
    c_mean = (np.hypot(a1, b1) + np.hypot(a2, b2)) / 2
    g = 0.5 * (1 - np.sqrt(c_mean**7 / (c_mean**7 + 25.0**7)))
    a1p, a2p = (1 + g) * a1, (1 + g) * a2
    c1p, c2p = np.hypot(a1p, b1), np.hypot(a2p, b2)
    h1p = np.degrees(np.arctan2(b1, a1p)) % 360
    h2p = np.degrees(np.arctan2(b2, a2p)) % 360
    achromatic = c1p * c2p == 0
    dh = h2p - h1p
    dh = np.where(dh > 180, dh - 360, np.where(dh < -180, dh + 360, dh))
    dh = np.where(achromatic, 0.0, dh)
    d_l, d_c = L2 - L1, c2p - c1p
    d_h = 2 * np.sqrt(c1p * c2p) * np.sin(np.radians(dh / 2))
    l_mean, cp_mean = (L1 + L2) / 2, (c1p + c2p) / 2
    h_sum = h1p + h2p
    h_mean = np.where(achromatic, h_sum,
                      np.where(np.abs(h1p - h2p) <= 180, h_sum / 2,
                               np.where(h_sum < 360, (h_sum + 360) / 2, (h_sum - 360) / 2)))
    t = (1 - 0.17 * np.cos(np.radians(h_mean - 30)) + 0.24 * np.cos(np.radians(2 * h_mean))
         + 0.32 * np.cos(np.radians(3 * h_mean + 6)) - 0.20 * np.cos(np.radians(4 * h_mean - 63)))
    d_theta = 30 * np.exp(-(((h_mean - 275) / 25) ** 2))
    r_c = 2 * np.sqrt(cp_mean**7 / (cp_mean**7 + 25.0**7))
    s_l = 1 + 0.015 * (l_mean - 50) ** 2 / np.sqrt(20 + (l_mean - 50) ** 2)
    s_c = 1 + 0.045 * cp_mean
    s_h = 1 + 0.015 * cp_mean * t
    r_t = -np.sin(np.radians(2 * d_theta)) * r_c
    return np.sqrt((d_l / s_l) ** 2 + (d_c / s_c) ** 2 + (d_h / s_h) ** 2 + r_t * (d_c / s_c) * (d_h / s_h))


def distances(colours: dict, deficiency: str = "normal", metric: str = "2000") -> dict:
    """Pairwise distances of named colours ``{name: "#RRGGBB"}``: ``{(name, name): delta E}``."""
    names = list(colours)
    labs = lab([colours[n] for n in names], deficiency)
    diff = delta_e_2000 if metric == "2000" else delta_e_76
    return {(names[i], names[j]): float(diff(labs[i], labs[j])) for i, j in combinations(range(len(names)), 2)}
