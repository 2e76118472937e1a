"""Slow suite: frequency calibration of the report's intervals and policy-risk bound.

200 replications on the 16-state grid with the truth drawn from the prior (see
``replications.py``). Under that design a correct posterior gives:

* the level-``l`` equal-tailed interval of each weight contains the truth with probability
  exactly ``l`` (Cook, Gelman & Rubin 2006; Talts et al. 2018, simulation-based calibration);
  checked with an exact two-sided binomial test (scipy.stats.binomtest) at p > 0.01 per weight
  and level;
* the posterior ``alpha``-quantile of the EVD is at least the true EVD with probability
  ``alpha`` (the true EVD is the same function of the truth that the posterior quantile is of
  a posterior draw); Brown & Niekum (2018) report this kind of check. For alpha = 0.95 over
  200 replications the rate falls below the required 0.90 with probability
  ``binom.cdf(179, 200, 0.95)`` ~ 1e-3;
* the posterior-mean EVD is an unbiased estimate of the true EVD averaged over replications.

Negative controls (the checks can fail): the same intervals paired with another
replication's truth, and the median (alpha = 0.5) posing as a 95% bound, are rejected.
Monte-Carlo error: 1000 draws per fit (200 of them for policy risk) move an interval end by
~0.05 posterior sd, a coverage change below 1 percentage point, well inside the binomial
sd of 2.1 points at n = 200.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from .problems import SMALL_NAMES
from .replications import LEVELS, N_REPS, replications

pytestmark = pytest.mark.slow

P_MIN = 0.01
EVD_ATOL = 1e-9  # both EVDs come from direct LU solves of 16-state systems: rounding only


def _table(hits, pvals) -> dict:
    return {n: (int(k), float(p)) for n, k, p in zip(SMALL_NAMES, hits, pvals, strict=True)}


def _covered(reps, level, shift=0):
    n = len(reps)
    truth = np.array([reps[(i + shift) % n]["truth"] for i in range(n)])
    iv = np.array([r[f"interval{level}"] for r in reps])  # (n, F, 2)
    return (iv[:, :, 0] <= truth) & (truth <= iv[:, :, 1])


@pytest.mark.parametrize("level", LEVELS)
def test_intervals_cover_at_the_nominal_rate(level):
    reps = replications()
    assert len(reps) == N_REPS
    hits = _covered(reps, level).sum(axis=0)
    pvals = [stats.binomtest(int(k), N_REPS, level).pvalue for k in hits]
    assert all(p > P_MIN for p in pvals), _table(hits, pvals)
    # Non-vacuous: the data moved the posterior (mean contraction well above zero).
    assert np.mean([r["contraction"] for r in reps]) > 0.5


def test_coverage_check_rejects_mismatched_truths():
    # Negative control: intervals from data set i against the truth of data set i + 1.
    reps = replications()
    hits = _covered(reps, 0.9, shift=1).sum(axis=0)
    pvals = [stats.binomtest(int(k), N_REPS, 0.9).pvalue for k in hits]
    assert all(p < P_MIN for p in pvals), _table(hits, pvals)


def _bound_holds(reps, alpha):
    return np.array([r[f"bound{alpha}"] >= r["true_evd"] - EVD_ATOL for r in reps])


def test_policy_risk_bound_holds_in_90_percent():
    reps = replications()
    holds = _bound_holds(reps, 0.95)
    assert holds.mean() >= 0.90, holds.mean()
    # Consistent with its nominal 95% too (two-sided exact binomial test).
    assert stats.binomtest(int(holds.sum()), N_REPS, 0.95).pvalue > P_MIN, holds.sum()
    # Non-vacuous: the true loss is usually positive (pi_hat differs from the true optimum).
    true = np.array([r["true_evd"] for r in reps])
    assert np.mean(true > 1e-6) > 0.5
    assert np.all(true > -EVD_ATOL)  # no policy beats the optimal one


def test_median_is_not_a_95_percent_bound():
    # Negative control: the alpha = 0.5 quantile holds about half the time and fails the check.
    reps = replications()
    holds = _bound_holds(reps, 0.5)
    assert holds.mean() < 0.90
    assert stats.binomtest(int(holds.sum()), N_REPS, 0.5).pvalue > P_MIN, holds.sum()


def test_posterior_mean_evd_is_unbiased():
    # E[ E(EVD | D) ] = E[EVD(truth)] over the joint distribution: paired differences have
    # mean zero. The per-fit mean over 200 thinned draws adds its own noise to each pair,
    # which the standard error below includes. z = 2.58 (two-sided 1%).
    reps = replications()
    d = np.array([r["risk_mean"] - r["true_evd"] for r in reps])
    se = d.std(ddof=1) / np.sqrt(d.size)
    assert abs(d.mean()) < stats.norm.isf(P_MIN / 2) * se, (d.mean(), se)
