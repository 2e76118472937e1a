"""``approximate``: a fast Pathfinder approximation of the posterior, with its own warning.

Multi-path Pathfinder (:mod:`bayesirl.sampler.pathfinder`) on the same log-posterior
``sample`` uses: a few L-BFGS paths, the best normal approximation of each by ELBO, pooled
by Pareto-smoothed importance resampling. The Pareto k-hat of the importance ratios decides
whether the result may be read as the posterior (Vehtari et al. 2024): above the threshold
(at most 0.7, common practice from that paper) the result says so and calls itself untrusted.
Even when trusted it is an approximation of the posterior, not a sampled one; the run's
intervals come from ``sample`` / ``bayesirl fit``. See docs/pathfinder.md.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, NamedTuple

import numpy as np

from bayesirl.errors import InputError
from bayesirl.execution.chains import initial_point
from bayesirl.posterior.groups import make_model
from bayesirl.sampler import pathfinder
from bayesirl.sampler.transitions import Counted

if TYPE_CHECKING:
    from bayesirl.evidence import EvidenceTerm
    from bayesirl.likelihood import BoltzmannLikelihood
    from bayesirl.priors import LogNormal, Prior

__all__ = ["Approximate", "approximate"]


class Approximate(NamedTuple):
    """A Pathfinder approximation: resampled draws, k-hat and what may be read from them.

    Attributes
    ----------
    feature_names : tuple of str
    weights : numpy.ndarray
        ``(draws, features)`` importance-resampled reward weights (pinned ones constant).
    rationality : numpy.ndarray or None
        ``(draws,)`` when the rationality is sampled.
    k_hat, threshold : float
        Pareto k-hat of the importance ratios and the threshold for this many ratios
        (``min(1 - 1/log10(S), 0.7)``).
    elbo : tuple of float
        Each path's best ELBO estimate (up to the posterior's unknown normalising constant).
    ess : float
        Importance-sampling effective sample size ``1 / sum w^2`` of the smoothed weights
        (Kish's; optimistic when k-hat is large).
    n_evals : int
        Log-posterior evaluations in all (with and without gradient).
    solver_failures : int
        Points where the soft Bellman solve failed (counted as zero density).
    """

    feature_names: tuple[str, ...]
    weights: np.ndarray
    rationality: np.ndarray | None
    k_hat: float
    threshold: float
    elbo: tuple[float, ...]
    ess: float
    n_evals: int
    solver_failures: int

    @property
    def trusted(self) -> bool:
        """k-hat at or below the threshold."""
        return bool(self.k_hat <= self.threshold)

    def verdict(self) -> str:
        """One sentence: may the draws be read as the posterior?"""
        if self.trusted:
            # Vehtari et al. (2024): above 0.5 the ratios' variance is infinite and the
            # estimate converges more slowly than the ESS suggests (measured in
            # docs/pathfinder.md: a bias beyond the printed errors at k-hat ~0.6).
            tail = ("" if self.k_hat <= 0.5 else "; k-hat above 0.5 means a heavy tail of "
                    "importance ratios, so the errors shown may be too small")
            return (f"Pareto k-hat {self.k_hat:.2f} <= {self.threshold:.2f}: the importance "
                    f"check passes, so these draws approximate the posterior{tail}; an "
                    "approximation all the same - sample with bayesirl fit for the intervals "
                    "you report")
        return (f"Pareto k-hat {self.k_hat:.2f} > {self.threshold:.2f}: NOT TRUSTWORTHY - "
                "the posterior is too far from a normal distribution for this approximation; "
                "do not read these numbers as the posterior, sample with bayesirl fit")

    def table(self, level: float = 0.9) -> list[str]:
        """Lines: each weight's (and the rationality's) mean, its Monte-Carlo error, sd
        and central interval.

        The error of a mean of the resampled draws adds the importance-sampling error
        (``sd^2 / ess``) and that of resampling ``n`` draws (``sd^2 / n``)."""
        lo_p, hi_p = (1.0 - level) / 2.0, (1.0 + level) / 2.0
        cols = [(n, self.weights[:, i]) for i, n in enumerate(self.feature_names)]
        if self.rationality is not None:
            cols.append(("rationality", self.rationality))
        head = f"{'':>14} {'mean':>9} {'+-mcse':>8} {'sd':>9}  {level:.0%} central interval"
        rows = [head]
        for name, x in cols:
            lo, hi = np.quantile(x, [lo_p, hi_p])
            sd = x.std(ddof=1)
            mcse = sd * np.sqrt(1.0 / self.ess + 1.0 / x.shape[0])
            rows.append(f"{name:>14} {x.mean():9.3f} {mcse:8.3f} {sd:9.3f}  "
                        f"[{lo:.3f}, {hi:.3f}]")
        rows.append(f"importance-sampling ESS {self.ess:.0f}")
        return rows


def approximate(
    likelihood: BoltzmannLikelihood,
    prior: Prior | None = None,
    *,
    paths: int = 4,
    draws: int = 1000,
    seed: int = 0,
    rationality: float | LogNormal | None = None,
    pin: Mapping[str, float] | None = None,
    evidence: Sequence[EvidenceTerm] = (),
) -> Approximate:
    """Approximate the posterior by multi-path Pathfinder and say whether to trust it.

    Parameters
    ----------
    likelihood, prior, rationality, pin, evidence
        As in :func:`bayesirl.sample` (one pooled reward for every episode).
    paths : int, default 4
        L-BFGS paths, each from a uniform draw on ``(-2, 2)`` per parameter.
    draws : int, default 1000
        Draws from each path's best approximation (``paths * draws`` importance ratios) and
        resampled draws returned.
    seed : int, default 0
        Seed of ``numpy.random.SeedSequence``: the same seed gives the same result.

    Returns
    -------
    Approximate
        Check :attr:`Approximate.trusted` (or print :meth:`Approximate.verdict`) before
        reading the draws.
    """
    for name, v, low in (("paths", paths, 1), ("draws", draws, 2), ("seed", seed, 0)):
        if isinstance(v, bool) or not isinstance(v, int | np.integer) or v < low:
            raise InputError(f"{name}: expected an integer >= {low}; got {v!r}")
    model = make_model(likelihood, prior, rationality, pin, None, extra=evidence)
    start_seed, path_seed = np.random.SeedSequence(int(seed)).spawn(2)
    start_rng = np.random.default_rng(start_seed)
    counted = Counted(model)  # the start searches' calls, for the total
    starts = [initial_point(counted, model.dim, start_rng, lambda: model.solver_failures)
              for _ in range(int(paths))]
    result = pathfinder.multi_path(model, starts, np.random.default_rng(path_seed),
                                   logdensity=model.logdensity, draws=int(draws))
    weights = np.empty((result.draws.shape[0], len(model.feature_names)))
    beta = np.empty(result.draws.shape[0])
    for i, theta in enumerate(result.draws):
        weights[i], beta[i] = model.unpack(theta)
    sampled = model.fixed_rationality is None
    return Approximate(tuple(model.feature_names), weights, beta if sampled else None,
                       float(result.k_hat), float(result.psis.threshold),
                       tuple(float(p.best.elbo) for p in result.paths),
                       float(1.0 / np.sum(np.exp(2.0 * result.psis.log_weights))),
                       int(result.n_evals + counted.calls), int(model.solver_failures))
