"""Shared fixtures for the engine tests: seeded random sparse MDPs and demonstrations.

Every random object is built from an explicit integer seed through ``numpy.random.default_rng``
so that the whole suite is deterministic.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

import bayesirl as bi


def sparse_transitions(rng: np.random.Generator, n_states: int, n_actions: int, n_succ: int):
    """``(S*A, S)`` CSR matrix: every ``(s, a)`` row has ``n_succ`` distinct successors.

    Probabilities are Dirichlet(1) draws, renormalised by their own sum so that each row sums
    to 1 up to a few ulps (far inside the model's 1e-8 row-sum check).
    """
    rows, cols, vals = [], [], []
    for r in range(n_states * n_actions):
        succ = rng.choice(n_states, size=n_succ, replace=False)
        p = rng.dirichlet(np.ones(n_succ))
        rows.extend([r] * n_succ)
        cols.extend(succ.tolist())
        vals.extend((p / p.sum()).tolist())
    return sp.csr_matrix((vals, (rows, cols)), shape=(n_states * n_actions, n_states))


def make_random_mdp(
    seed: int,
    n_states: int = 20,
    n_actions: int = 3,
    n_succ: int = 3,
    n_features: int = 3,
    state_action: bool = False,
    discount: float = 0.9,
    horizon: int | None = None,
) -> bi.TabularMDP:
    """A seeded random sparse MDP with standard-normal state or state-action features."""
    rng = np.random.default_rng(seed)
    p = sparse_transitions(rng, n_states, n_actions, n_succ)
    shape = (n_states, n_actions, n_features) if state_action else (n_states, n_features)
    features = rng.normal(size=shape)
    start = rng.dirichlet(np.ones(n_states))
    return bi.TabularMDP(p, features, discount=discount, horizon=horizon, start=start)


@pytest.fixture
def random_mdp():
    """Factory fixture: ``random_mdp(seed, **kwargs)`` -> :class:`bayesirl.TabularMDP`."""
    return make_random_mdp


@pytest.fixture
def demos_for():
    """Factory fixture: simulated demonstrations for an MDP (seeded).

    ``demos_for(mdp, seed, episodes=6, length=None, rationality=1.0)``; ``length`` defaults to
    the horizon (finite) or 10 (discounted). Weights are standard normal from ``seed``.
    """

    def make(mdp, seed, episodes=6, length=None, rationality=1.0):
        rng = np.random.default_rng(seed)
        w = rng.normal(size=mdp.n_features)
        if length is None:
            length = mdp.horizon if mdp.horizon is not None else 10
        return bi.simulate(mdp, w, episodes=episodes, length=length, rationality=rationality,
                           seed=rng)

    return make
