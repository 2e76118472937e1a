"""Bugs in other layers found while calibrating the posterior, recorded until fixed.

Each test states the behaviour the sampler needs and is marked ``xfail(strict=True)``: when
the bug is fixed the test passes, strict mode turns that into a failure, and the marker must
go (and the runner's restarts in ``bayesirl.validation.report.SETTINGS`` can go with it).
"""

from __future__ import annotations

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.posterior import PosteriorModel
from bayesirl.validation import GridSBC

UNKNOWN = GridSBC(n_features=3, rationality=bi.LogNormal(0.0, 0.5), pin={"goal": 1.0})
# log(beta) below log(smallest subnormal double) = -744.4: exp underflows to exactly 0.0.
UNDERFLOW_LOG_BETA = -800.0

_UNDERFLOW = (
    "PosteriorModel.logdensity_and_grad maps theta[-1] = log(beta) to beta = exp(theta[-1]); "
    "below -745 that is 0.0 and BoltzmannLikelihood.evaluate raises InputError ('rationality: "
    "must be a positive finite number; got 0.0') instead of the log density being -inf, which "
    "NUTS would treat as a divergence and reject"
)


def _demos(seed: int = 0):
    return UNKNOWN.simulate(np.random.default_rng(seed))[1]


@pytest.mark.xfail(strict=True, raises=bi.InputError, reason=_UNDERFLOW)
def test_log_posterior_at_underflowing_rationality_is_minus_infinity():
    lik = bi.BoltzmannLikelihood(UNKNOWN.mdp, _demos())
    model = PosteriorModel(lik, bi.Normal(0.0, 1.0), UNKNOWN.rationality, UNKNOWN.pin)
    theta = np.array([0.0, 0.0, UNDERFLOW_LOG_BETA])
    value, _ = model(theta)
    assert value == -np.inf


@pytest.mark.xfail(
    strict=True, raises=bi.InputError,
    reason="sample() with a sampled rationality crashes in the first step-size search: from a "
    "start with d logp / d log(beta) = -2337 one leapfrog step of size 1 sends log(beta) to "
    "about -1166; " + _UNDERFLOW,
)
def test_sample_with_sampled_rationality_survives_a_steep_start():
    # Replication 23 of the SBC run with seed 2 (bayesirl.validation.runner.replicate): the
    # data and the sampler seed of its first attempt, where the crash was found (2 of 40
    # replications crashed this way).
    child = np.random.SeedSequence(2).spawn(24)[23]
    data_seed, sampler_seed = child.spawn(2)
    _, demos = UNKNOWN.simulate(np.random.default_rng(data_seed))
    lik = bi.BoltzmannLikelihood(UNKNOWN.mdp, demos)
    post = bi.sample(lik, bi.Normal(0.0, 1.0), chains=2, draws=300, warmup=300,
                     seed=int(sampler_seed.generate_state(1)[0]), progress=False,
                     rationality=UNKNOWN.rationality, pin=UNKNOWN.pin, processes=1)
    assert np.all(np.isfinite(post.rationality))
