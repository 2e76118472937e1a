"""Leave-one-episode-out predictive accuracy: PSIS-LOO (Vehtari, Gelman & Gabry 2017, via
ArviZ) with Pareto k per episode, and exact refits of the episodes where it is unreliable.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.special import logsumexp

from bayesirl import arviz_compat
from bayesirl.errors import InputError
from bayesirl.execution import sample
from bayesirl.likelihood import BoltzmannLikelihood

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


def episode_loo(posterior, *, refit: bool = False, **sample_options) -> EpisodeLoo:
    """PSIS-LOO per episode of ``posterior`` (its log-likelihood is computed if missing).

    With ``refit``, every episode with Pareto k > 0.7 is left out and the posterior sampled
    again (same model and settings, ``sample_options`` override them), and its exact
    ``elpd_i`` replaces the estimate.
    """
    if posterior.n_draws == 0:
        raise InputError("model fit: the run has no draws (interrupted during warmup)")
    posterior.compute_log_likelihood()
    r = arviz_compat.loo(posterior.to_arviz(), "episodes")
    out = EpisodeLoo(r.elpd, r.se, r.p, np.asarray(r.elpd_i, dtype=float),
                     np.asarray(r.pareto_k, dtype=float))
    if refit and out.unreliable:
        bad = out.unreliable
        exact = refit_episodes(posterior, bad, **sample_options)
        out.elpd_i[bad] = exact
        out.refitted = list(bad)
        n = out.elpd_i.size
        out.elpd = float(out.elpd_i.sum())
        out.se = float(np.sqrt(n * np.var(out.elpd_i)))
    return out


def refit_episodes(posterior, episodes, **sample_options) -> np.ndarray:
    """Exact ``log p(episode | other episodes)`` for each of ``episodes``: sample without it
    (same model, seed and settings unless overridden), then average its likelihood over the
    draws (``log mean_s p(y_e | theta_s)``)."""
    return np.array([_refit_one(posterior, int(e), sample_options) for e in episodes])


def _refit_one(posterior, episode: int, options: dict) -> float:
    model = posterior.model
    lik = model.likelihood
    demos = lik.demos
    if not 0 <= episode < demos.n_episodes:
        raise InputError(f"refit: episode {episode} is not in 0..{demos.n_episodes - 1}")
    if demos.n_episodes < 2:
        raise InputError("refit: leaving out the only episode leaves no data")
    rest = [k for k in range(demos.n_episodes) if k != episode]
    settings = {k: v for k, v in lik.__dict__.items()
                if k in ("rationality", "q_function", "tol", "gradient_rtol", "max_newton_steps",
                         "max_linear_iterations")}
    without = BoltzmannLikelihood(lik.mdp, demos.subset(rest), **settings)
    held = BoltzmannLikelihood(lik.mdp, demos.subset([episode]), **settings)
    s = posterior.settings
    kwargs = {"prior": model.prior, "chains": posterior.n_chains, "draws": s["draws"],
              "warmup": s["warmup"], "seed": posterior.seed, "method": s["method"],
              "dense_mass": s["dense_mass"], "target_accept": s["target_accept"],
              "max_depth": s["max_depth"], "progress": False, "pin": model.pin or None,
              "rationality": (model.rationality_prior if model.rationality_prior is not None
                              else model.fixed_rationality),
              "pooling": model.pooling}
    kwargs.update(options)
    refit = sample(without, **kwargs)
    values = _held_out_values(refit, held, demos, episode)
    return float(logsumexp(values) - np.log(values.size))


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
