"""Small seeded problems with several demonstrators (different true weights)."""

from __future__ import annotations

from functools import cache

import numpy as np
from posterior.problems import small_mdp

import bayesirl as bi

# Three demonstrators of the 6-state, 2-feature problem of tests/posterior (invented numbers).
TRUE_WEIGHTS = {"ana": (0.8, -0.5), "ben": (0.2, 0.4), "cai": (1.0, 0.0)}


def labelled_demos(mdp, truths: dict, episodes: int, length: int, seed: int):
    """Episodes simulated per demonstrator, concatenated with their names."""
    eps, names = [], []
    for d, (name, w) in enumerate(truths.items()):
        demos = bi.simulate(mdp, np.asarray(w, dtype=float), episodes=episodes, length=length,
                            seed=seed + d)
        eps += list(demos.episodes)
        names += [name] * demos.n_episodes
    return bi.Demonstrations(eps, demonstrators=names)


@cache
def three_demonstrators(gradient_rtol: float = 1e-8) -> bi.BoltzmannLikelihood:
    """S = 6, A = 3, F = 2; 3 demonstrators x 3 episodes x 6 steps (54 steps)."""
    mdp = small_mdp(0, 2)
    return bi.BoltzmannLikelihood(mdp, labelled_demos(mdp, TRUE_WEIGHTS, 3, 6, 10),
                                  gradient_rtol=gradient_rtol)


def fresh(lik: bi.BoltzmannLikelihood, demos=None) -> bi.BoltzmannLikelihood:
    """A cold copy (own warm starts), optionally with other demonstrations."""
    return bi.BoltzmannLikelihood(lik.mdp, lik.demos if demos is None else demos,
                                  rationality=lik.rationality, q_function=lik.q_function,
                                  tol=lik.tol, gradient_rtol=lik.gradient_rtol)
