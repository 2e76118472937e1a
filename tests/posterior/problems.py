"""Small seeded posterior problems shared by the tests, and cached runs on them.

Every random object comes from an explicit integer seed (``numpy.random.default_rng``). The
cached runs (``functools.cache``) are shared between test modules of one pytest process, so
the expensive sampling happens once.
"""

from __future__ import annotations

from functools import cache

import numpy as np

import bayesirl as bi
from bayesirl.execution.backend import Processes
from bayesirl.likelihood import LikelihoodValue
from bayesirl.posterior import PosteriorModel

PRIOR = bi.Normal(0.0, 2.0)


def small_mdp(seed: int, n_features: int, n_states: int = 6, n_actions: int = 3,
              discount: float = 0.8, horizon: int | None = None) -> bi.TabularMDP:
    """Dense Dirichlet(0.5) dynamics (stochastic, uneven) and N(0, 1) state-action features."""
    rng = np.random.default_rng(seed)
    trans = rng.dirichlet(np.full(n_states, 0.5), size=(n_states, n_actions))
    phi = rng.normal(size=(n_states, n_actions, n_features))
    names = ["x", "y", "z", "u", "v"][:n_features]
    return bi.TabularMDP(trans, phi, discount=discount, horizon=horizon, feature_names=names)


@cache
def two_feature_likelihood() -> bi.BoltzmannLikelihood:
    """S = 6, A = 3, F = 2, discount 0.8; 6 episodes x 8 steps from w = (0.8, -0.5).

    48 demonstrated steps: few enough that the N(0, 2^2) prior and the skew of the likelihood
    are visible, so a sampler comparison is not a Gaussian one in disguise.
    """
    mdp = small_mdp(0, 2)
    demos = bi.simulate(mdp, np.array([0.8, -0.5]), episodes=6, length=8, seed=1)
    return bi.BoltzmannLikelihood(mdp, demos)


@cache
def three_feature_likelihood() -> bi.BoltzmannLikelihood:
    """S = 6, A = 3, F = 3, discount 0.8; 4 episodes x 8 steps from w = (0.8, -0.5, 0.3).

    32 steps: with x pinned and beta sampled the posterior of beta is visibly skewed.
    """
    mdp = small_mdp(2, 3)
    demos = bi.simulate(mdp, np.array([0.8, -0.5, 0.3]), episodes=4, length=8, seed=3)
    return bi.BoltzmannLikelihood(mdp, demos)


# The sampled-rationality problem: pin x = 1 (the scale), beta ~ LogNormal(0, 0.5).
PIN = {"x": 1.0}
RATIONALITY = bi.LogNormal(0.0, 0.5)


def pinned_model() -> PosteriorModel:
    """A fresh PosteriorModel (own likelihood copy) of the sampled-rationality problem."""
    return PosteriorModel(_copy(three_feature_likelihood()), PRIOR, RATIONALITY, PIN)


def two_feature_model() -> PosteriorModel:
    """A fresh PosteriorModel of the two-feature, fixed-rationality problem."""
    return PosteriorModel(_copy(two_feature_likelihood()), PRIOR)


def _copy(lik: bi.BoltzmannLikelihood) -> bi.BoltzmannLikelihood:
    return bi.BoltzmannLikelihood(lik.mdp, lik.demos, rationality=lik.rationality,
                                  q_function=lik.q_function, tol=lik.tol)


@cache
def nuts_two_feature(seed: int = 10, draws: int = 1000, warmup: int = 500) -> bi.Posterior:
    """bayesirl.sample (NUTS) on the two-feature problem, 4 chains, in this process."""
    return bi.sample(two_feature_likelihood(), PRIOR, chains=4, draws=draws, warmup=warmup,
                     seed=seed, progress=False, backend=Processes(1))


@cache
def nuts_pinned(seed: int = 20, draws: int = 1000, warmup: int = 500) -> bi.Posterior:
    """bayesirl.sample (NUTS) on the sampled-rationality problem, 4 chains."""
    return bi.sample(three_feature_likelihood(), PRIOR, chains=4, draws=draws, warmup=warmup,
                     seed=seed, progress=False, backend=Processes(1), rationality=RATIONALITY,
                     pin=PIN)


class WalledLikelihood:
    """A Boltzmann likelihood with a hard wall: ``log L = -inf`` where ``w[0] > cut``.

    A target with a discontinuity inside its bulk forces NUTS divergences (Betancourt 2017,
    "A conceptual introduction to HMC", sec. 6.2: trajectories that cross into a region of
    zero density). Picklable (module level), as ``sample`` needs.
    """

    def __init__(self, inner: bi.BoltzmannLikelihood, cut: float) -> None:
        self.inner, self.cut = inner, float(cut)
        self.mdp, self.demos = inner.mdp, inner.demos
        self.rationality, self.q_function, self.tol = inner.rationality, inner.q_function, inner.tol

    def evaluate(self, weights, rationality=None) -> LikelihoodValue:
        value = self.inner.evaluate(weights, rationality)
        if weights[0] > self.cut:
            return LikelihoodValue(-np.inf, value.grad_weights, value.grad_log_rationality)
        return value
