"""run_chain: output contract, determinism, callbacks, evaluation counts, divergences."""

from __future__ import annotations

import pickle

import numpy as np
import pytest

from bayesirl.errors import InputError
from bayesirl.sampler import ChainResult, NUTSInfo, RWMInfo, run_chain
from bayesirl.sampler.adaptation import welford_final, welford_init, welford_update, window_schedule

from .targets import GAUSSIANS

TARGET = GAUSSIANS["correlated-2d"]
METHOD_INFO = {"nuts": NUTSInfo, "random-walk": RWMInfo}


class _Counted:
    def __init__(self, fn):
        self.fn, self.calls = fn, 0

    def __call__(self, x):
        self.calls += 1
        return self.fn(x)


@pytest.mark.parametrize("dense", [False, True])
@pytest.mark.parametrize("method", sorted(METHOD_INFO))
def test_result_contract(method, dense):
    f = _Counted(TARGET.logdensity_and_grad)
    seen = []
    result = run_chain(f, np.zeros(2), 60, 40, 50, method=method, dense_mass=dense,
                       callback=lambda i, info: seen.append((i, type(info))))
    assert isinstance(result, ChainResult) and result.method == method
    assert result.draws.shape == (60, 2) and result.warmup_draws.shape == (40, 2)
    for stats, n in ((result.stats, 60), (result.warmup_stats, 40)):
        assert set(stats) == {"step_size", "tree_depth", "n_steps", "divergent",
                              "acceptance", "energy", "logdensity", "accepted"}
        assert all(isinstance(v, np.ndarray) and v.shape == (n,) for v in stats.values())
    assert result.inv_mass.shape == ((2, 2) if dense else (2,))
    assert np.all(result.stats["step_size"] == result.step_size)
    assert seen == [(i, METHOD_INFO[method]) for i in range(100)]
    # Every evaluation is accounted for: init + kernel steps + step-size searches.
    assert result.n_evals == f.calls
    in_steps = result.stats["n_steps"].sum() + result.warmup_stats["n_steps"].sum()
    assert 1 + in_steps <= result.n_evals <= 1 + in_steps + (200 if method == "nuts" else 0)
    logdensity = np.array([TARGET.logdensity_and_grad(x)[0] for x in result.draws])
    np.testing.assert_allclose(result.stats["logdensity"], logdensity, rtol=1e-12)
    restored = pickle.loads(pickle.dumps(result))
    assert np.array_equal(restored.draws, result.draws)


@pytest.mark.parametrize("method", sorted(METHOD_INFO))
def test_same_seed_same_draws_different_seed_different_draws(method):
    # Project rule: all randomness flows from one numpy Generator, never global state.
    def run(seed):
        return run_chain(TARGET.logdensity_and_grad, np.zeros(2), 50, 50, seed, method=method)

    a, b, c = run(7), run(7), run(8)
    assert np.array_equal(a.draws, b.draws) and np.array_equal(a.warmup_draws, b.warmup_draws)
    assert all(np.array_equal(a.stats[k], b.stats[k], equal_nan=True) for k in a.stats)
    assert a.step_size == b.step_size and np.array_equal(a.inv_mass, b.inv_mass)
    assert not np.array_equal(a.draws, c.draws)
    # A Generator seeded the same way, or a SeedSequence, gives the same stream.
    assert np.array_equal(run(np.random.default_rng(7)).draws, a.draws)
    assert np.array_equal(run(np.random.SeedSequence(7)).draws, a.draws)


def test_no_warmup_uses_searched_step_and_unit_metric():
    result = run_chain(TARGET.logdensity_and_grad, np.zeros(2), 10, 0, 1)
    assert result.warmup_draws.shape == (0, 2)
    assert np.array_equal(result.inv_mass, np.ones(2)) and result.step_size > 0


@pytest.mark.parametrize("dense", [False, True])
@pytest.mark.parametrize("method", sorted(METHOD_INFO))
def test_metric_is_regularised_estimate_from_last_slow_window(method, dense):
    # Stan's contract: the final metric is the shrunk (co)variance of the warmup draws of
    # the last slow window, and is not changed afterwards.
    result = run_chain(TARGET.logdensity_and_grad, np.zeros(2), 5, 200, 4, method=method,
                       dense_mass=dense)
    last = [w for w in window_schedule(200) if w.kind == "slow"][-1]
    state = welford_init(2, dense)
    for x in result.warmup_draws[last.start : last.stop]:
        state = welford_update(state, x)
    np.testing.assert_allclose(result.inv_mass, welford_final(state), rtol=1e-12)


def test_funnel_reports_divergences():
    # Neal's funnel, v ~ N(0, 3^2), x | v ~ N(0, exp(v)): the neck's curvature defeats any
    # single step size, the textbook case for divergences (Betancourt & Girolami 2015).
    def funnel(theta):
        v, x = theta
        logdensity = -v**2 / 18.0 - 0.5 * x**2 * np.exp(-v) - 0.5 * v
        grad = np.array([-v / 9.0 + 0.5 * x**2 * np.exp(-v) - 0.5, -x * np.exp(-v)])
        return logdensity, grad

    result = run_chain(funnel, np.array([0.0, 0.5]), 500, 500, 3)
    assert result.stats["divergent"].sum() > 0
    assert np.all(np.isfinite(result.draws))


def test_bad_arguments_are_rejected():
    with pytest.raises(InputError, match="method"):
        run_chain(TARGET.logdensity_and_grad, np.zeros(2), 1, 1, 0, method="gibbs")
    with pytest.raises(InputError, match="target_accept"):
        run_chain(TARGET.logdensity_and_grad, np.zeros(2), 1, 1, 0, target_accept=1.0)
    with pytest.raises(InputError, match="non-negative"):
        run_chain(TARGET.logdensity_and_grad, np.zeros(2), -1, 1, 0)
