"""An invented scenario: a walker crossing a small park (for demos and tests only).

The park is a grid; each cell may be muddy, sloped or shaded, and the walker wants to reach the
water fountain, an absorbing cell. Nothing here is measured data.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from bayesirl.model import TabularMDP

PARK = [
    "..mm..t",
    ".smm.tt",
    ".s...t.",
    "..ss...",
    "t..mm..",
    "tt..m.W",
]
FEATURES = ("mud", "slope", "shade", "water")
SYMBOLS = {".": (0, 0, 0, 0), "m": (1, 0, 0, 0), "s": (0, 1, 0, 0), "t": (0, 0, 1, 0),
           "W": (0, 0, 0, 1)}
MOVES = [(-1, 0), (0, 1), (1, 0), (0, -1)]  # up, right, down, left
SLIP = 0.1  # probability that a step goes to another random neighbour instead


def park_mdp(discount: float = 0.9) -> TabularMDP:
    """4-neighbour slippery grid; the fountain cell absorbs."""
    rows, cols = len(PARK), len(PARK[0])
    n = rows * cols
    phi = np.array([SYMBOLS[ch] for line in PARK for ch in line], dtype=float)
    p = sp.lil_matrix((n * 4, n))
    for s in range(n):
        r, c = divmod(s, cols)
        for a in range(4):
            if PARK[r][c] == "W":
                p[s * 4 + a, s] = 1.0
                continue
            for b, (dr, dc) in enumerate(MOVES):
                rr, cc = min(max(r + dr, 0), rows - 1), min(max(c + dc, 0), cols - 1)
                p[s * 4 + a, rr * cols + cc] += (1 - SLIP) if a == b else SLIP / 3
    return TabularMDP(
        p.tocsr(), phi, discount=discount, feature_names=FEATURES, grid_shape=(rows, cols)
    )



# Weights used to simulate the demo walker: mud and slope are avoided, shade is mildly liked,
# the fountain is the goal.
PARK_WEIGHTS = np.array([-1.0, -0.5, 0.3, 2.0])
