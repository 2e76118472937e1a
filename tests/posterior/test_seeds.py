"""Reproducibility of bayesirl.sample: the documented seeding contract.

``sample`` documents: "Chain k uses child k of numpy.random.SeedSequence(seed): the same
seed gives the same draws whether chains run in parallel or one after another." NumPy's
SeedSequence spawning (NEP 19) makes children independent of how many siblings exist, so
chain k must also not depend on the number of chains.
"""

from __future__ import annotations

from functools import cache

import numpy as np

import bayesirl as bi
from bayesirl.execution.backend import Processes

from .problems import PRIOR, two_feature_likelihood

RUN = dict(draws=60, warmup=60, progress=False)


@cache
def _run(seed: int, processes: int, chains: int = 2, method: str = "nuts"):
    return bi.sample(two_feature_likelihood(), PRIOR, chains=chains, seed=seed,
                     backend=Processes(processes), method=method, **RUN)


def _assert_identical(a: bi.Posterior, b: bi.Posterior, chains=slice(None)) -> None:
    assert np.array_equal(a.weights[chains], b.weights[chains])
    for key in a.stats:
        assert np.array_equal(a.stats[key][chains], b.stats[key][chains], equal_nan=True), key
    # the adapted step size and metric are identical too
    for x, y in zip(a.settings["adapted"][chains], b.settings["adapted"][chains], strict=True):
        assert x["step_size"] == y["step_size"] and x["inv_mass"] == y["inv_mass"]


def test_parallel_and_serial_runs_are_identical():
    _assert_identical(_run(5, processes=2), _run(5, processes=1))


def test_random_walk_parallel_and_serial_runs_are_identical():
    _assert_identical(_run(5, 2, method="random-walk"), _run(5, 1, method="random-walk"))


def test_chain_k_does_not_depend_on_the_number_of_chains():
    _assert_identical(_run(5, processes=1, chains=3), _run(5, processes=1),
                      chains=slice(0, 2))


def test_different_seeds_and_different_chains_differ():
    a, b = _run(5, processes=1), _run(6, processes=1)
    # Continuous draws: any coincidence between runs would mean shared random streams.
    assert not np.any(a.weights[:, -10:] == b.weights[:, -10:])
    assert not np.any(a.weights[0, -10:] == a.weights[1, -10:])


def test_rerun_in_the_same_process_is_identical():
    # No hidden state (warm starts, caches) leaks from one sample() call into the next.
    again = bi.sample(two_feature_likelihood(), PRIOR, chains=2, seed=5, backend=Processes(1),
                      **RUN)
    _assert_identical(again, _run(5, processes=1))
