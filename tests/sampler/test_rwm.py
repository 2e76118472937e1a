"""Adaptive random-walk Metropolis: exactness, Gaussian recovery, invalid proposals."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from harness import check_moments, run_sampler

from bayesirl.errors import InputError
from bayesirl.sampler import rwm

from .targets import GAUSSIANS

CORRELATED = GAUSSIANS["correlated-2d"]


@pytest.mark.parametrize(
    ("scale", "cov"), [(2.0, np.ones(2)), (1.5, np.array([[1.0, 1.8], [1.8, 4.0]]))],
    ids=["diag", "dense"],
)
def test_transition_leaves_target_invariant(scale, cov):
    # Exact independent draws stay exact after Metropolis transitions (invariance of the
    # Metropolis kernel; Metropolis et al. 1953, Hastings 1970).
    starts = CORRELATED.exact_draws(4000, seed=30)
    rng = np.random.default_rng(31)
    out = np.empty_like(starts)
    for i, start in enumerate(starts):
        state = rwm.init(start, CORRELATED.logdensity_and_grad)
        for _ in range(3):
            state, _ = rwm.step(rng, state, CORRELATED.logdensity_and_grad, scale, cov)
        out[i] = state.position
    check_moments(out, CORRELATED.mean, CORRELATED.cov_or_sd, CORRELATED.quantiles())


@pytest.mark.parametrize("dense", [False, True])
@pytest.mark.parametrize("name", sorted(GAUSSIANS))
def test_recovers_gaussian(name, dense):
    # Known Gaussian moments and quantiles within family-wise MC error (tests/harness.py).
    target = GAUSSIANS[name]
    samples, results = run_sampler(
        target.logdensity_and_grad, target.starts(2, 32), 6000, 2000, seed=33, chains=2,
        method="random-walk", dense_mass=dense,
    )
    check_moments(samples, target.mean, target.cov_or_sd, target.quantiles())
    assert all(r.stats["n_steps"].sum() == 6000 for r in results)


@pytest.mark.slow
@pytest.mark.parametrize("dense", [False, True])
@pytest.mark.parametrize("name", sorted(GAUSSIANS))
def test_recovers_gaussian_long(name, dense):
    target = GAUSSIANS[name]
    samples, _ = run_sampler(
        target.logdensity_and_grad, target.starts(4, 34), 40000, 5000, seed=35, chains=4,
        method="random-walk", dense_mass=dense,
    )
    check_moments(samples, target.mean, target.cov_or_sd, target.quantiles())


@pytest.mark.parametrize("bad", [-np.inf, np.nan, np.inf])
def test_invalid_proposals_are_rejected(bad):
    def walled(x):
        return (bad, None) if x[0] >= 0.5 else (-0.5 * float(x @ x), None)

    state = rwm.init(np.array([0.0]), walled)
    rng = np.random.default_rng(36)
    invalid = 0
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        for _ in range(500):
            state, info = rwm.step(rng, state, walled, 1.0, np.ones(1))
            invalid += info.invalid
            assert state.position[0] < 0.5 and np.isfinite(state.logdensity)
            assert not (info.invalid and info.accepted)
    assert invalid > 50  # a unit step from x < 0.5 crosses the wall ~30% of the time


def test_value_only_log_density_is_accepted():
    state = rwm.init(np.zeros(1), lambda x: -0.5 * float(x @ x))
    state, info = rwm.step(np.random.default_rng(37), state, lambda x: -0.5 * float(x @ x),
                           1.0, np.ones(1))
    assert info.n_steps == 1 and np.isfinite(state.logdensity)


def test_optimal_scale():
    # Roberts, Gelman & Gilks (1997): 2.38 / sqrt(d).
    assert rwm.optimal_scale(4) == pytest.approx(1.19)


def test_bad_inputs_are_rejected():
    state = rwm.init(np.zeros(2), CORRELATED.logdensity_and_grad)
    rng = np.random.default_rng(38)
    with pytest.raises(InputError):
        rwm.step(rng, state, CORRELATED.logdensity_and_grad, 1.0, np.array([[1.0, 2.0],
                                                                            [2.0, 1.0]]))
    with pytest.raises(InputError):
        rwm.step(rng, state, CORRELATED.logdensity_and_grad, 1.0, np.array([1.0, -1.0]))
    with pytest.raises(InputError):
        rwm.step(rng, state, CORRELATED.logdensity_and_grad, 0.0, np.ones(2))
    with pytest.raises(InputError, match="not finite"):
        rwm.init(np.zeros(1), lambda x: np.nan)
