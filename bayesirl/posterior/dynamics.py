"""The cut posterior: reward draws pooled over draws of the dynamics, and what they add.

One reward posterior is sampled under each of ``D`` dynamics draws (see
:func:`bayesirl.execution.cut.sample_cut`); pooling them with equal weight gives draws of
the cut posterior. By the law of total variance, each weight's pooled variance is the mean
of the per-draw variances (uncertainty that remains with the dynamics known) plus the
variance of the per-draw means (uncertainty that comes from the dynamics). With population
(``ddof = 0``) variances and the same number of draws in every run the two parts add up
exactly. See docs/dynamics.md.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl import arviz_compat as arviz


class VarianceSplit(NamedTuple):
    """Per weight: pooled variance = within + between (law of total variance)."""

    total: np.ndarray  # (F,) variance of the pooled draws (ddof 0)
    within: np.ndarray  # (F,) mean over dynamics draws of the per-draw variance
    between: np.ndarray  # (F,) variance over dynamics draws of the per-draw mean
    noise: np.ndarray  # (F,) Monte-Carlo part of ``between``: mean squared MCSE of the means

    @property
    def share(self) -> np.ndarray:
        """Share of each weight's variance that comes from the dynamics (``between/total``)."""
        return self.between / self.total

    @property
    def share_floor(self) -> np.ndarray:
        """Share that Monte-Carlo error alone would give (``noise/total``)."""
        return self.noise / self.total


def variance_split(weights: np.ndarray, ess: np.ndarray | None = None) -> VarianceSplit:
    """Split the pooled variance of ``weights`` ``(D, chains, draws, F)`` over dynamics draws.

    ``ess`` ``(D, F)``: effective sample sizes of each run's draws, for the Monte-Carlo part
    of the between-draw variance (each run's mean is off by about ``sd / sqrt(ess)``, which
    adds ``var / ess`` on average); without it the part is taken as 0.
    """
    w = np.asarray(weights, dtype=np.float64)
    per = w.reshape(w.shape[0], -1, w.shape[-1])
    means, variances = per.mean(axis=1), per.var(axis=1)
    total = per.reshape(-1, w.shape[-1]).var(axis=0)
    noise = np.zeros(w.shape[-1]) if ess is None else (variances / ess).mean(axis=0)
    return VarianceSplit(total, variances.mean(axis=0), means.var(axis=0), noise)


def equal_tailed(draws: np.ndarray, level: float) -> np.ndarray:
    """Equal-tailed ``level`` intervals ``(F, 2)`` of draws ``(..., F)``."""
    flat = np.asarray(draws).reshape(-1, np.asarray(draws).shape[-1])
    tail = (1.0 - level) / 2.0
    return np.quantile(flat, [tail, 1.0 - tail], axis=0).T


class CutPosterior:
    """Reward posteriors under ``D`` dynamics draws, pooled; and the plug-in fit beside them.

    Attributes
    ----------
    runs : list of Posterior
        One per dynamics draw (each with its own chains and diagnostics).
    plug_in : Posterior or None
        The fit under the posterior-mean dynamics (the intervals without dynamics
        uncertainty).
    dynamics : the DynamicsPosterior the draws came from
    seed : int
        The seed of the whole fit (dynamics draws and chains; see ``sample_cut``).
    """

    def __init__(self, runs: list, plug_in, dynamics, seed: int, wall_time: float) -> None:
        self.runs, self.plug_in, self.dynamics = list(runs), plug_in, dynamics
        self.seed, self.wall_time = int(seed), float(wall_time)
        self.feature_names = self.runs[0].feature_names

    def __repr__(self) -> str:
        r = self.runs[0]
        return (f"CutPosterior({len(self.runs)} dynamics draws x {r.n_chains} chains x "
                f"{r.n_draws} draws, plug-in {'yes' if self.plug_in else 'no'})")

    @property
    def weights(self) -> np.ndarray:
        """Weights ``(D, chains, draws, F)``: run ``d`` under dynamics draw ``d``."""
        return np.stack([r.weights for r in self.runs])

    def pooled(self) -> np.ndarray:
        """The cut posterior's draws ``(D * chains * draws, F)`` (equal weight per run)."""
        w = self.weights
        return w.reshape(-1, w.shape[-1])

    def split(self) -> VarianceSplit:
        """Law-of-total-variance split of every weight, with its Monte-Carlo part."""
        w = self.weights
        ess = np.array([[arviz.ess(r.weights[:, :, f]) for f in range(w.shape[-1])]
                        for r in self.runs])
        return variance_split(w, ess)

    def worst_rhat(self) -> float:
        """The largest R-hat of any weight in any run (each run is checked on its own)."""
        return max(float(arviz.rhat(r.weights[:, :, f])) for r in self.runs
                   for f in range(r.weights.shape[-1]))

    def summary(self, level: float = 0.9) -> dict:
        """A plain record for the report: intervals with and without, and the split."""
        pooled = equal_tailed(self.pooled(), level)
        plug = None if self.plug_in is None else equal_tailed(self.plug_in.weights, level)
        split = self.split()
        rows = []
        for f, name in enumerate(self.feature_names):
            rows.append({
                "feature": name, "mean": float(self.pooled()[:, f].mean()),
                "interval": [float(x) for x in pooled[f]],
                "plug_in": None if plug is None else [float(x) for x in plug[f]],
                "share": float(split.share[f]), "floor": float(split.share_floor[f]),
                "within": float(split.within[f]), "between": float(split.between[f]),
                "total": float(split.total[f])})
        return {"level": float(level), "dynamics_draws": len(self.runs),
                "logged": int(self.dynamics.n_logged), "rhat": self.worst_rhat(),
                "weights": rows}
