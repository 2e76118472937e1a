"""Leave-one-episode-out predictive accuracy: PSIS-LOO (Vehtari, Gelman & Gabry 2017, via
ArviZ) with Pareto k per episode, and exact refits of the episodes where it is unreliable.

Episodes are the demonstrations and the episodes with unrecorded parts (an episode's value
is the log-probability of what was recorded of it). Comparison answers are left out one at
a time only on request (``over="comparisons"``), never mixed with episodes in one elpd.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np
from scipy.special import logsumexp

from bayesirl import arviz_compat
from bayesirl.errors import InputError
from bayesirl.evidence.comparisons import ComparisonTerm
from bayesirl.evidence.partial import PartialTerm
from bayesirl.execution import sample
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.posterior.loglik import COMPARISONS, EPISODES, draw_quantities

# Pareto k above which PSIS is unreliable for an episode: 0.7 (Vehtari, Gelman & Gabry
# 2017, section 2.1; common practice). Newer ArviZ uses min(1 - 1/log10(S), 0.7).
K_LIMIT = 0.7


@dataclass
class EpisodeLoo:
    """Expected log predictive density of each episode, left out in turn.

    Attributes
    ----------
    elpd, se : the total and its standard error
    p : effective number of parameters (``lppd - elpd``)
    elpd_i : per episode; exact values where :attr:`refitted` says so
    pareto_k : per episode (PSIS reliable below :data:`K_LIMIT`)
    refitted : episodes whose ``elpd_i`` came from an exact refit
    """

    elpd: float
    se: float
    p: float
    elpd_i: np.ndarray
    pareto_k: np.ndarray
    refitted: list[int] = field(default_factory=list)

    @property
    def unreliable(self) -> list[int]:
        """Episodes with Pareto k > 0.7 that were not refitted."""
        return [int(e) for e in np.flatnonzero(self.pareto_k > K_LIMIT)
                if int(e) not in self.refitted]

    def __repr__(self) -> str:
        return (f"EpisodeLoo(elpd={self.elpd:.2f}, se={self.se:.2f}, p={self.p:.2f}, "
                f"episodes={self.elpd_i.size}, unreliable={self.unreliable})")


# What PSIS-LOO leaves out, one at a time: an episode (the default; the demonstrations, then
# the episodes with unrecorded parts) or a comparison answer. The two are observations of
# different kinds, on different scales: one elpd never adds them up.
OVER = {"episodes": EPISODES, "comparisons": COMPARISONS}


def episode_loo(posterior, *, refit: bool = False, over: str = "episodes",
                **sample_options) -> EpisodeLoo:
    """PSIS-LOO per episode (or, with ``over="comparisons"``, per comparison answer) of
    ``posterior``; its log-likelihood is computed if missing.

    With ``refit``, every episode (answer) with Pareto k > 0.7 is left out and the posterior
    sampled again (same model, evidence and settings; ``sample_options`` override them), and
    its exact ``elpd_i`` replaces the estimate.
    """
    if over not in OVER:
        raise InputError(f"model fit: over must be one of {sorted(OVER)}; got {over!r}")
    if posterior.n_draws == 0:
        raise InputError("model fit: the run has no draws (interrupted during warmup)")
    have = posterior.compute_log_likelihood()
    if OVER[over] not in have:
        raise InputError(f"model fit: the run has no {over} to leave out")
    r = arviz_compat.loo(posterior.to_arviz(), OVER[over])
    out = EpisodeLoo(r.elpd, r.se, r.p, np.asarray(r.elpd_i, dtype=float),
                     np.asarray(r.pareto_k, dtype=float))
    if refit and out.unreliable:
        bad = out.unreliable
        exact = refit_episodes(posterior, bad, over=over, **sample_options)
        out.elpd_i[bad] = exact
        out.refitted = list(bad)
        n = out.elpd_i.size
        out.elpd = float(out.elpd_i.sum())
        out.se = float(np.sqrt(n * np.var(out.elpd_i)))
    return out


def refit_episodes(posterior, episodes, *, over: str = "episodes",
                   **sample_options) -> np.ndarray:
    """Exact ``log p(y_i | everything else)`` for each ``i`` in ``episodes`` (episode indices
    as in the log_likelihood group; answer indices with ``over="comparisons"``): sample
    without it (same model, evidence, seed and settings unless overridden), then average its
    likelihood over the draws (``log mean_s p(y_i | theta_s)``)."""
    if over not in OVER:
        raise InputError(f"refit: over must be one of {sorted(OVER)}; got {over!r}")
    return np.array([_refit_one(posterior, int(e), over, sample_options) for e in episodes])


def _refit_one(posterior, index: int, over: str, options: dict) -> float:
    model = posterior.model
    lik = model.likelihood
    demos = lik.demos
    held_out = leave_out(model, index, over)
    settings = {k: v for k, v in lik.__dict__.items()
                if k in ("rationality", "q_function", "tol", "gradient_rtol", "max_newton_steps",
                         "max_linear_iterations")}
    without = BoltzmannLikelihood(lik.mdp, demos.subset(held_out.demos), **settings)
    s = posterior.settings
    kwargs = {"prior": model.prior, "chains": posterior.n_chains, "draws": s["draws"],
              "warmup": s["warmup"], "seed": posterior.seed, "method": s["method"],
              "dense_mass": s["dense_mass"], "target_accept": s["target_accept"],
              "max_depth": s["max_depth"], "progress": False, "pin": model.pin or None,
              "rationality": (model.rationality_prior if model.rationality_prior is not None
                              else model.fixed_rationality),
              "pooling": model.pooling, "evidence": held_out.extra}
    kwargs.update(options)
    refit = sample(without, **kwargs)
    if over == "episodes" and index < demos.n_episodes:
        held = BoltzmannLikelihood(lik.mdp, demos.subset([index]), **settings)
        values = _held_out_values(refit, held, demos, index)
    else:
        values = _held_out_split_values(refit, model, index, over)
    return float(logsumexp(values) - np.log(values.size))


class LeftOut(NamedTuple):
    """The evidence without one observation: the demonstrations kept and the further terms."""

    demos: list[int]
    extra: tuple


def leave_out(model, index: int, over: str) -> LeftOut:
    """The model's evidence without episode (or answer) ``index``; InputError if that leaves
    a demonstration set empty or ``index`` is out of range."""
    demos = model.likelihood.demos
    extra = [copy.deepcopy(t) for t in getattr(model, "extra", ())]  # refits start cold
    everyone = list(range(demos.n_episodes))
    if over == "episodes" and index < demos.n_episodes:
        if index < 0 or demos.n_episodes < 2:
            raise InputError(f"refit: cannot leave out episode {index} of "
                             f"{demos.n_episodes} (the demonstrations need one)")
        return LeftOut([k for k in everyone if k != index], tuple(extra))
    kind = PartialTerm if over == "episodes" else ComparisonTerm
    local = index - (demos.n_episodes if over == "episodes" else 0)
    for i, term in enumerate(extra):
        if not isinstance(term, kind):
            continue
        n = term.episodes.n_episodes if kind is PartialTerm else len(term)
        if 0 <= local < n:
            rest = [k for k in range(n) if k != local]
            extra[i:i + 1] = [term.subset(rest)] if rest else []
            return LeftOut(everyone, tuple(extra))
        local -= n
    raise InputError(f"refit: there is no {over[:-1]} {index} to leave out")


def _held_out_split_values(refit, model, index: int, over: str) -> np.ndarray:
    """``log p(y_i | theta_s)`` over the refit's draws, from the full model's pointwise split
    (a pooled model: further evidence needs pooling 'pooled')."""
    demos = model.likelihood.demos
    evidence = model.evidence
    snapshot = evidence.warm_start()
    out = []
    try:
        for i in range(refit.n_chains):
            for j in range(refit.n_draws):
                split = evidence.pointwise(draw_quantities(refit, i, j), demos.lengths)
                out.append((split.episode if over == "episodes" else split.answers)[index])
    finally:
        evidence.restore_warm_start(snapshot)
    return np.asarray(out)


def _held_out_values(refit, held, demos, episode: int) -> np.ndarray:
    """``log p(y_e | theta_s)`` over the refit's draws (the episode's demonstrator's weights
    when demonstrators have their own)."""
    c, d = refit.n_chains, refit.n_draws
    beta = (np.full((c, d), refit.model.fixed_rationality) if refit.rationality is None
            else refit.rationality)
    if refit.groups is None:
        w = refit.weights
    else:
        who = demos.demonstrators[episode]
        names = list(refit.groups["demonstrators"])
        if who not in names:
            raise InputError(f"refit: episode {episode} is demonstrator {who!r}'s only one; "
                             "leaving it out removes the demonstrator")
        w = refit.groups["demonstrator_weights"][:, :, names.index(who)]
    return np.array([held.value(w[i, j], beta[i, j]) for i in range(c) for j in range(d)])
