"""The harness itself: it passes exact draws, rejects wrong ones, and its MCSE is calibrated.

Each negative control (common practice: a check must be shown able to fail) uses a
deviation far outside the Monte-Carlo error, stated beside it, so the check must fail.
"""

from __future__ import annotations

import numpy as np
import pytest
from harness import (
    check_moments,
    gaussian_quantiles,
    mean_mcse,
    moment_check,
    quantile_mcse,
    sd_mcse,
)
from scipy import stats


def _iid(seed: int, n: int, mean, sd) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return mean + sd * rng.standard_normal((n, len(sd)))


def test_exact_gaussian_draws_pass():
    mean, sd = np.array([1.0, -2.0, 0.0]), np.array([0.5, 1.0, 3.0])
    draws = _iid(0, 4000, mean, sd).reshape(4, 1000, 3)
    check_moments(draws, mean, sd, gaussian_quantiles(mean, sd))


def test_rejects_shifted_mean():
    # Shift 0.1 sd with n = 20000 iid draws: expected z = 0.1 * sqrt(20000) ~ 14.
    draws = _iid(1, 20000, np.array([0.1]), np.array([1.0]))
    check = moment_check(draws, [0.0], [1.0])
    assert "mean[0]" in check.failed
    with pytest.raises(AssertionError, match="mean"):
        check_moments(draws, [0.0], [1.0])


def test_rejects_wrong_sd():
    # sd 5% too large: mcse_sd ~ 1 / sqrt(2 n) = 0.005 at n = 20000, so z ~ 10.
    draws = _iid(2, 20000, np.array([0.0]), np.array([1.05]))
    assert moment_check(draws, [0.0], [1.0]).failed == ["sd[0]"]


def test_rejects_wrong_shape_with_right_moments():
    # Uniform with mean 0, sd 1: q0.05 = -0.9 sqrt(3) = -1.559 against the Gaussian
    # -1.645; mcse ~ sqrt(.05 * .95 / n) * 2 sqrt(3) = 0.005 at n = 20000, so z ~ 17.
    rng = np.random.default_rng(3)
    draws = rng.uniform(-np.sqrt(3.0), np.sqrt(3.0), size=(20000, 1))
    check = moment_check(draws, [0.0], [1.0], gaussian_quantiles([0.0], [1.0]))
    assert check.failed == ["q0.05[0]", "q0.95[0]"]


def test_rejects_wrong_correlation():
    # Correlation 0.9 checked against 0.95: covariance error 0.05 against mcse
    # ~ sqrt((1 + rho^2) / n) = 0.0095 at n = 20000, so z ~ 5; marginals are right.
    rng = np.random.default_rng(4)
    cov_true = np.array([[1.0, 0.95], [0.95, 1.0]])
    cov_used = np.array([[1.0, 0.9], [0.9, 1.0]])
    draws = rng.multivariate_normal(np.zeros(2), cov_used, size=20000)
    assert moment_check(draws, np.zeros(2), cov_true).failed == ["cov[0,1]"]


def _ar1(rng: np.random.Generator, phi: float, shape: tuple[int, int]) -> np.ndarray:
    """Stationary AR(1) chains with N(0, 1) marginals; ESS ~ n (1 - phi) / (1 + phi)."""
    noise = rng.standard_normal(shape) * np.sqrt(1.0 - phi**2)
    x = np.empty(shape)
    x[:, 0] = rng.standard_normal(shape[0])
    for t in range(1, shape[1]):
        x[:, t] = phi * x[:, t - 1] + noise[:, t]
    return x


def _coverage_pvalues(z: np.ndarray) -> np.ndarray:
    """Binomial test p-values of P(|z| > 1.96) = 0.05, per column of z."""
    exceed = (np.abs(z) > stats.norm.isf(0.025)).sum(axis=0)
    return np.array([stats.binomtest(int(k), z.shape[0], 0.05).pvalue for k in exceed])


def test_mcse_is_calibrated_on_autocorrelated_chains():
    # AR(1) with phi = 0.8 (ESS ~ n / 9): the standardised errors of mean, sd and
    # quantiles must exceed 1.96 about 5% of the time (binomial test, Bonferroni over the
    # five quantities at 1e-3). Naive iid errors must fail the same test (negative control).
    rng = np.random.default_rng(5)
    probs = (0.05, 0.5, 0.95)
    truth = [0.0, 1.0] + [stats.norm.ppf(p) for p in probs]
    z, z_naive = [], []
    for _ in range(300):
        x = _ar1(rng, 0.8, (2, 2000))
        pairs = [mean_mcse(x), sd_mcse(x)] + [quantile_mcse(x, p) for p in probs]
        est = np.array([p[0] for p in pairs])
        se = np.array([p[1] for p in pairs])
        z.append((est - truth) / se)
        z_naive.append((est[0] - truth[0]) / (x.std() / np.sqrt(x.size)))
    assert np.all(_coverage_pvalues(np.array(z)) > 1e-3 / 5)
    assert _coverage_pvalues(np.array(z_naive)[:, None])[0] < 1e-3
