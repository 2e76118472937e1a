"""Numba kernels vs their numpy/scipy twins, and the discounted soft solvers against each other.

Outside references: scipy.sparse's CSR product and fancy indexing (inside the ``*_ref`` twins
and the dense checks below); the MacQueen (1966) / Porteus (1971) bounds for the stopping rule
of both soft solvers (see bayesirl/solver/soft.py), from which the agreement tolerances
are derived.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.special import logsumexp

from bayesirl import SolverError
from bayesirl.kernels import (
    csr_matvec,
    csr_matvec_ref,
    csr_rmatvec,
    csr_rmatvec_ref,
    sample_episodes,
    sample_episodes_ref,
    scale_rows,
    scale_rows_ref,
    select_rows,
    select_rows_ref,
)
from bayesirl.solver import (
    DEFAULT_TOL,
    forward_adjoint,
    policy_iteration,
    soft_backward,
    soft_newton,
    soft_value_iteration,
    solve_discounted,
)

from .conftest import make_random_mdp

EPS = np.finfo(float).eps
# Kernels and twins add the same O(1) terms (at most ~10 per row) possibly in another order:
# the difference is a few eps; 1e-10 is the brief's bound, far above that.
KERNEL_TOL = 1e-10


def _random_csr(seed, n_rows=40, n_cols=25, density=0.15, explicit_zeros=True):
    """Random CSR arrays (int64 indices, sorted) with empty rows and some stored zeros."""
    rng = np.random.default_rng(seed)
    m = sp.random(n_rows, n_cols, density=density, format="csr", random_state=rng)
    m.data = rng.normal(size=m.data.shape)
    keep = np.ones(n_rows)
    keep[rng.choice(n_rows, size=4, replace=False)] = 0.0
    m = sp.diags(keep).tocsr() @ m  # four empty rows
    m.eliminate_zeros()
    m.sort_indices()
    if explicit_zeros and m.nnz:
        m.data[:: max(1, m.nnz // 5)] = 0.0  # stored zeros must be handled like any entry
    return m.indptr.astype(np.int64), m.indices.astype(np.int64), m.data.astype(np.float64)


@pytest.mark.parametrize("seed", range(4))
def test_csr_products_match_scipy(seed):
    indptr, indices, data = _random_csr(seed)
    rng = np.random.default_rng(100 + seed)
    n_rows, n_cols = indptr.shape[0] - 1, 25
    x = rng.normal(size=n_cols)
    np.testing.assert_allclose(csr_matvec(indptr, indices, data, x),
                               csr_matvec_ref(indptr, indices, data, x), rtol=0, atol=KERNEL_TOL)
    y = rng.normal(size=n_rows)
    y[::3] = 0.0  # the scatter kernel skips zero entries of x: must not change the result
    np.testing.assert_allclose(csr_rmatvec(indptr, indices, data, y, n_cols),
                               csr_rmatvec_ref(indptr, indices, data, y, n_cols),
                               rtol=0, atol=KERNEL_TOL)
    # And against a plain dense product (independent of both).
    dense = sp.csr_matrix((data, indices, indptr), shape=(n_rows, n_cols)).toarray()
    np.testing.assert_allclose(csr_rmatvec(indptr, indices, data, y, n_cols), dense.T @ y,
                               rtol=0, atol=KERNEL_TOL)


@pytest.mark.parametrize("seed", range(4))
def test_scale_and_select_rows_match_twins(seed):
    indptr, indices, data = _random_csr(seed)
    rng = np.random.default_rng(200 + seed)
    n_rows = indptr.shape[0] - 1
    weights = rng.random(n_rows)
    np.testing.assert_allclose(scale_rows(indptr, data, weights),
                               scale_rows_ref(indptr, data, weights), rtol=0, atol=KERNEL_TOL)
    # Out of order, repeated and empty rows.
    rows = rng.integers(0, n_rows, size=30).astype(np.int64)
    got, want = select_rows(indptr, indices, data, rows), select_rows_ref(indptr, indices, data,
                                                                          rows)
    np.testing.assert_array_equal(got[0], want[0])
    np.testing.assert_array_equal(got[1], want[1])
    np.testing.assert_allclose(got[2], want[2], rtol=0, atol=KERNEL_TOL)


def test_policy_matrix_built_from_scaled_rows_is_p_pi():
    # P_pi(s, s') = sum_a pi(a|s) P(s'|s,a), computed densely.
    mdp = make_random_mdp(3, n_states=18)
    rng = np.random.default_rng(4)
    pi = rng.dirichlet(np.ones(3), size=18)
    dense = mdp.transitions.toarray().reshape(18, 3, 18)
    np.testing.assert_allclose(mdp.dynamics.policy_matrix(pi).toarray(),
                               np.einsum("sa,sat->st", pi, dense), rtol=0, atol=KERNEL_TOL)
    greedy = rng.integers(0, 3, size=18)
    np.testing.assert_array_equal(mdp.dynamics.greedy_matrix(greedy).toarray(),
                                  dense[np.arange(18), greedy])


@pytest.mark.parametrize("time_dependent", [False, True])
@pytest.mark.parametrize("seed", range(3))
def test_sample_episodes_matches_reference(seed, time_dependent):
    mdp = make_random_mdp(seed, n_states=20)
    dyn = mdp.dynamics
    rng = np.random.default_rng(300 + seed)
    length, n_ep = 12, 25
    tp = length if time_dependent else 1
    policy = rng.dirichlet(np.ones(3), size=(tp, 20))
    policy[:, ::4, 1] = 0.0  # zero-probability actions must never be picked
    policy /= policy.sum(axis=2, keepdims=True)
    starts = rng.integers(0, 20, size=n_ep).astype(np.int64)
    uniforms = rng.random((n_ep, length, 2))
    # Edge draws: exactly 0 and the largest double below 1 (the rounding fallback path).
    uniforms[0, :, :] = 0.0
    uniforms[1, :, :] = np.nextafter(1.0, 0.0)
    args = (dyn.indptr, dyn.indices, dyn.data, np.ascontiguousarray(policy), starts, length,
            uniforms)
    s1, a1 = sample_episodes(*args)
    s2, a2 = sample_episodes_ref(*args)
    np.testing.assert_array_equal(s1, s2)
    np.testing.assert_array_equal(a1, a2)
    np.testing.assert_array_equal(s1[:, 0], starts)
    # Every sampled action and transition has positive probability.
    t_idx = np.minimum(np.arange(length), tp - 1)
    assert np.all(policy[t_idx[None, :], s1[:, :-1], a1] > 0)
    p = mdp.transitions
    assert np.all(np.asarray(p[(s1[:, :-1] * 3 + a1).ravel(), s1[:, 1:].ravel()]) > 0)


def _span_tol(values):
    # The solvers' stopping tolerance: DEFAULT_TOL widened to 64 eps |V| near the float floor.
    return max(DEFAULT_TOL, 64 * EPS * np.abs(values).max())


@pytest.mark.parametrize("discount", [0.5, 0.95, 0.99])
@pytest.mark.parametrize("seed", range(2))
def test_value_iteration_and_newton_share_the_fixed_point(seed, discount):
    """Each solver returns the midpoint of the MacQueen-Porteus box, whose half-width is at most
    tol/2, so |V_vi - V_newton|_inf <= tol; the returned Q obeys the same bound; log pi is
    built from the last pre-shift Q, whose deviation from a constant shift of Q* spans <= tol,
    so log pi is within tol of the truth and the two solvers within 2 tol. Rounding of the
    final sums adds a few eps |V|. All of these are below the brief's 1e-9."""
    mdp = make_random_mdp(50 + seed, n_states=30, state_action=True, n_features=4,
                          discount=discount)
    reward = 1.5 * mdp.reward(np.random.default_rng(seed).normal(size=4))
    vi = soft_value_iteration(mdp.dynamics, reward, discount)
    nt = soft_newton(mdp.dynamics, reward, discount)
    tol = _span_tol(vi.values) + 16 * EPS * np.abs(vi.values).max()
    assert tol <= 1e-9
    np.testing.assert_allclose(vi.values, nt.values, rtol=0, atol=tol)
    np.testing.assert_allclose(vi.q, nt.q, rtol=0, atol=tol)
    np.testing.assert_allclose(vi.log_policy, nt.log_policy, rtol=0, atol=2 * tol)
    np.testing.assert_allclose(vi.policy.sum(axis=1), 1.0, rtol=0, atol=1e-12)
    # Both are fixed points: V = logsumexp(Q) and Q = r + g P V, to the same tolerance.
    for sol in (vi, nt):
        np.testing.assert_allclose(logsumexp(sol.q, axis=1), sol.values, rtol=0, atol=tol)
        backed = reward + discount * mdp.dynamics.expected_next(sol.values)
        np.testing.assert_allclose(backed, sol.q, rtol=0, atol=tol)
    # Warm start from either solution stops on the first backup, for both methods.
    for values0 in (vi.values, nt.values):
        assert soft_value_iteration(mdp.dynamics, reward, discount, values0).iterations == 1
        assert soft_newton(mdp.dynamics, reward, discount, values0).iterations == 1


def test_solvers_that_cannot_converge_raise():
    mdp = make_random_mdp(60, n_states=30, state_action=True, n_features=4, discount=0.95)
    reward = 2.0 * mdp.reward(np.random.default_rng(1).normal(size=4))
    dyn, g = mdp.dynamics, mdp.discount
    # Each method first shown to need more than 2 iterations from a cold start.
    assert soft_value_iteration(dyn, reward, g).iterations > 2
    with pytest.raises(SolverError, match="value iteration"):
        soft_value_iteration(dyn, reward, g, max_iter=2)
    assert soft_newton(dyn, reward, g).iterations > 2
    with pytest.raises(SolverError, match="Newton"):
        soft_newton(dyn, reward, g, max_iter=2)
    assert policy_iteration(dyn, reward, g).iterations > 2
    with pytest.raises(SolverError, match="policy iteration"):
        policy_iteration(dyn, reward, g, max_iter=2)
    # A Krylov solve asked for a residual below rounding cannot get there.
    p_pi = dyn.policy_matrix(np.full((30, 3), 1.0 / 3.0))
    with pytest.raises(SolverError, match="GMRES"):
        solve_discounted(p_pi, 0.99, np.ones(30), rtol=1e-30, maxiter=2)


def test_finite_horizon_recursions_match_dense():
    """soft_backward and forward_adjoint vs dense numpy written from their definitions."""
    h, n_s = 5, 16
    mdp = make_random_mdp(70, n_states=n_s, state_action=True, n_features=4, discount=1.0,
                          horizon=h)
    rng = np.random.default_rng(2)
    reward = mdp.reward(rng.normal(size=4))
    dense = mdp.transitions.toarray().reshape(n_s, 3, n_s)
    sol = soft_backward(mdp.dynamics, reward, 0.9, h)
    v = np.zeros(n_s)
    assert np.all(sol.values[h] == 0.0)
    for t in range(h - 1, -1, -1):
        q = reward + 0.9 * dense @ v
        v = logsumexp(q, axis=1)
        np.testing.assert_allclose(sol.q[t], q, rtol=0, atol=1e-12)
        np.testing.assert_allclose(sol.values[t], v, rtol=0, atol=1e-12)
    sources = rng.normal(size=(h, n_s))
    m = forward_adjoint(mdp.dynamics, sol.policy, 0.9, sources)
    want = sources[0]
    np.testing.assert_allclose(m[0], want, rtol=0, atol=1e-12)
    for t in range(1, h):
        p_pi = np.einsum("sa,sat->st", sol.policy[t - 1], dense)
        want = sources[t] + 0.9 * p_pi.T @ want
        np.testing.assert_allclose(m[t], want, rtol=0, atol=1e-12)
