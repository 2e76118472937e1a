"""The SBC rank statistic, thinning and the chi-square uniformity test, with controls.

References outside the project: scipy.stats.percentileofscore (rank), scipy.stats.chisquare
(Pearson statistic and p-value), exact binomial probabilities (band), the noncentral
chi-square (power of the synthetic controls).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from bayesirl.errors import InputError
from bayesirl.validation.ranks import (
    ALPHA,
    bin_counts,
    binomial_band,
    choose_bins,
    ranks_of,
    spread_evenly,
    thin,
    uniformity,
    unthinned,
)

L = 99
BINS = 20
N_REP = 200
# Power of each synthetic negative control must be at least this (computed below from the
# noncentral chi-square), so a seeded run rejecting is not luck.
MIN_POWER = 0.99


def synthetic_ranks(rng, n_rep: int, shift: float = 0.0, scale: float = 1.0) -> np.ndarray:
    """Ranks of a N(0, 1) truth among L iid draws of N(shift, scale^2) ("the posterior")."""
    truth = rng.standard_normal(n_rep)
    draws = shift + scale * rng.standard_normal((n_rep, L))
    return np.sum(draws < truth[:, None], axis=1)


def predicted_power(shift: float, scale: float, n_rep: int, bins: int) -> float:
    """Power of the chi-square test against the rank distribution of :func:`synthetic_ranks`.

    The truth's posterior CDF value is u = Phi((z - shift) / scale), z ~ N(0, 1), so
    P(u < q) = Phi(shift + scale Phi^-1(q)); the bin probabilities give the noncentrality
    n sum (p_k - 1/B)^2 / (1/B) of Pearson's statistic (Cochran 1952, common practice).
    """
    q = np.linspace(0.0, 1.0, bins + 1)
    p = np.diff(stats.norm.cdf(shift + scale * stats.norm.ppf(q)))
    lam = n_rep * bins * np.sum((p - 1.0 / bins) ** 2)
    crit = stats.chi2.isf(ALPHA, bins - 1)
    return float(stats.ncx2.sf(crit, bins - 1, lam))


def test_rank_counts_draws_strictly_below_truth():
    rng = np.random.default_rng(0)
    draws = rng.normal(size=(L, 3))
    truth = np.array([-10.0, 0.1, draws[5, 2]])  # below all, inside, equal to a draw
    got = ranks_of(truth, draws)
    # percentileofscore(kind="strict") is the percentage of scores strictly below.
    want = [stats.percentileofscore(draws[:, k], truth[k], kind="strict") * L / 100
            for k in range(3)]
    np.testing.assert_allclose(got, want, atol=1e-9)
    assert got[0] == 0


def test_thin_spaces_draws_by_ess_and_ends_at_each_chain_end():
    draws = np.arange(2 * 300, dtype=float).reshape(2, 300, 1)  # value = chain * 300 + index
    kept = thin(draws, 99, ess=120.0)  # stride ceil(600 / 120) = 5; 50 + 49 draws
    idx = kept[:, 0]
    first, second = idx[:50], idx[50:] - 300
    assert first[-1] == 299 and second[-1] == 299
    assert np.all(np.diff(first) == 5) and np.all(np.diff(second) == 5)
    assert second.size == 49


def test_thin_refuses_when_ess_is_too_small_and_fallback_spreads():
    draws = np.zeros((2, 300, 1))
    # stride ceil(600 / 60) = 10, but 50 draws per chain need 49 * 10 = 490 > 299 iterations
    assert thin(draws, 99, ess=60.0) is None
    assert thin(draws, 99, ess=np.nan) is None
    assert spread_evenly(draws, 99).shape == (99, 1)
    assert unthinned(np.arange(10.0).reshape(1, 10, 1), 4)[:, 0].tolist() == [6, 7, 8, 9]


def test_choose_bins_keeps_ten_expected_per_bin():
    assert choose_bins(200, 99) == 20
    assert choose_bins(40, 39) == 4
    assert choose_bins(300, 99) == 25  # 30 does not divide 100
    with pytest.raises(InputError, match="replications"):
        choose_bins(15, 99)


def test_chi_square_matches_scipy():
    rng = np.random.default_rng(1)
    ranks = rng.integers(0, L + 1, N_REP)
    got = uniformity("x", ranks, L, BINS)
    ref = stats.chisquare(bin_counts(ranks, L, BINS))
    assert got.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert got.p_value == pytest.approx(ref.pvalue, rel=1e-10)
    assert got.counts.sum() == N_REP
    with pytest.raises(InputError, match="divide"):
        bin_counts(ranks, L, 7)
    with pytest.raises(InputError, match="0..99"):
        bin_counts(np.array([100]), L, BINS)


def test_binomial_band_is_the_central_99_percent_interval():
    lo, hi = binomial_band(N_REP, BINS)
    dist = stats.binom(N_REP, 1.0 / BINS)
    tail = 0.005
    assert dist.cdf(lo - 1) <= tail < dist.cdf(lo)  # lo is the smallest such bound
    assert dist.sf(hi) <= tail < dist.sf(hi - 1)
    assert dist.cdf(hi) - dist.cdf(lo - 1) >= 0.99


def test_rank_test_has_its_nominal_size():
    # 2000 seeded sets of uniform ranks: the number rejected at ALPHA is Binomial(2000, ALPHA)
    # if the test is calibrated (mean 20); its central 99.9% interval is the tolerance.
    rng = np.random.default_rng(2)
    n_sets = 2000
    rejected = sum(not uniformity("x", rng.integers(0, L + 1, N_REP), L, BINS).passed
                   for _ in range(n_sets))
    lo, hi = stats.binom(n_sets, ALPHA).ppf([0.0005, 0.9995])
    assert lo <= rejected <= hi, rejected


def test_rank_test_accepts_ranks_from_the_right_posterior():
    ranks = synthetic_ranks(np.random.default_rng(3), N_REP)
    assert uniformity("x", ranks, L, BINS).passed


@pytest.mark.parametrize(
    "shift,scale,what",
    [(0.6, 1.0, "biased posterior"), (0.0, 0.6, "overconfident posterior"),
     (0.0, 1.8, "underconfident posterior")],
)
def test_rank_test_rejects_a_miscalibrated_posterior(shift, scale, what):
    # Negative control (Talts et al. 2018, sec. 4.1: shifted, too narrow, too wide).
    assert predicted_power(shift, scale, N_REP, BINS) > MIN_POWER, what
    ranks = synthetic_ranks(np.random.default_rng(4), N_REP, shift, scale)
    result = uniformity("x", ranks, L, BINS)
    assert not result.passed, (what, result.p_value)
