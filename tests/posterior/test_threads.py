"""Chains run with one BLAS thread, in the main process and in workers (bayesirl.threads).

Two chain workers on two cores with OpenBLAS's default pool ran four spinning threads and
were 5x slower per gradient at 10^5 states; the limit also keeps the rounding of BLAS
products, and so the draws, the same wherever a chain runs.
"""

from __future__ import annotations

import os

import numpy as np
import pytest
from threadpoolctl import threadpool_info

import bayesirl as bi
from bayesirl.execution.backend import Processes

from .problems import PRIOR, two_feature_likelihood


def _blas_threads() -> set[int]:
    return {p["num_threads"] for p in threadpool_info() if p["user_api"] == "blas"}


class BlasCheckingLikelihood(bi.BoltzmannLikelihood):
    """Raises inside the chain if BLAS would run with more than one thread there."""

    def evaluate(self, weights, rationality=None):
        if _blas_threads() != {1}:
            raise RuntimeError(f"chain evaluated with BLAS thread pools {_blas_threads()}")
        return super().evaluate(weights, rationality)


def _checking_copy() -> BlasCheckingLikelihood:
    lik = two_feature_likelihood()
    return BlasCheckingLikelihood(lik.mdp, lik.demos, rationality=lik.rationality,
                    q_function=lik.q_function, tol=lik.tol)


@pytest.fixture
def several_blas_threads():
    # Without more than one thread to begin with, the check below could not fail.
    if (os.cpu_count() or 1) < 2 or max(_blas_threads(), default=1) < 2:
        pytest.skip("BLAS runs one thread here already: nothing to limit")


@pytest.mark.parametrize("processes", [1, 2])
def test_chains_see_one_blas_thread_and_the_caller_keeps_its_own(several_blas_threads,
                                                                 processes):
    before = _blas_threads()
    post = bi.sample(_checking_copy(), PRIOR, chains=2, draws=20, warmup=20, seed=3,
                     backend=Processes(processes), progress=False)
    assert np.all(np.isfinite(post.weights))
    assert _blas_threads() == before  # the limit is undone in the main process


def test_the_check_fails_outside_a_chain(several_blas_threads):
    # Negative control: evaluated directly (not through sample) the likelihood must raise.
    with pytest.raises(RuntimeError, match="BLAS thread pools"):
        _checking_copy().evaluate(np.zeros(2))
