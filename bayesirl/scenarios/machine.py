"""An invented scenario: when to replace a machine as it wears (for demos and tests only).

A dynamic discrete-choice problem without a map, at the discounts such problems use. Each
month an operator sees the wear level ``x`` (0 = new, ``WEAR_LEVELS - 1`` = worn out) and
either keeps the machine, paying a running cost that grows with wear, or replaces it at a
fixed price. Wear then grows by 0, 1 or 2 levels at random; a replaced machine starts again
from level 0. Months are discounted by 0.999 (about 1.2% a year), so a decision weighs the
next several hundred months. Nothing here is measured data.
"""

from __future__ import annotations

import numpy as np

from bayesirl.model import TabularMDP

WEAR_LEVELS = 80
DISCOUNT = 0.999  # per month
ACTIONS = ("keep", "replace")
FEATURES = ("wear", "replacement")
# Probability that wear grows by 0, 1 or 2 levels in one month (invented).
WEAR_STEPS = (0.5, 0.4, 0.1)
# Weights used to simulate the operators: running a worn-out machine costs 2 a month more
# than a new one, a replacement 15; most replacements then happen at wear 17-30 (about three
# years after the last one).
MACHINE_WEIGHTS = np.array([-2.0, -15.0])


def machine_arrays(levels: int = WEAR_LEVELS) -> tuple[np.ndarray, np.ndarray]:
    """Transitions ``(S, A, S)`` and state-action features ``(S, A, F)``."""
    p = np.zeros((levels, 2, levels))
    for x in range(levels):
        for a, origin in ((0, x), (1, 0)):  # replacing restarts the wear from level 0
            for k, q in enumerate(WEAR_STEPS):
                p[x, a, min(origin + k, levels - 1)] += q
    phi = np.zeros((levels, 2, 2))
    phi[:, 0, 0] = np.arange(levels) / (levels - 1)  # running cost grows linearly with wear
    phi[:, 1, 1] = 1.0
    return p, phi


def machine_mdp(discount: float = DISCOUNT, levels: int = WEAR_LEVELS) -> TabularMDP:
    """The replacement problem; every machine starts new."""
    p, phi = machine_arrays(levels)
    start = np.zeros(levels)
    start[0] = 1.0
    return TabularMDP(p, phi, discount=discount, start=start, feature_names=FEATURES)


def wear_log(machines: int = 12, months: int = 10, seed: int = 5) -> list[tuple[int, str, int]]:
    """An invented maintenance log: ``machines`` machines at random wear levels 0-39, each
    kept for ``months`` months, one ``(wear, "keep", next wear)`` record per month."""
    rng = np.random.default_rng(seed)
    rows = []
    for _ in range(machines):
        x = int(rng.integers(0, 40))
        for _ in range(months):
            nxt = min(x + int(rng.choice(3, p=WEAR_STEPS)), WEAR_LEVELS - 1)
            rows.append((x, "keep", nxt))
            x = nxt
    return rows
