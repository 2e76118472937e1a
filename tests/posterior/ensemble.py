"""Monte-Carlo errors for an ensemble sampler (emcee), whose walkers are NOT independent.

The harness (``tests/harness.py``) computes MCSEs from arviz's ESS, which treats chains as
independent. The walkers of an affine-invariant ensemble move using each other's positions
(Goodman & Weare 2010, Comm. App. Math. Comp. Sci. 5; Foreman-Mackey et al. 2013, PASP 125),
so at one step they are correlated, and treating them as chains can understate the error.

Here every estimator is a mean of a per-draw series ``g(x_{t,w})`` (the draw itself for a
mean, the squared deviation for a variance, the indicator ``1{x <= q_p}`` for a quantile's
proportion), and the variance of that mean is estimated from the *walker-averaged* series
``gbar_t = mean_w g(x_{t,w})``, a single time series that carries every correlation, within
and between walkers:

    Var(mean) ~ var(gbar_t) / ESS(gbar_t)

with ESS from arviz (Geyer's initial monotone sequence on the one series; Vehtari et al.
2021). The mapping from these to the MCSEs of an sd and a quantile is the harness's (its
module doc). This is the batch-free analogue of emcee's own integrated autocorrelation time
of the walker-averaged chain (Foreman-Mackey et al. 2013, sec. 3; emcee's "Autocorrelation
analysis" tutorial).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from harness import DEFAULT_ALPHA, DEFAULT_PROBS, Check, az, bonferroni_z, summarize


def _mean_and_se(series: np.ndarray) -> tuple[float, float]:
    """Mean of a (walkers, steps) series and its MCSE from the walker-averaged series."""
    avg = series.mean(axis=0)
    ess = float(az.ess(avg[None, :], method="mean"))
    return float(series.mean()), float(avg.std(ddof=1) / math.sqrt(ess))


def ensemble_summarize(
    walkers: np.ndarray, probs: Sequence[float] = DEFAULT_PROBS
) -> tuple[list[str], np.ndarray, np.ndarray]:
    """As ``harness.summarize`` (same names and order) for ``(walkers, steps, dim)`` draws."""
    names, est, se = [], [], []
    for i in range(walkers.shape[2]):
        x = walkers[:, :, i]
        mean, mean_se = _mean_and_se(x)
        var, var_se = _mean_and_se((x - mean) ** 2)
        sd = math.sqrt(var)
        names += [f"mean[{i}]", f"sd[{i}]"]
        est += [mean, sd]
        se += [mean_se, var_se / (2.0 * sd)]
        flat = x.ravel()
        for p in probs:
            q = float(np.quantile(flat, p))
            _, s = _mean_and_se((x <= q).astype(float))
            lo, hi = np.quantile(flat, [max(p - s, 0.0), min(p + s, 1.0)])
            names.append(f"q{p:g}[{i}]")
            est.append(q)
            se.append(float((hi - lo) / 2.0))
    return names, np.array(est), np.array(se)


def ensemble_check(
    chains: np.ndarray, walkers: np.ndarray, probs: Sequence[float] = DEFAULT_PROBS,
    alpha: float = DEFAULT_ALPHA,
) -> Check:
    """``harness.sample_check`` with the ensemble's MCSE for the second sampler."""
    names, est_a, se_a = summarize(chains, probs)
    names_b, est_b, se_b = ensemble_summarize(walkers, probs)
    assert names == names_b
    return Check(names, est_a, est_b, np.sqrt(se_a**2 + se_b**2),
                 bonferroni_z(alpha, len(names)))


def ensemble_moment_check(walkers: np.ndarray, mean, sd, quantiles: dict,
                          alpha: float = DEFAULT_ALPHA) -> Check:
    """Ensemble draws against known means, sds and quantiles (for calibrating the MCSE)."""
    probs = tuple(sorted(quantiles))
    names, est, se = ensemble_summarize(walkers, probs)
    ref = []
    for i in range(walkers.shape[2]):
        ref += [mean[i], sd[i]] + [quantiles[p][i] for p in probs]
    return Check(names, est, np.array(ref), se, bonferroni_z(alpha, len(names)))
