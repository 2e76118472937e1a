"""The SBC runner on a problem with an exact posterior: seeding, processes, thinning, restarts.

The conjugate normal posterior (standard conjugacy, written out in bayesirl.validation.toys)
is the outside reference: its draws are exact, so the runner must accept it, and must reject
it when the prior is wrong or when correlated draws are ranked without thinning.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest

from bayesirl.errors import InputError
from bayesirl.validation import ConjugateNormal, SBCSettings, run_sbc
from bayesirl.validation.controls import run_controls

FAST = SBCSettings(n_draws=39, draws=200)


def test_same_seed_same_ranks_in_any_number_of_processes():
    problem = ConjugateNormal(rho=0.5)
    serial = run_sbc(problem, 12, seed=5, settings=FAST, processes=1)
    again = run_sbc(problem, 12, seed=5, settings=FAST, processes=1)
    forked = run_sbc(problem, 12, seed=5, settings=FAST, processes=2)
    np.testing.assert_array_equal(serial.ranks, again.ranks)
    np.testing.assert_array_equal(serial.ranks, forked.ranks)
    assert [r.index for r in forked.replications] == list(range(12))
    # Replication r depends on its own seed only, not on how many replications run.
    prefix = run_sbc(problem, 5, seed=5, settings=FAST, processes=1)
    np.testing.assert_array_equal(prefix.ranks, serial.ranks[:5])
    other = run_sbc(problem, 12, seed=6, settings=FAST, processes=1)
    assert not np.array_equal(other.ranks, serial.ranks)


def test_low_ess_doubles_the_draws_then_falls_back():
    # rho = 0.95: 2 x 200 draws have ESS ~ 400 * 0.05 / 1.95 = 10, too few for 39 thinned
    # draws (stride 40 over 19 gaps needs 760 iterations): two doublings give 800 draws per
    # chain and ESS ~ 41, which suffices; with no doubling allowed the fallback is used.
    problem = ConjugateNormal(rho=0.95)
    result = run_sbc(problem, 4, seed=1, settings=SBCSettings(n_draws=39, draws=200,
                                                               doublings=2), processes=1)
    assert all(r.attempts > 1 and r.draws == 200 * 2 ** (r.attempts - 1)
               for r in result.replications)
    stuck = run_sbc(problem, 4, seed=1, settings=SBCSettings(n_draws=39, draws=200,
                                                              doublings=0), processes=1)
    assert all(r.short and r.attempts == 1 for r in stuck.replications)
    assert all(r.thinned.shape == (39, 2) for r in stuck.replications)


@dataclass(frozen=True)
class FlakyPosterior(ConjugateNormal):
    """Raises InputError for sampler seeds divisible by ``every`` (an odd start, say)."""

    every: int = 3

    def posterior(self, data, draws, seed):
        if seed % self.every == 0:
            raise InputError(f"flaky start (seed {seed})")
        return super().posterior(data, draws, seed)


def test_errors_restart_the_sampler_and_are_recorded_but_never_drop_a_replication():
    problem = FlakyPosterior(every=2)  # about half the seeds fail
    result = run_sbc(problem, 10, seed=3, settings=SBCSettings(n_draws=39, draws=200,
                                                                restarts=8), processes=1)
    assert len(result.replications) == 10
    assert any(r.restarts for r in result.replications)
    assert all(m.startswith("InputError: flaky start") for r in result.replications
               for m in r.restarts)
    with pytest.raises(InputError, match="flaky"):
        run_sbc(FlakyPosterior(every=1), 2, seed=3, settings=FAST, processes=1)


def test_exact_posterior_passes_and_deliberately_wrong_ones_are_rejected():
    # Positive control, then two negative controls (prior scale doubled with weak data;
    # rho = 0.95 draws not thinned), each 200 seeded replications; their designs are
    # derived in bayesirl.validation.controls.
    exact, doubled, unthinned = run_controls({}, processes=1)
    assert not exact.expect_reject and exact.ok, exact
    assert doubled.expect_reject and doubled.ok, doubled
    assert unthinned.expect_reject and unthinned.ok, unthinned


def test_control_verdicts_follow_the_p_values():
    from bayesirl.validation.controls import Control

    assert Control("c", ("a", "b"), (1e-4, 1e-3), True).ok
    assert not Control("c", ("a", "b"), (1e-4, 0.2), True).ok
    assert Control("c", ("a",), (0.5,), False).ok
    assert not Control("c", ("a",), (0.005,), False).ok
