"""The likelihood's warm starts travel with the checkpoint, or a resume is not exact.

On a sparse problem (more than DENSE_MAX_STATES states: GMRES with an LU preconditioner,
warm-started from the previous solution) the last bits of every log density depend on the
warm start. The negative control resumes with the warm starts dropped and must differ.
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest
import scipy.sparse as sp

import bayesirl as bi
from bayesirl.execution import chains
from bayesirl.execution.backend import Processes
from bayesirl.execution.interrupt import StopHook
from bayesirl.solver.dynamics import DENSE_MAX_STATES

RUN = dict(chains=1, draws=8, warmup=16, seed=4, progress=False, backend=Processes(1))
PRIOR = bi.Normal(0.0, 2.0)


@cache
def sparse_likelihood(n_s: int = 220, n_a: int = 3) -> bi.BoltzmannLikelihood:
    """A ring of states: each action moves 1-3 ahead, jumps up to 4, or stays (Dirichlet)."""
    rng = np.random.default_rng(0)
    rows, cols, vals = [], [], []
    for r in range(n_s * n_a):
        s = r // n_a
        targets = [(s + 1 + r % n_a) % n_s, (s + int(rng.integers(1, 5))) % n_s, s]
        rows += [r] * 3
        cols += targets
        vals += list(rng.dirichlet(np.ones(3)))
    p = sp.csr_matrix((vals, (rows, cols)), shape=(n_s * n_a, n_s))
    p.sum_duplicates()
    mdp = bi.TabularMDP(p, rng.normal(size=(n_s, n_a, 2)), discount=0.95,
                        feature_names=["x", "y"])
    demos = bi.simulate(mdp, np.array([0.8, -0.5]), episodes=4, length=10, seed=1)
    return bi.BoltzmannLikelihood(mdp, demos)


@cache
def _uninterrupted() -> bi.Posterior:
    return bi.sample(sparse_likelihood(), PRIOR, **RUN)


def _resumed(path, monkeypatch) -> bi.Posterior:
    monkeypatch.setattr(chains, "TEST_STOP", StopHook(0, iteration=12))
    with pytest.raises(bi.Interrupted):
        bi.sample(sparse_likelihood(), PRIOR, checkpoint=path, **RUN)
    monkeypatch.setattr(chains, "TEST_STOP", None)
    return bi.sample(sparse_likelihood(), PRIOR, checkpoint=path, resume=True, **RUN)


def test_problem_takes_the_sparse_warm_started_path():
    assert sparse_likelihood().mdp.n_states > DENSE_MAX_STATES
    assert sparse_likelihood().mdp.dynamics.dense is None


def test_resume_on_a_sparse_problem_is_exact(tmp_path, monkeypatch):
    assert np.array_equal(_resumed(tmp_path / "a.npz", monkeypatch).weights,
                          _uninterrupted().weights)


def test_negative_control_without_warm_starts_differs(tmp_path, monkeypatch):
    monkeypatch.setattr(chains._Warm, "load", lambda self, arrays: None)
    resumed = _resumed(tmp_path / "b.npz", monkeypatch)
    assert not np.array_equal(resumed.weights, _uninterrupted().weights)


def test_warm_start_arrays_round_trip():
    lik = sparse_likelihood()
    a = bi.BoltzmannLikelihood(lik.mdp, lik.demos)
    for w in ([0.7, -0.4], [0.75, -0.45]):
        a.evaluate(np.array(w))
    b = bi.BoltzmannLikelihood(lik.mdp, lik.demos)
    b.load_warm_start_arrays(a.warm_start_arrays())
    cold = bi.BoltzmannLikelihood(lik.mdp, lik.demos)
    w = np.array([0.8, -0.5])
    va, vb, vc = a.evaluate(w), b.evaluate(w), cold.evaluate(w)
    assert va.loglik == vb.loglik and np.array_equal(va.grad_weights, vb.grad_weights)
    # Control: from a cold start the same point differs in the last bits.
    assert (va.loglik, *va.grad_weights) != (vc.loglik, *vc.grad_weights)
