"""The step-by-step chain driver: records restore a chain exactly; iterations are atomic.

Reference: ``run_chain`` in one go, which is the same loop without the round trips, on a
density with no memory (so only the driver's own state can make a difference).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from bayesirl.sampler import run_chain
from bayesirl.sampler.driver import Chain, ChainSettings

SCALES = np.array([1.0, 2.0, 3.0])


def density(x):
    """A skewed 3-d target: Gaussian with a quartic term."""
    return (-0.5 * float(x @ (SCALES * x)) - 0.1 * float(np.sum(x**4)),
            -(SCALES * x) - 0.4 * x**3)


X0 = np.array([0.3, -0.2, 0.1])


@pytest.mark.parametrize("method", ["nuts", "random-walk"])
@pytest.mark.parametrize("dense", [False, True])
def test_round_trips_through_records_change_nothing(method, dense):
    cfg = ChainSettings(method, draws=20, warmup=60, dense_mass=dense)
    reference = run_chain(density, X0, 20, 60, 7, method=method, dense_mass=dense)
    chain = Chain.start(density, X0, cfg, 7)
    for stop in (0, 10, 59, 60, 61, 75, 80):  # warmup, its last iteration, sampling, end
        while chain.state.iteration < stop:
            chain.advance()
        meta, arrays = chain.to_record()
        meta = json.loads(json.dumps(meta))  # the record survives JSON
        chain = Chain.from_record(density, cfg, meta, {k: v.copy() for k, v in arrays.items()})
    assert chain.done
    result = chain.result()
    assert np.array_equal(result.draws, reference.draws)
    assert np.array_equal(result.warmup_draws, reference.warmup_draws)
    for key in reference.stats:
        assert np.array_equal(result.stats[key], reference.stats[key], equal_nan=True)
    assert result.step_size == reference.step_size and result.n_evals == reference.n_evals
    assert np.array_equal(result.inv_mass, reference.inv_mass)


class Flaky:
    """The density, raising at chosen calls (as a stop request does)."""

    def __init__(self, fail_at):
        self.fail_at, self.calls = set(fail_at), 0

    def __call__(self, x):
        self.calls += 1
        if self.calls in self.fail_at:
            raise RuntimeError("stop")
        return density(x)


def test_a_failed_iteration_leaves_the_chain_unchanged():
    reference = run_chain(density, X0, 20, 30, 3)
    flaky = Flaky(fail_at=range(40, 400, 37))  # mid-trajectory, many times
    chain = Chain.start(flaky, X0, ChainSettings("nuts", 20, 30), 3)
    failures = 0
    while not chain.done:
        before = chain.state
        try:
            chain.advance()
        except RuntimeError:
            failures += 1
            assert chain.state is before
    assert failures > 3
    assert np.array_equal(chain.result().draws, reference.draws)
    assert chain.result().n_evals == reference.n_evals  # the failed calls are not counted


def test_negative_control_a_lost_generator_state_changes_the_draws():
    cfg = ChainSettings("nuts", 20, 30)
    chain = Chain.start(density, X0, cfg, 3)
    while chain.state.iteration < 35:
        chain.advance()
    meta, arrays = chain.to_record()
    meta["rng"] = np.random.default_rng(99).bit_generator.state
    chain = Chain.from_record(density, cfg, meta, arrays)
    while not chain.done:
        chain.advance()
    assert not np.array_equal(chain.result().draws, run_chain(density, X0, 20, 30, 3).draws)
