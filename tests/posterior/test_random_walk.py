"""bayesirl.sample: NUTS and the random-walk Metropolis sampler agree with each other.

Two different transition kernels (multinomial NUTS, Hoffman & Gelman 2014 / Betancourt 2017;
adaptive random-walk Metropolis, Haario, Saksman & Tamminen 2001) must give the same
posterior on the same 2-feature MDP problem (S = 6, A = 3, 48 demonstrated steps, N(0, 2^2)
prior, beta = 1): means, sds and 5/50/95% quantiles within combined Monte-Carlo error
(harness.check_agreement, independent chains, family-wise level 1e-3). The posterior is
skewed (sample skewness ~0.3 in both weights), so matching quantiles tests more than the
first two moments.
"""

from __future__ import annotations

from functools import cache

import pytest
from harness import check_agreement, sample_check

import bayesirl as bi
from bayesirl.execution.backend import Processes

from .problems import PRIOR, nuts_two_feature, two_feature_likelihood


@cache
def _random_walk(seed: int = 11, draws: int = 4000, warmup: int = 1000, prior=PRIOR):
    # ~4 times NUTS's draws: the random walk's ESS per draw is ~0.1 here against NUTS's ~0.6.
    post = bi.sample(two_feature_likelihood(), prior, chains=4, draws=draws, warmup=warmup,
                     seed=seed, method="random-walk", progress=False, backend=Processes(1))
    assert post.settings["method"] == "random-walk"
    return post


def test_nuts_agrees_with_random_walk():
    check_agreement(nuts_two_feature().weights, _random_walk().weights)


def test_comparison_detects_a_different_prior():
    # Negative control: the random walk under N(0, 1^2) instead of N(0, 2^2). The prior
    # pulls the weight y (posterior mean ~ -1.45, sd ~ 0.48 under N(0, 4)) towards 0 by
    # roughly sd^2 (1/1 - 1/4) |mean| ~ 0.25, i.e. ~15 combined MCSEs of ~0.017.
    check = sample_check(nuts_two_feature().weights,
                         _random_walk(prior=bi.Normal(0.0, 1.0)).weights)
    assert "mean[1]" in check.failed, check.report()


@pytest.mark.slow
def test_nuts_agrees_with_random_walk_long():
    check_agreement(nuts_two_feature(seed=12, draws=4000, warmup=1000).weights,
                    _random_walk(seed=13, draws=16000, warmup=2000).weights)
