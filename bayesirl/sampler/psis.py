"""Pareto smoothed importance sampling (PSIS) on plain arrays.

Vehtari, Simpson, Gelman, Yao & Gabry (2024), "Pareto smoothed importance sampling", JMLR
25(72): the largest importance ratios are replaced by the expected order statistics of a
generalized Pareto distribution fitted to them, and the fitted shape ``k`` (k-hat) says how
heavy the ratios' right tail is, i.e. whether the importance-sampling estimate can be
trusted. The tail is the largest ``ceil(min(S / 5, 3 sqrt(S / r_eff)))`` ratios (paper,
sec. 3.2); the shape and scale are fitted by the empirical-Bayes method of Zhang & Stephens
(2009, Technometrics 51), with the weakly informative prior that pulls ``k`` towards 0.5
with the weight of 10 observations (paper, appendix; written here from memory of the
paper and checked against ArviZ's ``psislw`` in tests/sampler/test_psis.py).

The threshold: the paper's sample-size-dependent ``min(1 - 1 / log10(S), 0.7)``; above it
the estimate is not reliable (0.7 is the common-practice cap from the same paper).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from bayesirl.errors import InputError

__all__ = ["PSISResult", "gpd_fit", "psis", "khat_threshold"]

# Zhang & Stephens (2009): the prior on the scale's reciprocal uses 3 x the first quartile;
# Vehtari et al. (2024): k is shrunk towards 0.5 with the weight of 10 observations.
_PRIOR_BS, _PRIOR_K = 3.0, 10.0
_MIN_TAIL = 5  # fewer tail ratios than this: no fit, k-hat reported as infinite


class PSISResult(NamedTuple):
    """Smoothed, normalised log weights (``logsumexp == 0``), k-hat and the tail length."""

    log_weights: np.ndarray
    k_hat: float
    tail_length: int

    @property
    def threshold(self) -> float:
        """The sample-size-dependent k-hat threshold for this many draws."""
        return khat_threshold(self.log_weights.shape[0])

    @property
    def trusted(self) -> bool:
        """k-hat at or below :attr:`threshold` (never for an infinite or NaN k-hat)."""
        return bool(self.k_hat <= self.threshold)


def khat_threshold(n: int) -> float:
    """``min(1 - 1/log10(n), 0.7)`` (Vehtari et al. 2024, sec. 3.2.4); 0 below 10 draws."""
    if n <= 10:
        return 0.0
    return min(1.0 - 1.0 / math.log10(n), 0.7)


def gpd_fit(x: np.ndarray) -> tuple[float, float]:
    """Shape ``k`` and scale ``sigma`` of a generalized Pareto distribution fitted to ``x``.

    Zhang & Stephens (2009): a posterior mean of ``theta = -k / sigma`` over a grid of
    ``m = 30 + floor(sqrt(n))`` values, each weighted by its profile likelihood; then the
    weakly informative prior on ``k`` of Vehtari et al. (2024).

    Parameters
    ----------
    x : numpy.ndarray
        Positive exceedances, sorted ascending, at least 5 of them.

    Returns
    -------
    k, sigma : float
    """
    x = np.asarray(x, dtype=float)
    n = x.shape[0]
    m = 30 + int(math.sqrt(n))
    quartile = x[int(n / 4.0 + 0.5) - 1]
    j = np.arange(1, m + 1, dtype=float)
    theta = 1.0 / x[-1] + (1.0 - np.sqrt(m / (j - 0.5))) / (_PRIOR_BS * quartile)
    k_grid = np.log1p(-theta[:, None] * x[None, :]).mean(axis=1)  # minus ZS's k
    profile = n * (np.log(-theta / k_grid) - k_grid - 1.0)
    weights = 1.0 / np.exp(profile[None, :] - profile[:, None]).sum(axis=1)
    weights[weights < 10.0 * np.finfo(float).eps] = 0.0  # negligible grid points
    weights /= weights.sum()
    theta_hat = float(weights @ theta)
    k = float(np.log1p(-theta_hat * x).mean())
    sigma = -k / theta_hat
    k = (n * k + _PRIOR_K * 0.5) / (n + _PRIOR_K)
    return k, sigma


def _gpd_quantile(p: np.ndarray, k: float, sigma: float) -> np.ndarray:
    if abs(k) < 1e-12:
        return -sigma * np.log1p(-p)
    return sigma * np.expm1(-k * np.log1p(-p)) / k


def _logsumexp(x: np.ndarray) -> float:
    top = float(np.max(x))
    return top + math.log(float(np.exp(x - top).sum()))


def psis(log_ratios: np.ndarray, r_eff: float = 1.0) -> PSISResult:
    """Pareto-smooth 1-D log importance ratios.

    Parameters
    ----------
    log_ratios : numpy.ndarray
        ``log p(x_s) - log q(x_s)`` for draws ``x_s`` from ``q`` (``p`` may be unnormalised);
        ``-inf`` is allowed (a draw outside the target's support), NaN and ``+inf`` are not.
    r_eff : float, default 1
        Relative efficiency of the draws (1 for independent draws).

    Returns
    -------
    PSISResult
    """
    lr = np.array(log_ratios, dtype=float).ravel()
    n = lr.shape[0]
    if n < 2 or np.isnan(lr).any() or np.isposinf(lr).any() or not np.isfinite(lr).any():
        raise InputError(f"psis: need >= 2 log ratios, finite or -inf, some finite; got {n} "
                         f"with {int(np.isnan(lr).sum())} NaN")
    lr -= lr.max()
    tail_len = int(math.ceil(min(n / 5.0, 3.0 * math.sqrt(n / r_eff))))
    order = np.argsort(lr, kind="stable")
    cutoff = max(lr[order[-tail_len - 1]], math.log(np.finfo(float).tiny))
    tail = np.flatnonzero(lr > cutoff)
    k = math.inf
    if tail.size >= _MIN_TAIL:
        tail = tail[np.argsort(lr[tail], kind="stable")]
        exp_cut = math.exp(cutoff)
        k, sigma = gpd_fit(np.exp(lr[tail]) - exp_cut)
        if math.isfinite(k):
            p = (np.arange(tail.size) + 0.5) / tail.size
            lr[tail] = np.log(_gpd_quantile(p, k, sigma) + exp_cut)
            lr[lr > 0.0] = 0.0  # no smoothed ratio above the largest raw one
    return PSISResult(lr - _logsumexp(lr), float(k), int(tail.size))
