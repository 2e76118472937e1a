"""Designer kernels against their numpy twins (the convention of tests/engine/test_kernels.py).

Outside reference: numpy's reductions and fancy indexing inside the ``*_ref`` twins, and
scipy.special.logsumexp for the log-policy. Agreement to 1e-10 is a floating-point bound
(sums of at most a few hundred terms of size ~10).
"""

from __future__ import annotations

import numpy as np
from scipy.special import logsumexp

from bayesirl.design.kernels import (
    flat_steps,
    log_policy_from_q,
    log_policy_from_q_ref,
    nested_accumulate,
    nested_accumulate_ref,
    query_moments,
    query_moments_ref,
    trajectory_loglik,
    trajectory_loglik_ref,
)


def _logpol(rng, n, tp, s, a):
    q = rng.normal(scale=3.0, size=(n, tp, s, a))
    return q - logsumexp(q, axis=3, keepdims=True)


def test_log_policy_from_q_matches_reference_and_scipy():
    rng = np.random.default_rng(0)
    q = rng.normal(scale=50.0, size=(4, 30))  # large entries: the stable form matters
    out = log_policy_from_q(q)
    np.testing.assert_allclose(out, log_policy_from_q_ref(q), atol=1e-10)
    np.testing.assert_allclose(out, q.T - logsumexp(q.T, axis=1, keepdims=True), atol=1e-10)


def test_trajectory_loglik_matches_reference():
    rng = np.random.default_rng(1)
    lp = _logpol(rng, 5, 3, 7, 4)
    states = rng.integers(0, 7, size=(6, 5))
    actions = rng.integers(0, 4, size=(6, 4))
    out = trajectory_loglik(lp, states, actions)
    np.testing.assert_allclose(out, trajectory_loglik_ref(lp, states, actions), atol=1e-10)
    # One entry by hand: steps beyond the horizon slices reuse the last one.
    want = sum(lp[2, min(t, 2), states[4, t], actions[4, t]] for t in range(4))
    assert abs(out[2, 4] - want) < 1e-10


def test_nested_accumulate_matches_reference_over_chunks():
    rng = np.random.default_rng(2)
    n, c, j, length = 9, 3, 4, 5
    lp = _logpol(rng, n, 1, 6, 3)
    states = rng.integers(0, 6, size=(c, j, length + 1))
    actions = rng.integers(0, 3, size=(c, j, length))
    prev = rng.normal(size=(j, n))
    outer = np.array([0, 4, 4, 8])
    g = rng.normal(size=n)
    steps = flat_steps(states, actions, 1, 6, 3)
    flat = lp.reshape(n, -1)
    assert flat[3, steps[1, 2, 4]] == lp[3, 0, states[1, 2, 4], actions[1, 2, 4]]
    accs = []
    for fn in (nested_accumulate, nested_accumulate_ref):
        acc = np.zeros((5, c, j))
        acc[0] = -np.inf
        for m0 in (0, 4, 7):  # uneven chunks
            stop = {0: 4, 4: 7, 7: 9}[m0]
            fn(np.ascontiguousarray(flat[m0:stop].T), m0, steps, prev, outer, g, acc)
        accs.append(acc)
    np.testing.assert_allclose(accs[0], accs[1], rtol=1e-10, atol=1e-12)
    # The merged sums equal a direct log-sum-exp over all draws.
    ll = trajectory_loglik_ref(lp, states.reshape(c * j, -1), actions.reshape(c * j, -1))
    ll = ll.reshape(n, c, j) + prev.T[:, None, :]
    lse = accs[0][0] + np.log(accs[0][1])
    np.testing.assert_allclose(lse, logsumexp(ll, axis=0), atol=1e-10)
    np.testing.assert_allclose(accs[0][4], ll[outer, :, np.arange(j)].T, atol=1e-10)


def test_query_moments_matches_reference():
    rng = np.random.default_rng(3)
    lp = _logpol(rng, 6, 2, 5, 3)
    g = rng.normal(size=6)
    outs = []
    for fn in (query_moments, query_moments_ref):
        acc_p, acc_h = np.zeros((4, 5, 3)), np.zeros((5, 5, 3))
        fn(lp, g, acc_p, acc_h)
        outs.append((acc_p, acc_h))
    np.testing.assert_allclose(outs[0][0], outs[1][0], atol=1e-10)
    np.testing.assert_allclose(outs[0][1], outs[1][1], atol=1e-10)
