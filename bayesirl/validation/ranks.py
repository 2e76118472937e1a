"""Rank statistics of simulation-based calibration and the test of their uniformity.

Talts, Betancourt, Simpson, Vehtari & Gelman (2018), "Validating Bayesian inference
algorithms with simulation-based calibration" (arXiv:1804.06788), Theorem 1: if
``theta ~ prior``, ``y ~ p(y | theta)`` and ``theta_1..theta_L`` are independent draws from
the exact posterior ``p(theta | y)``, then the rank ``#{l : theta_l < theta}`` of the true value
is uniform on ``{0, ..., L}``. Correlated MCMC draws break the independence, hence the
thinning by effective sample size (their section 5.1) before ranking.

Uniformity is tested with Pearson's chi-square on ``B`` bins of equal width, which needs
``L + 1`` to be a multiple of ``B`` (Talts et al. recommend exactly that, so each bin holds
the same number of rank values). The chi-square approximation asks for expected counts of
at least about 5 per bin (Cochran 1954, common practice); we choose ``B`` so they are at
least :data:`MIN_EXPECTED`.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from scipy import stats

from bayesirl.errors import InputError

# Expected replications per bin the automatic choice of bins aims for: twice Cochran's 5,
# so the chi-square tail is accurate at the 1% level we test at (common practice).
MIN_EXPECTED = 10.0
# Level of the per-parameter uniformity test (the brief's threshold, common practice).
ALPHA = 0.01
# Coverage of the per-bin band drawn on the histograms (Talts et al. 2018, fig. 4 use 99%).
BAND_LEVEL = 0.99


class Uniformity(NamedTuple):
    """Chi-square test of uniform ranks for one parameter."""

    name: str
    counts: np.ndarray  # (bins,) replications per bin
    expected: float  # replications per bin under uniformity
    statistic: float
    p_value: float

    @property
    def passed(self) -> bool:
        """True when uniformity is not rejected at :data:`ALPHA`."""
        return bool(self.p_value > ALPHA)


def ranks_of(truth: np.ndarray, draws: np.ndarray) -> np.ndarray:
    """Rank of each true value among the draws: the number of draws strictly below it.

    Parameters
    ----------
    truth : numpy.ndarray
        ``(P,)`` true parameter values.
    draws : numpy.ndarray
        ``(L, P)`` posterior draws.

    Returns
    -------
    numpy.ndarray
        ``(P,)`` integers in ``0..L``.
    """
    truth = np.asarray(truth, dtype=float)
    draws = np.asarray(draws, dtype=float)
    if draws.ndim != 2 or draws.shape[1] != truth.shape[0]:
        raise InputError(f"ranks: draws shape {draws.shape} does not match truth {truth.shape}")
    return np.sum(draws < truth[None, :], axis=0).astype(np.int64)


def _per_chain(n_keep: int, chains: int) -> list[int]:
    """Split ``n_keep`` draws over chains as evenly as possible (earlier chains get the rest)."""
    return [n_keep // chains + (c < n_keep % chains) for c in range(chains)]


def _take(draws: np.ndarray, n_keep: int, stride: int) -> np.ndarray:
    n = draws.shape[1]
    parts = [draws[c, n - 1 - stride * np.arange(k)[::-1], :]
             for c, k in enumerate(_per_chain(n_keep, draws.shape[0]))]
    return np.concatenate(parts, axis=0)


def thin(draws: np.ndarray, n_keep: int, ess: float) -> np.ndarray | None:
    """``n_keep`` draws spaced by ``ceil(total / ess)`` iterations, ending at each chain's end.

    Parameters
    ----------
    draws : numpy.ndarray
        ``(chains, n, P)``.
    n_keep : int
        Total draws to keep, split over the chains as evenly as possible.
    ess : float
        Effective sample size of all ``chains * n`` draws (the smallest over parameters).

    Returns
    -------
    numpy.ndarray or None
        ``(n_keep, P)``, or None when the chains are too short for that spacing.
    """
    chains, n, _ = draws.shape
    if not np.isfinite(ess) or ess <= 0:
        return None
    stride = max(1, math.ceil(chains * n / ess))
    if stride * (max(_per_chain(n_keep, chains)) - 1) >= n:
        return None
    return _take(draws, n_keep, stride)


def spread_evenly(draws: np.ndarray, n_keep: int) -> np.ndarray:
    """``n_keep`` draws at the widest even spacing the chains allow (fallback of :func:`thin`)."""
    longest = max(_per_chain(n_keep, draws.shape[0]))
    return _take(draws, n_keep, max(1, (draws.shape[1] - 1) // max(longest - 1, 1)))


def unthinned(draws: np.ndarray, n_keep: int) -> np.ndarray:
    """The last draws of each chain, consecutive: what SBC must *not* do (negative controls)."""
    return _take(draws, n_keep, 1)


def choose_bins(n_replications: int, n_draws: int, min_expected: float = MIN_EXPECTED) -> int:
    """The largest divisor ``B >= 2`` of ``n_draws + 1`` leaving ``min_expected`` per bin.

    That is, ``n_replications / B >= min_expected``.

    Raises
    ------
    InputError
        When even two bins would expect fewer than ``min_expected`` replications.
    """
    values = n_draws + 1
    fits = [b for b in range(2, values + 1)
            if values % b == 0 and n_replications / b >= min_expected]
    if not fits:
        raise InputError(
            f"bins: {n_replications} replications cannot give {min_expected:g} per bin with "
            f"{values} rank values; run more replications"
        )
    return max(fits)


def bin_counts(ranks: np.ndarray, n_draws: int, bins: int) -> np.ndarray:
    """Replications per bin; bin ``k`` holds ranks ``k w .. (k + 1) w - 1``, ``w = (L+1)/B``."""
    values = n_draws + 1
    if values % bins:
        raise InputError(f"bins: {bins} bins do not divide the {values} rank values evenly")
    ranks = np.asarray(ranks, dtype=np.int64)
    if ranks.size and (ranks.min() < 0 or ranks.max() > n_draws):
        raise InputError(f"ranks: values must lie in 0..{n_draws}")
    return np.bincount(ranks // (values // bins), minlength=bins)


def uniformity(name: str, ranks: np.ndarray, n_draws: int, bins: int) -> Uniformity:
    """Pearson chi-square test (``bins - 1`` degrees of freedom) of uniform ranks."""
    counts = bin_counts(ranks, n_draws, bins)
    expected = counts.sum() / bins
    statistic = float(np.sum((counts - expected) ** 2) / expected)
    p_value = float(stats.chi2.sf(statistic, bins - 1))
    return Uniformity(name, counts, float(expected), statistic, p_value)


def binomial_band(n_replications: int, bins: int, level: float = BAND_LEVEL) -> tuple[int, int]:
    """Central ``level`` interval of one bin's count, ``Binomial(n_replications, 1 / bins)``.

    Talts et al. (2018, sec. 4.1) shade this band on rank histograms: under uniformity each
    bin falls inside it with probability at least ``level``.
    """
    tail = (1.0 - level) / 2.0
    dist = stats.binom(n_replications, 1.0 / bins)
    return int(dist.ppf(tail)), int(dist.isf(tail))
