"""Seeded problems for the report tests, and cached posterior runs on them.

Every random object comes from an explicit integer seed. The cached runs (``functools.cache``)
are shared by the test modules of one pytest process, so each expensive sample runs once.
The small grids are built here from first principles (4-neighbour moves with slip), not taken
from the package, so the tests do not depend on the scenario code they help to check.
"""

from __future__ import annotations

from functools import cache

import numpy as np

import bayesirl as bi
from bayesirl.report import ambiguity
from bayesirl.scenarios import PARK_WEIGHTS, park_mdp

MOVES = ((-1, 0), (0, 1), (1, 0), (0, -1))  # up, right, down, left
SLIP = 0.1  # the intended move fails with this probability, going to another neighbour


def grid_transitions(rows: int, cols: int, slip: float = SLIP) -> np.ndarray:
    """Dense ``(S, 4, S)`` slippery 4-neighbour grid; moves into a wall stay put."""
    n = rows * cols
    p = np.zeros((n, 4, n))
    for s in range(n):
        r, c = divmod(s, cols)
        for a in range(4):
            for b, (dr, dc) in enumerate(MOVES):
                rr, cc = min(max(r + dr, 0), rows - 1), min(max(c + dc, 0), cols - 1)
                p[s, a, rr * cols + cc] += (1.0 - slip) if a == b else slip / 3.0
    return p


def grid_with_island() -> np.ndarray:
    """A 4x4 grid (states 0-15) and a separate 2x2 island (16-19) with no path between them."""
    p = np.zeros((20, 4, 20))
    p[:16, :, :16] = grid_transitions(4, 4)
    p[16:, :, 16:] = grid_transitions(2, 2)
    return p


MAIN_START = np.r_[np.full(16, 1.0 / 16.0), np.zeros(4)]  # uniform on the 4x4 part only


def shaping_column(p: np.ndarray, potential: np.ndarray, discount: float) -> np.ndarray:
    """``g E[Phi(s') | s, a] - Phi(s)`` as an ``(S, A)`` table (Ng, Harada & Russell 1999)."""
    return discount * (p @ potential) - potential[:, None]


# --- the small grid for contraction, coverage and policy risk -----------------------------
# 16 states, 4 actions, three random state features of sd FEATURE_SCALE: weights from the
# N(0, 1) prior then give rewards of a few tenths per step, and 5-80 episodes of 8 steps span
# "prior still matters" to "pinned down".
SMALL_NAMES = ("a", "b", "c")
FEATURE_SCALE = 0.4
SMALL_PRIOR = bi.Normal(0.0, 1.0)
SMALL_DISCOUNT = 0.9


def small_grid(extra_constant: bool = False) -> bi.TabularMDP:
    """The 4x4 grid with features a, b, c (and optionally a constant feature ``const``)."""
    rng = np.random.default_rng(2024)
    phi = FEATURE_SCALE * rng.normal(size=(16, 3))
    names = list(SMALL_NAMES)
    if extra_constant:
        phi = np.column_stack([phi, np.ones(16)])
        names.append("const")
    return bi.TabularMDP(grid_transitions(4, 4), phi, discount=SMALL_DISCOUNT,
                         start=np.full(16, 1.0 / 16.0), feature_names=names)


# --- the park scenario, as given and with mud duplicated ----------------------------------
MUD2_NAMES = ("mud", "mud2", "slope", "shade", "water")
MUD2_WEIGHTS = np.array([-0.5, -0.5, -0.5, 0.3, 2.0])  # mud + mud2 = -1 as in PARK_WEIGHTS


def park_mud2() -> bi.TabularMDP:
    """The park with a second feature ``mud2`` identical to ``mud``."""
    base = park_mdp()
    phi = np.asarray(base.features)
    return bi.TabularMDP(base.transitions, np.column_stack([phi[:, 0], phi]),
                         discount=base.discount, feature_names=MUD2_NAMES,
                         grid_shape=base.grid_shape)


def park_demos(mdp: bi.TabularMDP, weights) -> bi.Demonstrations:
    """The README's simulation settings with simulate's default (uniform) start states."""
    return bi.simulate(mdp, weights, episodes=40, length=15, seed=1)


# Dense mass matrix: the mud2 posterior is a ridge (sd ~7 along mud - mud2 against ~0.2 across
# it) that a diagonal mass matrix crosses only with deep trees (measured 74 s against 12 s).
SAMPLE_SETTINGS = {"chains": 2, "draws": 1000, "warmup": 500, "dense_mass": True,
                   "progress": False}


@cache
def park_posterior() -> bi.Posterior:
    """Well-determined problem: the park with the README weights, default prior."""
    mdp = park_mdp()
    lik = bi.BoltzmannLikelihood(mdp, park_demos(mdp, PARK_WEIGHTS))
    return bi.sample(lik, seed=3, **SAMPLE_SETTINGS)


@cache
def mud2_posterior() -> bi.Posterior:
    """Duplicated feature: only w_mud + w_mud2 is identified; default prior Normal(0, 5)."""
    mdp = park_mud2()
    lik = bi.BoltzmannLikelihood(mdp, park_demos(mdp, MUD2_WEIGHTS))
    return bi.sample(lik, seed=4, **SAMPLE_SETTINGS)


@cache
def mud2_report():
    """The ambiguity report of :func:`mud2_posterior` (one state's action probabilities)."""
    return ambiguity(mud2_posterior(), states=(0,))
