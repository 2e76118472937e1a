"""Small problems for the designer tests, with posteriors made of chosen draws.

A :class:`~bayesirl.Posterior` built from given draws (no sampling) makes the designer's
inputs exact and the tests fast; the slow suite samples real posteriors.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

import bayesirl as bi
from bayesirl.posterior.model import PosteriorModel


def posterior_from_draws(mdp, demos, draws, rationality: float = 1.0) -> bi.Posterior:
    """A Posterior whose only chain holds ``draws`` ``(N, F)``."""
    lik = bi.BoltzmannLikelihood(mdp, demos, rationality=rationality)
    model = PosteriorModel(lik)
    w = np.asarray(draws, dtype=float)[None]
    return bi.Posterior(w, None, {}, model, {"method": "given"}, 0, 0.0, [0.0])


def toy_mdp() -> bi.TabularMDP:
    """Four states that loop to themselves; two actions; two features.

    At state 2, action 0 earns feature 0 and action 1 earns feature 1. Everywhere else
    action 0 earns both features and action 1 nothing. The hypotheses ``w = (2, 0)`` and
    ``(0, 2)`` therefore give identical policies except at state 2: only state 2 separates
    them, by construction.
    """
    n_s, n_a = 4, 2
    p = np.zeros((n_s, n_a, n_s))
    for s in range(n_s):
        p[s, :, s] = 1.0
    phi = np.zeros((n_s, n_a, 2))
    phi[:, 0, :] = 1.0
    phi[2, 0] = (1.0, 0.0)
    phi[2, 1] = (0.0, 1.0)
    return bi.TabularMDP(p, phi, discount=0.9, feature_names=("left", "right"))


def tiny_mdp(seed: int = 3) -> bi.TabularMDP:
    """Three states, two actions, stochastic dynamics with two successors per pair."""
    rng = np.random.default_rng(seed)
    n_s, n_a = 3, 2
    p = np.zeros((n_s * n_a, n_s))
    for r in range(n_s * n_a):
        succ = rng.choice(n_s, size=2, replace=False)
        p[r, succ] = rng.dirichlet([1.0, 1.0])
    phi = rng.normal(size=(n_s, n_a, 2))
    return bi.TabularMDP(sp.csr_matrix(p), phi, discount=0.8, feature_names=("a", "b"))


def some_demos(mdp, weights, seed: int = 0, episodes: int = 2, length: int = 3):
    """A few simulated demonstrations (their content does not matter to the designer)."""
    return bi.simulate(mdp, np.asarray(weights, dtype=float), episodes=episodes, length=length,
                       seed=seed)
