"""The report's colours stay apart for readers with deuteranopia or protanopia and in grey-scale.

Simulation: Machado, Oliveira & Fernandes (2009), "A physiologically-based model for
simulation of color vision deficiency", IEEE TVCG 15(6), severity-1.0 matrices from the
authors' published table, applied to linear RGB. The numbers were written from memory and
checked digit for digit against an independent public copy of the table (colour-vision
simulation shaders that list every severity; the deuteranopia row 1 reads 0.367322,
0.860646, -0.227968, the protanopia row 1 0.152286, 1.052583, -0.204868).
Colour differences are CIE76 distances in CIELAB (sRGB, D65: IEC 61966-2-1 and CIE 15),
grey-scale is CIE L* alone.

Thresholds (our choice, not a standard): CIE76's just-noticeable difference is about 2.3
(Sharma 2003, "Digital Color Imaging Handbook"; from memory). Lines and bars in a small
figure need far more than a just-noticeable difference, so we ask for 20 in L* in
grey-scale (about 9 JNDs, from lightness alone) and 20 in CIE76 under each simulation.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
from matplotlib import colormaps
from matplotlib.colors import to_rgb

from bayesirl.report import palette

DEUTERANOPIA = np.array([[0.367322, 0.860646, -0.227968],
                         [0.280085, 0.672501, 0.047413],
                         [-0.011820, 0.042940, 0.968881]])
PROTANOPIA = np.array([[0.152286, 1.052583, -0.204868],
                       [0.114503, 0.786281, 0.099216],
                       [-0.003882, -0.048116, 1.051998]])
# sRGB (linear) to CIE XYZ, D65 (IEC 61966-2-1).
SRGB_TO_XYZ = np.array([[0.4124, 0.3576, 0.1805],
                        [0.2126, 0.7152, 0.0722],
                        [0.0193, 0.1192, 0.9505]])
GREY_MIN = 20.0  # CIE L*
SIMULATED_MIN = 20.0  # CIE76 under a simulation
WHITE = "#ffffff"


def linear(colour) -> np.ndarray:
    """sRGB colour (any matplotlib spec) as linear RGB (IEC 61966-2-1 transfer function)."""
    c = np.asarray(to_rgb(colour))
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def lab(rgb_linear: np.ndarray) -> np.ndarray:
    """CIELAB (D65 white) of a linear RGB triple."""
    xyz = SRGB_TO_XYZ @ rgb_linear / (SRGB_TO_XYZ @ np.ones(3))
    d = 6 / 29
    f = np.where(xyz > d**3, np.cbrt(xyz), xyz / (3 * d**2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def simulate(colour, matrix: np.ndarray | None) -> np.ndarray:
    """CIELAB of ``colour`` as seen under ``matrix`` (None: normal vision)."""
    rgb = linear(colour)
    if matrix is not None:
        rgb = np.clip(matrix @ rgb, 0.0, 1.0)
    return lab(rgb)


def grey_gap(a, b) -> float:
    """Difference in CIE L*: what separates two colours in grey-scale print."""
    return abs(simulate(a, None)[0] - simulate(b, None)[0])


def simulated_gap(a, b, matrix) -> float:
    return float(np.linalg.norm(simulate(a, matrix) - simulate(b, matrix)))


def distinguishable(a, b) -> bool:
    return (grey_gap(a, b) >= GREY_MIN
            and simulated_gap(a, b, DEUTERANOPIA) >= SIMULATED_MIN
            and simulated_gap(a, b, PROTANOPIA) >= SIMULATED_MIN)


def neighbours():
    """Pairs drawn next to each other: consecutive series (cycling) and the roles."""
    s = palette.SERIES
    pairs = [(s[k], s[(k + 1) % len(s)]) for k in range(len(s))]
    roles = (palette.POSTERIOR, palette.PRIOR, palette.TRUTH)
    pairs += [(roles[i], roles[j]) for i in range(3) for j in range(i + 1, 3)]
    pairs.append((palette.VISITED, palette.UNVISITED))
    return pairs


def test_simulation_keeps_white_white():
    # A copying check: each row of the paper's matrices sums to 1 (to their six
    # decimals), so white (and every grey) is seen unchanged.
    assert np.allclose(DEUTERANOPIA.sum(axis=1), 1.0, atol=1e-5)
    assert np.allclose(PROTANOPIA.sum(axis=1), 1.0, atol=1e-5)
    assert np.allclose(simulate(WHITE, DEUTERANOPIA), [100.0, 0.0, 0.0], atol=0.05)


def test_palette_is_okabe_ito():
    # Okabe & Ito (2008), hex values as published (written from memory).
    assert palette.OKABE_ITO["orange"] == "#E69F00"
    assert palette.OKABE_ITO["sky blue"] == "#56B4E9"
    assert palette.OKABE_ITO["blue"] == "#0072B2"
    assert set(palette.SERIES) <= set(palette.OKABE_ITO.values())
    assert {palette.POSTERIOR, palette.PRIOR, palette.TRUTH} <= set(palette.OKABE_ITO.values())


@pytest.mark.parametrize("a,b", neighbours())
def test_neighbouring_colours_stay_apart(a, b):
    assert grey_gap(a, b) >= GREY_MIN, (a, b, grey_gap(a, b))
    assert simulated_gap(a, b, DEUTERANOPIA) >= SIMULATED_MIN
    assert simulated_gap(a, b, PROTANOPIA) >= SIMULATED_MIN


@pytest.mark.parametrize("colour", palette.SERIES + (palette.POSTERIOR, palette.PRIOR))
def test_series_show_on_the_white_page(colour):
    assert grey_gap(colour, WHITE) >= GREY_MIN


def test_red_green_pair_fails():
    # Negative control: a red and a green of equal lightness, the classic pair that people
    # with deuteranopia cannot tell apart, must fail both checks.
    red, green = "#c0504d", "#6f8f2f"
    assert grey_gap(red, green) < GREY_MIN
    assert simulated_gap(red, green, DEUTERANOPIA) < SIMULATED_MIN
    assert not distinguishable(red, green)
    # ...while the same hues at different lightness pass the grey-scale check.
    assert grey_gap("#7f1d1d", "#9ad36a") >= GREY_MIN
    # The previous chain colours (a rust and an olive green) fail too.
    assert not distinguishable("#b5562b", "#6a8f3c")


def lightness_steps(name: str, matrix) -> np.ndarray:
    cmap = colormaps[name]
    light = [simulate(cmap(x)[:3], matrix)[0] for x in np.linspace(0, 1, 33)]
    return np.diff(light)


@pytest.mark.parametrize("name", [palette.REWARD_MAP, palette.WIDTH_MAP])
@pytest.mark.parametrize("matrix", [None, DEUTERANOPIA, PROTANOPIA], ids=["grey", "deut", "prot"])
def test_colour_maps_keep_their_order_in_grey_scale(name, matrix):
    steps = lightness_steps(name, matrix)
    # Monotone lightness: every step between 33 samples moves L* the same way.
    assert np.all(steps > 0) or np.all(steps < 0), steps


def test_diverging_map_fails_the_order_check():
    # Negative control: red-white-blue (the previous reward map) is dark at both ends, so a
    # grey-scale copy cannot tell a large positive from a large negative reward.
    steps = lightness_steps("RdBu", None)
    assert not (np.all(steps > 0) or np.all(steps < 0))


HEX = re.compile(r"[\"']#[0-9a-fA-F]{6}[\"']")
# The page's style sheet (text colours, each with its word beside it) is not a figure.
NOT_FIGURES = {"palette.py", "html_parts.py"}


def hard_coded_colours(text: str) -> list[str]:
    return HEX.findall(text)


def test_figures_take_their_colours_from_the_palette():
    report = Path(palette.__file__).parent
    found = {p.name: hard_coded_colours(p.read_text()) for p in sorted(report.glob("*.py"))
             if p.name not in NOT_FIGURES}
    assert {k: v for k, v in found.items() if v} == {}
    # Negative control: a colour written into a figure module is found.
    assert hard_coded_colours('ax.plot(x, color="#1a1a1a")') == ['"#1a1a1a"']
