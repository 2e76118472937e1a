"""SBC problems for the further evidence kinds: state-only walks, comparisons, and
comparisons with a sampled judge and "no preference" answers.

Truths ``w ~ N(0, 1)`` per feature (known rationalities), data simulated given them, the
posterior of ``N(0, 1)`` prior + one evidence term sampled with the real NUTS chain
(:func:`bayesirl.sampler.run_chain`). The runner (:func:`bayesirl.validation.run_sbc`)
ranks both weights (Talts et al. 2018). ``bayesirl.sample`` does not take these terms yet,
so the prior and the term are put together here, in a few lines.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from bayesirl.errors import SolverError
from bayesirl.evidence.comparisons import ComparisonTerm, discounted_features
from bayesirl.evidence.partial import PartialTerm, state_only
from bayesirl.model import TabularMDP, simulate
from bayesirl.sampler import run_chain
from bayesirl.validation.grid import PosteriorDraws


def _random_mdp(seed: int, n_states: int, n_actions: int, n_features: int, discount: float):
    rng = np.random.default_rng(seed)
    trans = rng.dirichlet(np.full(n_states, 0.5), size=(n_states, n_actions))
    phi = rng.normal(size=(n_states, n_actions, n_features))
    return TabularMDP(trans, phi, discount=discount)


def _posterior(term, n_features: int, chains: int, warmup: int, draws: int, seed: int,
               names: dict) -> PosteriorDraws:
    """NUTS on ``N(0, 1)`` prior + ``term`` (the weights are the sampler's coordinates)."""

    def logdensity_and_grad(theta):
        try:
            v = term.evaluate({"weights": theta, **names})
        except SolverError:
            return -np.inf, np.full(theta.size, np.nan)
        return v.logp - 0.5 * theta @ theta, v.grads["weights"] - theta

    seeds = np.random.SeedSequence(seed).spawn(chains)
    results = [run_chain(logdensity_and_grad, np.zeros(n_features), draws, warmup, s)
               for s in seeds]
    out = np.stack([r.draws for r in results])
    return PosteriorDraws(out, int(sum(np.sum(r.stats["divergent"]) for r in results)))


@dataclass(frozen=True)
class StateOnlySBC:
    """Walks with no action recorded, on a small random MDP, rationality 1 known."""

    n_features: int = 2
    n_states: int = 5
    n_actions: int = 3
    discount: float = 0.5
    episodes: int = 4
    length: int = 8
    chains: int = 2
    warmup: int = 150
    mdp_seed: int = 7

    names = ("w[0]", "w[1]")

    @cached_property
    def mdp(self) -> TabularMDP:
        """Dense Dirichlet(0.5) dynamics, N(0, 1) state-action features (fixed seed)."""
        return _random_mdp(self.mdp_seed, self.n_states, self.n_actions, self.n_features,
                           self.discount)

    def simulate(self, rng: np.random.Generator):
        """Truth ``w`` and the walks' states (the actions are dropped)."""
        w = rng.standard_normal(self.n_features)
        demos = simulate(self.mdp, w, episodes=self.episodes, length=self.length,
                         seed=int(rng.integers(2**31)))
        return w, state_only([s for s, _ in demos.episodes])

    def posterior(self, data, draws: int, seed: int) -> PosteriorDraws:
        """NUTS on prior + state-only term."""
        term = PartialTerm(self.mdp, data)
        return _posterior(term, self.n_features, self.chains, self.warmup, draws, seed,
                          {"rationality": 1.0})

    def describe(self) -> dict[str, str]:
        """Settings for the report."""
        return {"model": f"state-only walks, {self.n_features} features, {self.n_states} "
                         f"states, discount {self.discount:g}, {self.episodes} x "
                         f"{self.length} steps",
                "prior": "w ~ N(0, 1) per feature; rationality 1 (known)",
                "sampler": f"NUTS, {self.chains} chains, {self.warmup} warmup"}


@dataclass(frozen=True)
class ComparisonSBC:
    """Answers to random pairs from a fixed pool of episodes, judge's rationality known."""

    n_features: int = 2
    pool: int = 12
    pairs: int = 30
    rationality: float = 1.0
    chains: int = 2
    warmup: int = 150
    mdp_seed: int = 7

    names = ("w[0]", "w[1]")

    @cached_property
    def features(self) -> np.ndarray:
        """Discounted feature sums of the pool's episodes (random walks, fixed seed)."""
        mdp = _random_mdp(self.mdp_seed, 5, 3, self.n_features, 0.8)
        demos = simulate(mdp, np.zeros(self.n_features), episodes=self.pool, length=8,
                         seed=self.mdp_seed)
        return np.array([discounted_features(mdp, s, a) for s, a in demos.episodes])

    def simulate(self, rng: np.random.Generator):
        """Truth ``w`` and the (preferred - other) feature differences of each answer."""
        w = rng.standard_normal(self.n_features)
        a = rng.integers(0, self.pool, self.pairs)
        b = (a + rng.integers(1, self.pool, self.pairs)) % self.pool
        d = self.features[a] - self.features[b]
        p = 1.0 / (1.0 + np.exp(-self.rationality * d @ w))
        first = rng.random(self.pairs) < p
        return w, np.where(first[:, None], d, -d)

    def posterior(self, data, draws: int, seed: int) -> PosteriorDraws:
        """NUTS on prior + comparison term."""
        term = ComparisonTerm(data, rationality=self.rationality)
        return _posterior(term, self.n_features, self.chains, self.warmup, draws, seed, {})

    def describe(self) -> dict[str, str]:
        """Settings for the report."""
        return {"model": f"{self.pairs} answers over a pool of {self.pool} episodes, "
                         f"{self.n_features} features, judge rationality {self.rationality:g}",
                "prior": "w ~ N(0, 1) per feature",
                "sampler": f"NUTS, {self.chains} chains, {self.warmup} warmup"}


@dataclass(frozen=True)
class JudgeSBC:
    """A sampled judge: comparisons with "no preference" answers (Davidson's model), the
    judge's rationality ``beta_c`` and tie parameter ``nu`` unknown, beside a few
    demonstrations (rationality 1 known) that set the weights' scale.

    Truth: ``w ~ N(0, 1)`` per feature, ``log beta_c ~ N(judge)``, ``log nu ~ N(tie)``. The
    posterior is the real :class:`~bayesirl.posterior.PosteriorModel` with the term's
    LogNormal priors (so the parameter layout, the priors on the log scale and the
    gradients of the sampled quantities are all under test), sampled by NUTS; ranks are of
    ``(w, log beta_c, log nu)``.
    """

    n_features: int = 2
    pool: int = 12
    pairs: int = 40
    episodes: int = 2
    length: int = 5
    judge: tuple[float, float] = (0.0, 0.5)
    tie: tuple[float, float] = (-0.5, 0.5)
    chains: int = 2
    warmup: int = 150
    mdp_seed: int = 7

    names = ("w[0]", "w[1]", "log judge_rationality", "log judge_tie")

    @cached_property
    def mdp(self) -> TabularMDP:
        """The small random MDP of :class:`StateOnlySBC` (discount 0.8)."""
        return _random_mdp(self.mdp_seed, 5, 3, self.n_features, 0.8)

    @cached_property
    def features(self) -> np.ndarray:
        """Discounted feature sums of the pool's episodes (random walks, fixed seed)."""
        demos = simulate(self.mdp, np.zeros(self.n_features), episodes=self.pool, length=8,
                         seed=self.mdp_seed)
        return np.array([discounted_features(self.mdp, s, a) for s, a in demos.episodes])

    def simulate(self, rng: np.random.Generator):
        """Truth ``(w, log beta_c, log nu)`` and ``(demonstrations, differences, ties)``."""
        w = rng.standard_normal(self.n_features)
        log_b = self.judge[0] + self.judge[1] * rng.standard_normal()
        log_nu = self.tie[0] + self.tie[1] * rng.standard_normal()
        demos = simulate(self.mdp, w, episodes=self.episodes, length=self.length,
                         seed=int(rng.integers(2**31)))
        a = rng.integers(0, self.pool, self.pairs)
        b = (a + rng.integers(1, self.pool, self.pairs)) % self.pool
        d = self.features[a] - self.features[b]
        z = np.exp(log_b) * d @ w
        p = np.stack([np.exp(z / 2), np.exp(-z / 2), np.full(self.pairs, np.exp(log_nu))], 1)
        p /= p.sum(axis=1, keepdims=True)
        u = rng.random(self.pairs)
        answer = (u > p[:, 0]).astype(int) + (u > p[:, 0] + p[:, 1])  # 0, 1 or 2 (tie)
        oriented = np.where((answer == 1)[:, None], -d, d)
        return np.array([*w, log_b, log_nu]), (demos, oriented, answer == 2)

    def posterior(self, data, draws: int, seed: int) -> PosteriorDraws:
        """NUTS on the PosteriorModel of demonstrations + comparison term."""
        from bayesirl.likelihood import BoltzmannLikelihood
        from bayesirl.posterior import PosteriorModel
        from bayesirl.priors import LogNormal, Normal

        demos, d, ties = data
        term = ComparisonTerm(d, rationality=LogNormal(*self.judge), ties=ties,
                              tie=LogNormal(*self.tie))
        model = PosteriorModel(BoltzmannLikelihood(self.mdp, demos), Normal(0.0, 1.0), 1.0,
                               extra=[term])
        seeds = np.random.SeedSequence(seed).spawn(self.chains)
        results = [run_chain(model.logdensity_and_grad, np.zeros(model.dim), draws,
                             self.warmup, s) for s in seeds]
        # theta is (w, log beta_c, log nu) already: Normal's transform is the identity
        out = np.stack([r.draws for r in results])
        return PosteriorDraws(out, int(sum(np.sum(r.stats["divergent"]) for r in results)))

    def describe(self) -> dict[str, str]:
        """Settings for the report."""
        return {"model": f"{self.episodes} x {self.length}-step demonstrations and "
                         f"{self.pairs} answers (Davidson ties) over a pool of {self.pool} "
                         f"episodes, {self.n_features} features",
                "prior": f"w ~ N(0, 1); log beta_c ~ N{self.judge}; log nu ~ N{self.tie}",
                "sampler": f"NUTS, {self.chains} chains, {self.warmup} warmup"}
