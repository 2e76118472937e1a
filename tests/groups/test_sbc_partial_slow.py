"""Simulation-based calibration of partial pooling at full size (slow; Talts et al. 2018).

200 replications of PartialSBC (3 demonstrators, one feature, 5-state MDP), L = 99 thinned
draws, 20 bins of 10 expected replications, each of mu, spread and demonstrator 0's weight
uniform at p > 0.01. Negative control at the same size: the analyst fixes the spread at 0
(every demonstrator given the population's weights, the pooled model's assumption) while
the truths differ; the spread's true value then always exceeds every draw (rank L) and
demonstrator 0's posterior is too narrow, so both must be rejected. Not run in the session
that wrote it (shared machine): expected cost about 2 x 200 x 3 s of CPU.
"""

from __future__ import annotations

import pytest

from bayesirl.posterior.groups import Pooling
from bayesirl.validation import SBCSettings, run_sbc
from bayesirl.validation.partial import PartialSBC
from bayesirl.validation.ranks import ALPHA

REPLICATIONS = 200
SETTINGS = SBCSettings(n_draws=99, draws=300, doublings=2, restarts=0)

pytestmark = pytest.mark.slow


def test_partial_pooling_ranks_are_uniform():
    result = run_sbc(PartialSBC(), REPLICATIONS, seed=161, settings=SETTINGS)
    assert not any(r.short for r in result.replications), "thinning premise failed"
    tests = result.tests()
    assert result.bins() == 20 and all(t.expected == 10.0 for t in tests)
    assert [(t.name, t.p_value) for t in tests if not t.passed] == []


def test_negative_control_zero_spread_is_rejected():
    wrong = PartialSBC(sampler_pooling=Pooling("partial", 0.0))
    result = run_sbc(wrong, REPLICATIONS, seed=162, settings=SETTINGS)
    p = {t.name: t.p_value for t in result.tests()}
    assert p["spread"] < ALPHA and p["w[0]"] < ALPHA, p
