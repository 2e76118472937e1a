"""A small invented problem with stochastic dynamics for the dynamics-uncertainty tests.

Four states, two actions, two state-action features; every row of the true transitions has
three possible next states. All numbers are invented.
"""

from __future__ import annotations

import numpy as np

from bayesirl.model import TabularMDP, simulate
from bayesirl.model.transitions import DynamicsPosterior, TransitionLog

N_STATES, N_ACTIONS = 4, 2
WEIGHTS = np.array([1.0, -0.5])


def support() -> np.ndarray:
    """Row (s, a) can reach s, s+1 and s+2 (mod 4) after action 0, s, s-1, s+2 after 1."""
    pat = np.zeros((N_STATES, N_ACTIONS, N_STATES), dtype=bool)
    for s in range(N_STATES):
        for a, steps in ((0, (0, 1, 2)), (1, (0, -1, 2))):
            for k in steps:
                pat[s, a, (s + k) % N_STATES] = True
    return pat


def features() -> np.ndarray:
    phi = np.zeros((N_STATES, N_ACTIONS, 2))
    phi[:, :, 0] = (np.arange(N_STATES) == 3)[:, None]
    phi[:, 1, 1] = 1.0
    return phi


def mdp_with(p: np.ndarray, discount: float = 0.8) -> TabularMDP:
    return TabularMDP(p, features(), discount=discount, start=np.full(N_STATES, 0.25))


def draw_truth(rng: np.random.Generator, concentration: float = 1.0) -> np.ndarray:
    """True dynamics from the Dirichlet prior on the support (the coverage study's truth)."""
    pat = support()
    p = np.zeros(pat.shape)
    for s in range(N_STATES):
        for a in range(N_ACTIONS):
            idx = np.flatnonzero(pat[s, a])
            p[s, a, idx] = rng.dirichlet(np.full(idx.size, concentration))
    return p


def log_from(p: np.ndarray, per_row: int, rng: np.random.Generator) -> TransitionLog:
    """``per_row`` logged outcomes of every (s, a) under dynamics ``p``, as counts."""
    s_, a_, n_, c_ = [], [], [], []
    for s in range(N_STATES):
        for a in range(N_ACTIONS):
            counts = rng.multinomial(per_row, p[s, a])
            for n in np.flatnonzero(counts):
                s_.append(s), a_.append(a), n_.append(n), c_.append(counts[n])
    return TransitionLog(*(np.asarray(x, dtype=np.int64) for x in (s_, a_, n_)),
                         np.asarray(c_, dtype=np.float64))


def posterior_of(log: TransitionLog, concentration: float = 1.0) -> DynamicsPosterior:
    return DynamicsPosterior(support(), log, n_actions=N_ACTIONS,
                             concentration=concentration)


def demos_from(p: np.ndarray, episodes: int, seed: int):
    return simulate(mdp_with(p), WEIGHTS, episodes=episodes, length=10, seed=seed)
