"""Every colour of the report's figures, in one place.

Categorical colours come from the colour-blind-safe palette of Okabe & Ito (2008), "Color
Universal Design (CUD): how to make figures and presentations that are friendly to colorblind
people" (hex values as the authors publish them). They are assigned so that series drawn next
to each other also differ in lightness, and so stay apart in grey-scale print:
``tests/report/test_palette.py`` checks that under a simulation of deuteranopia and
protanopia (Machado, Oliveira & Fernandes 2009) and in grey-scale, with a red/green pair as
the negative control.

Maps use colour maps whose lightness rises monotonically from one end to the other, so a
grey-scale copy still orders the values: cividis (Nunez, Anderton & Renslow 2018, built for
readers with colour-vision deficiencies) for rewards, which take either sign, and ColorBrewer's
YlGnBu (Harrower & Brewer 2003, marked colour-blind safe there) for interval widths, light at
zero so well-determined cells read as quiet background.
"""

from __future__ import annotations

OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky blue": "#56B4E9",
    "bluish green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish purple": "#CC79A7",
}

# Roles. The posterior is blue, the prior orange (also dashed), the truth black: CIE L* about
# 46, 71 and 0, so each pair differs in lightness as well as in hue.
POSTERIOR = OKABE_ITO["blue"]
PRIOR = OKABE_ITO["orange"]
TRUTH = OKABE_ITO["black"]
# Text, axes and neutral marks (a dark slate, not a data colour).
INK = "#22303c"
# Light background bands (reference ranges) and their centre line.
BAND = "#d9dee3"
BAND_LINE = "#8a96a3"
# States the demonstrations visited / never visited (per-state reward plot): L* 46 and 71.
VISITED = OKABE_ITO["blue"]
UNVISITED = OKABE_ITO["orange"]
# Series in order (chains of a rank plot), cycling: neighbours alternate dark and light, so
# each differs from the next (and the last from the first) by at least 20 in CIE L*
# (grey-scale) and stays apart under deuteranopia. Only four colours pass that with each
# other and against the white page (yellow is too light to draw a line with), so a fifth
# series repeats a colour; its line style, which cycles with another period, tells it apart.
SERIES = tuple(OKABE_ITO[k] for k in ("blue", "orange", "black", "sky blue"))
SERIES_STYLES = ("-", "--", "-.", ":", (0, (5, 1)), (0, (3, 1, 1, 1)))

# Marks drawn over a map (demonstrated paths, start and suggestion markers): near-black on a
# white halo or fill, so they show on the darkest and the lightest cells alike.
PATH = "#1a1a1a"
MARKER_EDGE = "#111111"
# The zero line of a plot of rewards.
ZERO_LINE = "#888888"

# Colour maps (matplotlib names).
# States where recorded choices fall outside the predictive band (model-fit map), on a grey
# map of visits: vermillion keeps its hue under deuteranopia and is darker than the light greys.
MISSED = OKABE_ITO["vermillion"]
# A demonstrator's estimate from their own episodes alone, beside the partially pooled one in
# the forest plot: a mid grey, lighter than the posterior blue in grey-scale too.
ALONE = "#8c8c8c"
VISITS_MAP = "Greys"
REWARD_MAP = "cividis"
WIDTH_MAP = "YlGnBu"


def series(k: int) -> tuple[str, object]:
    """Colour (cycling after four) and line style (cycling after six) of series ``k``.

    Parameters
    ----------
    k : int

    Returns
    -------
    (str, linestyle)
    """
    return SERIES[k % len(SERIES)], SERIES_STYLES[k % len(SERIES_STYLES)]
