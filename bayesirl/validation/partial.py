"""SBC problem for partial pooling: population mean, spread and one demonstrator's weight.

Truths from the prior the sampler uses (mu ~ N(0, mu_scale^2), tau ~ HalfNormal(spread_scale),
z_d ~ N(0, 1), w_d = mu + tau z_d), demonstrations simulated per demonstrator from w_d on a
small fixed random MDP, the posterior sampled by :func:`bayesirl.sample` with
``pooling="partial"`` (NUTS, every stage the real one). The runner
(:func:`bayesirl.validation.run_sbc`) ranks ``mu``, ``spread`` and demonstrator 0's weight
of the first feature (Talts et al. 2018).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from bayesirl.execution import sample
from bayesirl.execution.backend import Processes
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.model import Demonstrations, TabularMDP, simulate
from bayesirl.posterior.groups import Pooling
from bayesirl.priors import HalfNormal, Normal
from bayesirl.validation.grid import PosteriorDraws


@dataclass(frozen=True)
class PartialSBC:
    """Partial pooling of ``n_groups`` demonstrators on a random ``n_states``-state MDP."""

    n_groups: int = 3
    n_features: int = 1
    n_states: int = 5
    n_actions: int = 3
    discount: float = 0.5
    episodes: int = 2
    length: int = 6
    mu_scale: float = 1.0
    spread_scale: float = 1.0
    chains: int = 2
    warmup: int = 150
    mdp_seed: int = 7
    # The analyst's pooling when deliberately wrong (negative controls), e.g. Pooling("partial",
    # 0.0): every demonstrator given the population's weights although they differ.
    sampler_pooling: Pooling | None = None

    names = ("mu", "spread", "w[0]")

    @cached_property
    def mdp(self) -> TabularMDP:
        """Dense Dirichlet(0.5) dynamics and N(0, 1) state-action features (fixed seed)."""
        rng = np.random.default_rng(self.mdp_seed)
        trans = rng.dirichlet(np.full(self.n_states, 0.5), size=(self.n_states,
                                                                   self.n_actions))
        phi = rng.normal(size=(self.n_states, self.n_actions, self.n_features))
        return TabularMDP(trans, phi, discount=self.discount)

    def simulate(self, rng: np.random.Generator):
        """Truth ``(mu, spread, w_0)`` of feature 0 and labelled demonstrations."""
        f = self.n_features
        mu = Normal(0.0, self.mu_scale).draw(rng, f)
        tau = HalfNormal(self.spread_scale).draw(rng, f)
        w = mu + tau * rng.standard_normal((self.n_groups, f))
        episodes, names = [], []
        for d in range(self.n_groups):
            demos = simulate(self.mdp, w[d], episodes=self.episodes, length=self.length,
                             seed=int(rng.integers(2**31)))
            episodes += list(demos.episodes)
            names += [f"d{d}"] * demos.n_episodes
        return np.array([mu[0], tau[0], w[0, 0]]), Demonstrations(episodes, demonstrators=names)

    def posterior(self, data, draws: int, seed: int) -> PosteriorDraws:
        """``bayesirl.sample`` with partial pooling, in this process."""
        post = sample(BoltzmannLikelihood(self.mdp, data), Normal(0.0, self.mu_scale),
                      chains=self.chains, draws=draws, warmup=self.warmup, seed=seed,
                      progress=False, backend=Processes(1),
                      pooling=self.sampler_pooling or Pooling("partial",
                                                              HalfNormal(self.spread_scale)))
        g = post.groups
        out = np.stack([post.weights[..., 0], g["spread"][..., 0],
                        g["demonstrator_weights"][..., 0, 0]], axis=-1)
        return PosteriorDraws(out, int(post.stats["diverging"].sum()))

    def describe(self) -> dict[str, str]:
        """Settings for the report."""
        return {"model": f"partial pooling of {self.n_groups} demonstrators, "
                         f"{self.n_features} feature(s), {self.n_states} states, discount "
                         f"{self.discount:g}, {self.episodes} x {self.length} steps each",
                "prior": f"mu ~ N(0, {self.mu_scale:g}^2), spread ~ HalfNormal("
                         f"{self.spread_scale:g})",
                "sampler": f"NUTS, {self.chains} chains, {self.warmup} warmup"}
