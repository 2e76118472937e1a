"""Bad arguments to the public Python API: an InputError (a ValueError) naming the argument.

Never an AttributeError, TypeError, OverflowError or MemoryError from deep inside, and
nothing the README says is refused is accepted silently. Each case fails before any sampling.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.sparse as sp

import bayesirl as bi
from bayesirl.execution.backend import Processes
from posterior.problems import PRIOR, small_mdp, two_feature_likelihood

SAMPLE = [
    # (id, keyword arguments of sample, fragments of the message)
    ("no-likelihood", {"likelihood": None}, ["likelihood: expected a BoltzmannLikelihood",
                                             "NoneType"]),
    ("likelihood-string", {"likelihood": "lik"}, ["likelihood:", "str"]),
    ("prior-string", {"prior": "normal"}, ["prior: expected a prior object", "'normal'"]),
    ("prior-number", {"prior": 5.0}, ["prior: expected a prior object"]),
    ("draws-inf", {"draws": math.inf}, ["draws: expected an integer >= 1; got inf"]),
    ("draws-nan", {"draws": math.nan}, ["draws: expected an integer >= 1; got nan"]),
    ("draws-fraction", {"draws": 10.5}, ["draws: expected an integer >= 1; got 10.5"]),
    ("draws-string", {"draws": "100"}, ["draws: expected an integer >= 1; got '100'"]),
    ("draws-none", {"draws": None}, ["draws: expected an integer >= 1; got None"]),
    ("draws-zero", {"draws": 0}, ["draws: expected an integer >= 1; got 0"]),
    ("draws-1e12", {"draws": 10**12}, ["need at least", "more than half the memory"]),
    ("chains-bool", {"chains": True}, ["chains: expected an integer >= 1; got True"]),
    ("chains-over-limit", {"chains": 10**6}, ["chains: 1000000 is more than the limit"]),
    ("warmup-negative", {"warmup": -1}, ["warmup: expected an integer >= 0; got -1"]),
    ("seed-fraction", {"seed": 1.5}, ["seed: expected an integer >= 0; got 1.5"]),
    ("seed-negative", {"seed": -3}, ["seed: expected an integer >= 0; got -3"]),
    ("seed-string", {"seed": "7"}, ["seed: expected an integer >= 0; got '7'"]),
    ("backend-number", {"backend": 2}, ["backend: expected bayesirl.Serial()", "int 2"]),
    ("backend-string", {"backend": "local"}, ["backend: expected", "str 'local'"]),
    ("method-unknown", {"method": "gibbs"}, ["method: expected 'nuts' or 'random-walk'"]),
    ("max-depth-zero", {"max_depth": 0}, ["max_depth: expected an integer >= 1; got 0"]),
    ("target-accept-one", {"target_accept": 1.0}, ["target_accept: expected a number in (0, 1)"]),
    ("target-accept-string", {"target_accept": "0.8"}, ["target_accept:", "'0.8'"]),
    ("resume-without-file", {"resume": True}, ["resume=True needs checkpoint=PATH"]),
]


@pytest.mark.parametrize("case", SAMPLE, ids=[c[0] for c in SAMPLE])
def test_sample_refuses_bad_arguments(case):
    _, kwargs, fragments = case
    kwargs = {"likelihood": two_feature_likelihood(), "prior": PRIOR, "draws": 10,
              "warmup": 10, "chains": 1, "progress": False, "backend": Processes(1), **kwargs}
    with pytest.raises(bi.InputError) as err:
        bi.sample(**kwargs)
    for fragment in fragments:
        assert fragment in str(err.value), (fragment, str(err.value))


@pytest.mark.parametrize("n", [0, 1.5, True, "2"])
def test_processes_refuses_a_bad_count(n):
    with pytest.raises(bi.InputError, match="Processes: n must be an integer >= 1 or None"):
        Processes(n)


def test_whole_floats_are_still_accepted_by_sample():
    # Negative control for the cases above: 1e1 draws is a whole number and samples.
    post = bi.sample(two_feature_likelihood(), PRIOR, draws=1e1, warmup=10.0, chains=1,
                     seed=np.int64(3), progress=False, backend=Processes(1))
    assert post.n_draws == 10


def _ring_csr(index=1):
    """Two states, one action: CSR rows (s=0 -> index, s=1 -> 1)."""
    return sp.csr_matrix((np.ones(2), np.array([index, 1]), np.array([0, 1, 2])), shape=(2, 2))


MODEL = [
    ("discount-string", lambda: bi.TabularMDP(_ring_csr(), np.eye(2), discount="0.9"),
     ["discount: must be a number; got '0.9'"]),
    ("discount-bool", lambda: bi.TabularMDP(_ring_csr(), np.eye(2), discount=True),
     ["discount: must be a number; got True"]),
    ("horizon-1e18", lambda: bi.TabularMDP(_ring_csr(), np.eye(2), horizon=10**18),
     ["horizon: 1000000000000000000 is more than the limit of 1000000"]),
    ("csr-index-out-of-range", lambda: bi.TabularMDP(_ring_csr(1_000_000), np.eye(2)),
     ["transitions: column index 1000000 (entry 0, row 0) is outside 0..1"]),
    ("features-1e9", lambda: bi.TabularMDP(_ring_csr(), np.eye(2) * 1e9),
     ["features: entry (s, f) = (0, 0) is 1000000000.0", "rescale"]),
    ("features-strings", lambda: bi.TabularMDP(_ring_csr(), [["a", "b"], ["c", "d"]]),
     ["features: array of dtype <U1; expected real numbers"]),
    ("features-ragged", lambda: bi.TabularMDP(_ring_csr(), [[1.0], [1.0, 2.0]]),
     ["features: not a numeric array"]),
    ("transitions-none", lambda: bi.TabularMDP(None, np.eye(2)),
     ["transitions: array of dtype object; expected real numbers"]),
    ("transitions-complex", lambda: bi.TabularMDP(np.ones((2, 1, 2), complex) / 2, np.eye(2)),
     ["transitions: array of dtype complex128"]),
    ("start-strings", lambda: bi.TabularMDP(_ring_csr(), np.eye(2), start=["a", "b"]),
     ["start: array of dtype <U1"]),
    ("read-problem-none", lambda: _io().read_problem(None),
     ["path: expected a file name (str or Path); got None"]),
    ("read-problem-bytes", lambda: _io().read_problem(b"p.toml"), ["path: expected a file"]),
    ("read-problem-empty", lambda: _io().read_problem(""), ["path: expected a file"]),
    ("read-demos-no-problem", lambda: _io().read_demonstrations("w.csv", None),
     ["problem: expected a Problem from read_problem; got NoneType"]),
    ("read-demos-path-number", lambda: _io().read_demonstrations(5, None),
     ["path: expected a file name (str or Path); got 5"]),
]


def _io():
    import bayesirl.io

    return bayesirl.io


@pytest.mark.parametrize("case", MODEL, ids=[c[0] for c in MODEL])
def test_model_refuses_bad_arguments(case):
    _, build, fragments = case
    with pytest.raises(bi.InputError) as err:
        build()
    for fragment in fragments:
        assert fragment in str(err.value), (fragment, str(err.value))


def test_float32_dense_transitions_are_accepted_and_made_stochastic():
    # Negative control for the dtype checks: float32 rows are off 1 by their rounding only.
    p = np.full((3, 2, 3), np.float32(1 / 3))
    mdp = bi.TabularMDP(p, np.eye(3))
    np.testing.assert_allclose(np.asarray(mdp.transitions.sum(axis=1)).ravel(), 1.0,
                               rtol=0, atol=4 * np.finfo(float).eps)


def test_likelihood_refuses_missing_demonstrations():
    with pytest.raises(bi.InputError, match="demos"):
        bi.BoltzmannLikelihood(small_mdp(0, 2), None)
