"""Bad inputs are refused with an InputError (a ValueError) that names what is wrong and where.

Outside reference: the error contract stated in bayesirl/errors.py ("Bad user input raises
InputError ... naming what is wrong and where"); the probability axioms (rows of a transition
matrix are non-negative and sum to 1) for what counts as bad.
"""

from __future__ import annotations

import re

import numpy as np
import pytest
import scipy.sparse as sp

import bayesirl as bi
from bayesirl import InputError

S, A, F = 4, 2, 2


def _cycle():
    """Deterministic dynamics: (s, a) -> (s + a + 1) mod S."""
    p = np.zeros((S, A, S))
    for s in range(S):
        for a in range(A):
            p[s, a, (s + a + 1) % S] = 1.0
    return p


def _with(**entries):
    """The cycle dynamics with some entries overwritten: key 's1a0t2' -> P[1, 0, 2]."""
    p = _cycle()
    for key, value in entries.items():
        s, a, t = (int(x) for x in re.findall(r"\d+", key))
        p[s, a, t] = value
    return p


FEATS = np.ones((S, F))


def _feats(shape, bad_at, value):
    f = np.ones(shape)
    f[bad_at] = value
    return f


def _mdp(**kw):
    return bi.TabularMDP(_cycle(), FEATS, **kw)


def _demos(states, actions):
    return bi.Demonstrations.from_arrays(states, actions)


def _sparse(p):
    return sp.csr_matrix(p.reshape(-1, S))


# (id, thunk, regexes that must all appear in the message: the "what" and the "where")
CASES = [
    # --- transitions -------------------------------------------------------------------------
    ("row-sum-dense", lambda: bi.TabularMDP(_with(s2a1t1=0.5), FEATS),
     [r"transitions", r"s=2, a=1", r"1\.5"]),
    ("row-sum-sparse", lambda: bi.TabularMDP(_sparse(_with(s2a1t1=0.5)), FEATS),
     [r"transitions", r"s=2, a=1", r"1\.5"]),
    ("row-sum-short", lambda: bi.TabularMDP(_with(s3a0t0=0.25), FEATS),
     [r"transitions", r"s=3, a=0", r"0\.25"]),
    # Nothing is silently renormalised: 1 + 1e-6 is a real error, not rounding.
    ("row-sum-1e-6", lambda: bi.TabularMDP(_with(s1a1t3=1 + 1e-6), FEATS),
     [r"transitions", r"s=1, a=1", r"1\.000001"]),
    ("negative-dense", lambda: bi.TabularMDP(_with(s1a0t2=1.25, s1a0t0=-0.25), FEATS),
     [r"transitions", r"s'=0", r"s=1", r"a=0", r"-0\.25"]),
    ("negative-sparse", lambda: bi.TabularMDP(_sparse(_with(s1a0t2=1.25, s1a0t0=-0.25)), FEATS),
     [r"transitions", r"s'=0", r"s=1", r"a=0", r"-0\.25"]),
    ("nan-dense", lambda: bi.TabularMDP(_with(s0a1t3=np.nan), FEATS),
     [r"transitions", r"s'=3", r"s=0", r"a=1", r"nan"]),
    ("nan-sparse", lambda: bi.TabularMDP(_sparse(_with(s0a1t3=np.nan)), FEATS),
     [r"transitions", r"s'=3", r"s=0", r"a=1", r"nan"]),
    ("inf-dense", lambda: bi.TabularMDP(_with(s2a0t1=np.inf), FEATS),
     [r"transitions", r"s'=1", r"s=2", r"a=0", r"inf"]),
    ("dense-shape-not-square", lambda: bi.TabularMDP(_cycle()[:, :, :3], FEATS),
     [r"transitions", r"\(S, A, S\)", r"\(4, 2, 3\)"]),
    ("dense-shape-2d", lambda: bi.TabularMDP(_cycle()[:, 0, :], FEATS),
     [r"transitions", r"\(S, A, S\)", r"\(4, 4\)"]),
    ("sparse-rows-not-multiple", lambda: bi.TabularMDP(_sparse(_cycle())[:7], FEATS),
     [r"transitions", r"\(S\*A, S\)", r"\(7, 4\)", r"not a multiple"]),
    # --- features ----------------------------------------------------------------------------
    ("features-nan-state", lambda: bi.TabularMDP(_cycle(), _feats((S, F), (2, 1), np.nan)),
     [r"features", r"\(2, 1\)", r"nan"]),
    ("features-inf-state-action",
     lambda: bi.TabularMDP(_cycle(), _feats((S, A, F), (3, 1, 0), -np.inf)),
     [r"features", r"\(s, a, f\)", r"\(3, 1, 0\)", r"inf"]),
    ("features-rows", lambda: bi.TabularMDP(_cycle(), np.ones((S + 1, F))),
     [r"features", r"\(4, F\)", r"\(5, 2\)"]),
    ("features-actions", lambda: bi.TabularMDP(_cycle(), np.ones((S, A + 1, F))),
     [r"features", r"\(4, 2, F\)", r"\(4, 3, 2\)"]),
    ("features-1d", lambda: bi.TabularMDP(_cycle(), np.ones(S)),
     [r"features", r"\(4,\)"]),
    ("features-no-columns", lambda: bi.TabularMDP(_cycle(), np.ones((S, 0))),
     [r"features", r"F >= 1", r"\(4, 0\)"]),
    ("feature-names-duplicate", lambda: _mdp(feature_names=["speed", "speed"]),
     [r"feature_names", r"'speed'", r"more than once"]),
    ("feature-names-count", lambda: _mdp(feature_names=["a", "b", "c"]),
     [r"feature_names", r"3", r"2"]),
    # --- discount and horizon ----------------------------------------------------------------
    ("discount-1-infinite", lambda: _mdp(discount=1.0), [r"discount", r"\[0, 1\)", r"1\.0"]),
    ("discount-negative", lambda: _mdp(discount=-0.1), [r"discount", r"-0\.1"]),
    ("discount-above-1-finite", lambda: _mdp(discount=1.01, horizon=4),
     [r"discount", r"\[0, 1\]", r"1\.01"]),
    ("discount-nan", lambda: _mdp(discount=np.nan), [r"discount", r"nan"]),
    ("horizon-0", lambda: _mdp(horizon=0), [r"horizon", r"positive integer", r"0"]),
    ("horizon-negative", lambda: _mdp(horizon=-3), [r"horizon", r"-3"]),
    ("horizon-fraction", lambda: _mdp(horizon=2.5), [r"horizon", r"2\.5"]),
    ("horizon-bool", lambda: _mdp(horizon=True), [r"horizon", r"True"]),
    # --- start distribution ------------------------------------------------------------------
    ("start-sum", lambda: _mdp(start=[0.5, 0.5, 0.1, 0.0]), [r"start", r"1\.1"]),
    ("start-negative", lambda: _mdp(start=[1.5, -0.5, 0.0, 0.0]),
     [r"start", r"entry 1", r"-0\.5"]),
    # --- demonstrations (construction) -------------------------------------------------------
    ("demos-empty", lambda: _demos([], []), [r"demonstrations", r"empty"]),
    ("demos-empty-direct", lambda: bi.Demonstrations([]), [r"demonstrations", r"empty"]),
    ("demos-T-plus-2-states", lambda: _demos([[0, 1], [0, 1, 2, 3]], [[0], [0, 0]]),
     [r"episode 1", r"2 actions", r"4 states"]),
    ("demos-no-actions", lambda: _demos([[0]], [[]]), [r"episode 0", r"no actions"]),
    ("demos-list-counts", lambda: _demos([[0, 1]], [[0], [0]]),
     [r"1 state sequences", r"2 action sequences"]),
    ("demos-state-1.5", lambda: _demos([[0, 1], [0, 1.5]], [[0], [0]]),
     [r"episode 1 states", r"1\.5", r"not an integer"]),
    ("demos-action-0.5", lambda: _demos([[0, 1]], [[0.5]]),
     [r"episode 0 actions", r"0\.5", r"not an integer"]),
    ("demos-state-nan", lambda: _demos([[0, np.nan]], [[0]]),
     [r"episode 0 states", r"nan", r"not an integer"]),
    ("demos-2d", lambda: _demos([[[0, 1]]], [[0]]), [r"episode 0 states", r"1-D"]),
    # --- demonstrations against a model (Demonstrations.check, run by the likelihood) --------
    ("demos-state-out-of-range",
     lambda: bi.BoltzmannLikelihood(_mdp(), _demos([[0, 1, 4]], [[0, 0]])),
     [r"episode 0 state 2", r"is 4", r"0\.\.3"]),
    ("demos-state-negative",
     lambda: bi.BoltzmannLikelihood(_mdp(), _demos([[0, 1], [-1, 0]], [[0], [0]])),
     [r"episode 1 state 0", r"-1"]),
    ("demos-action-out-of-range",
     lambda: bi.BoltzmannLikelihood(_mdp(), _demos([[0, 1, 2]], [[0, 2]])),
     [r"episode 0 action 1", r"is 2", r"0\.\.1"]),
    # (s=2, a=0) goes to 3 with probability 1; the recorded successor 0 has probability 0.
    ("demos-impossible-step",
     lambda: bi.BoltzmannLikelihood(_mdp(), _demos([[0, 1], [1, 2, 0]], [[0], [0, 0]])),
     [r"episode 1", r"step 1", r"probability 0", r"s=2", r"a=0", r"s'=0"]),
    ("demos-longer-than-horizon",
     lambda: bi.BoltzmannLikelihood(_mdp(horizon=2), _demos([[0, 1, 2, 3]], [[0, 0, 0]])),
     [r"episode 0", r"3 steps", r"horizon 2"]),
    # --- evaluation arguments ----------------------------------------------------------------
    ("weights-shape",
     lambda: bi.BoltzmannLikelihood(_mdp(), _demos([[0, 1]], [[0]])).evaluate([1.0]),
     [r"weights", r"\(2,\)", r"\(1,\)"]),
    ("weights-nan",
     lambda: bi.BoltzmannLikelihood(_mdp(), _demos([[0, 1]], [[0]])).evaluate([0.0, np.nan]),
     [r"weights", r"finite", r"nan"]),
    ("rationality-zero",
     lambda: bi.BoltzmannLikelihood(_mdp(), _demos([[0, 1]], [[0]])).evaluate([0.0, 0.0], 0.0),
     [r"rationality", r"positive", r"0\.0"]),
    ("q-model", lambda: bi.BoltzmannLikelihood(_mdp(), _demos([[0, 1]], [[0]]),
                                               q_function="hard"),
     [r"q_function", r"'soft' or 'optimal'", r"'hard'"]),
    ("simulate-beyond-horizon", lambda: bi.simulate(_mdp(horizon=3), [1.0, 0.0], episodes=2,
                                                    length=4),
     [r"simulate", r"length 4", r"horizon 3"]),
]


def test_input_error_is_a_value_error():
    assert issubclass(InputError, ValueError)


@pytest.mark.parametrize(("thunk", "patterns"), [pytest.param(t, p, id=i) for i, t, p in CASES])
def test_bad_input_raises_input_error_naming_what_and_where(thunk, patterns):
    with pytest.raises(InputError) as info:
        thunk()
    message = str(info.value)
    missing = [p for p in patterns if not re.search(p, message)]
    assert not missing, f"message {message!r} lacks {missing}"


def test_valid_edge_inputs_are_accepted_and_stored_unchanged():
    # Discount 1 is allowed once a horizon makes the sum finite.
    mdp = _mdp(discount=1.0, horizon=4)
    assert mdp.discount == 1.0 and mdp.horizon == 4
    # A valid stochastic matrix is stored exactly (no renormalisation, no reordering).
    rng = np.random.default_rng(0)
    p = rng.dirichlet(np.ones(S), size=(S, A))
    p[:, :, -1] = 1.0 - p[:, :, :-1].sum(axis=2)  # rows sum to 1 to rounding
    mdp = bi.TabularMDP(p, FEATS)
    np.testing.assert_array_equal(mdp.transitions.toarray().reshape(S, A, S), p)
    # Integral floats are valid indices (a common result of loading from text files).
    demos = _demos([np.array([0.0, 1.0])], [np.array([0.0])])
    np.testing.assert_array_equal(demos.episodes[0][0], [0, 1])
    # An episode of exactly the horizon's length is fine; so is one with T (not T+1) states.
    bi.BoltzmannLikelihood(_mdp(horizon=2), _demos([[0, 1, 2], [0, 1]], [[0, 0], [0, 0]]))


def test_string_state_labels_raise_input_error():
    with pytest.raises(InputError, match=r"episode 0 states"):
        _demos([["a", "b"]], [[0]])


def test_sparse_transitions_given_by_the_caller_are_not_modified():
    base = _sparse(_cycle())
    # Row (0, 0) gets an explicit stored zero at s'=0 beside its 1 at s'=1.
    indptr = np.concatenate([[0], base.indptr[1:] + 1])
    indices = np.concatenate([[0], base.indices])
    data = np.concatenate([[0.0], base.data])
    user = sp.csr_matrix((data, indices, indptr), shape=base.shape)
    before = (user.indptr.copy(), user.indices.copy(), user.data.copy())
    assert user.nnz == S * A + 1
    bi.TabularMDP(user, FEATS)
    np.testing.assert_array_equal(user.indptr, before[0])
    np.testing.assert_array_equal(user.indices, before[1])
    np.testing.assert_array_equal(user.data, before[2])


def test_model_transitions_do_not_alias_the_callers_matrix():
    user = _sparse(_cycle())
    mdp = bi.TabularMDP(user, FEATS)
    user.data[:] = 7.0  # invalid, after validation
    np.testing.assert_array_equal(mdp.transitions.toarray().reshape(S, A, S), _cycle())


def test_model_features_do_not_alias_the_callers_array():
    user = np.ones((S, F))
    mdp = bi.TabularMDP(_cycle(), user)
    user[0, 0] = np.nan
    assert np.all(np.isfinite(mdp.features))
