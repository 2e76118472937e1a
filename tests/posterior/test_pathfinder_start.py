"""``sample(start="pathfinder")``: seeding, the initial mass matrix, argument checks.

The statistical comparison (warm-up gradients, R-hat and ESS with and without the
Pathfinder start) is the slow test in tests/posterior/test_pathfinder_warmup.py.
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.execution.backend import Processes, Serial
from bayesirl.posterior import PosteriorModel
from bayesirl.sampler import pathfinder

from .problems import PRIOR, two_feature_likelihood


def _sample(seed: int, warmup: int = 40, start: str = "pathfinder", backend=None):
    return bi.sample(two_feature_likelihood(), PRIOR, chains=2, draws=30, warmup=warmup,
                     seed=seed, backend=backend or Serial(), progress=False, start=start)


_run = cache(_sample)


def test_same_seed_same_draws_and_another_seed_differs():
    # The seeding contract of sample (docstring): chain k uses child k of SeedSequence(seed),
    # the Pathfinder path included; a fresh likelihood (a worker's) gives the same draws.
    # (Serial against Processes(2) also agree; not run here: process start-up costs ~10 s.)
    a, b, c = _run(4), _sample(4, backend=Processes(1)), _run(5)
    assert np.array_equal(a.weights, b.weights)
    assert a.settings["adapted"] == b.settings["adapted"]
    assert not np.array_equal(a.weights, c.weights)
    assert a.settings["start"] == "pathfinder"


def test_without_warmup_the_chain_keeps_the_approximation_as_its_mass_matrix():
    # With warmup=0 nothing adapts the metric, so the chain's inverse mass matrix is the
    # Pathfinder covariance's diagonal, recomputed here from the same generator sequence
    # (chain 0: child 0 of SeedSequence(4), its first spawned child for the start).
    post = _run(4, warmup=0)
    init_seed = np.random.SeedSequence(4).spawn(2)[0].spawn(2)[0]
    rng = np.random.default_rng(init_seed)
    model = PosteriorModel(two_feature_likelihood(), PRIOR)
    theta0 = rng.uniform(-2.0, 2.0, size=model.dim)  # finite here: the first uniform draw
    _, diag, used = pathfinder.initial_state(model, theta0, rng, logdensity=model.logdensity)
    # Equal up to the soft Bellman solves' warm starts (the chain's likelihood has another
    # history of solves; solve tolerance 1e-10): measured 2e-11 relative, allowed 1e-8.
    np.testing.assert_allclose(post.settings["adapted"][0]["inv_mass"], diag, rtol=1e-8)
    # Negative control: the uniform start keeps the identity.
    plain = _run(4, warmup=0, start="uniform")
    assert plain.settings["adapted"][0]["inv_mass"] == [1.0, 1.0]
    assert "start" not in plain.settings
    # The path's density calls are counted in the chain's evaluations.
    assert post.settings["adapted"][0]["n_evals"] > used


@pytest.mark.parametrize("bad", ["laplace", "", None, 1])
def test_an_unknown_start_is_refused(bad):
    with pytest.raises(bi.InputError, match="start"):
        bi.sample(two_feature_likelihood(), PRIOR, chains=1, draws=10, warmup=0,
                  progress=False, start=bad)
