"""Regression tests for bugs found while calibrating the posterior (now fixed).

Both were recorded as strict xfails: ``exp(log beta)`` underflowing to 0 made the likelihood
raise InputError instead of the log density being -inf, which crashed NUTS's first
step-size search from a steep start (2 of 40 SBC replications).
"""

from __future__ import annotations

import numpy as np

import bayesirl as bi
from bayesirl.execution.backend import Processes
from bayesirl.posterior import PosteriorModel
from bayesirl.validation import GridSBC

UNKNOWN = GridSBC(n_features=3, rationality=bi.LogNormal(0.0, 0.5), pin={"goal": 1.0})
# log(beta) below log(smallest subnormal double) = -744.4: exp underflows to exactly 0.0.
UNDERFLOW_LOG_BETA = -800.0

def _demos(seed: int = 0):
    return UNKNOWN.simulate(np.random.default_rng(seed))[1]


def test_log_posterior_at_underflowing_rationality_is_minus_infinity():
    lik = bi.BoltzmannLikelihood(UNKNOWN.mdp, _demos())
    model = PosteriorModel(lik, bi.Normal(0.0, 1.0), UNKNOWN.rationality, UNKNOWN.pin)
    theta = np.array([0.0, 0.0, UNDERFLOW_LOG_BETA])
    value, _ = model(theta)
    assert value == -np.inf
    assert model.logdensity(theta) == -np.inf
    # exp overflow (log beta > 709.8) likewise
    assert model.logdensity(np.array([0.0, 0.0, 800.0])) == -np.inf


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
                     rationality=UNKNOWN.rationality, pin=UNKNOWN.pin, backend=Processes(1))
    assert np.all(np.isfinite(post.rationality))
