"""The compiled sparse Newton-Krylov path: kernels vs their numpy twins, and vs scipy.

Outside references: ``scipy.sparse.linalg.spsolve`` (direct solves of ``I - g P_pi`` and its
transpose) and soft value iteration with the MacQueen (1966) / Porteus (1971) span bounds
(``bayesirl.solver.soft``), from which the agreement tolerances are derived.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from bayesirl import SolverError
from bayesirl.bench.problems import random_mdp, slippery_grid
from bayesirl.kernels.krylov import gmres_discounted, gmres_discounted_ref
from bayesirl.kernels.newton import (
    adjoint_csr,
    adjoint_csr_ref,
    soft_newton_csr,
    soft_newton_csr_ref,
)
from bayesirl.kernels.softmax import scale_rows_by_policy
from bayesirl.solver import Preconditioner, soft_newton, soft_value_iteration
from bayesirl.solver.soft import rounding_factor

EPS = np.finfo(float).eps


def _problem(seed, n_states=60, discount=0.95):
    mdp = random_mdp(n_states, n_actions=3, successors=4, n_features=4, discount=discount,
                     seed=seed)
    rng = np.random.default_rng(seed)
    policy = rng.dirichlet(np.ones(3), size=n_states).T.copy()  # action-major (A, S)
    return mdp, policy, rng


def _p_pi(dyn, policy):
    return dyn.policy_matrix_by_action(policy).toarray()


@pytest.mark.parametrize("transpose", [False, True])
@pytest.mark.parametrize("deflate", [False, True])
def test_gmres_kernel_matches_twin_and_spsolve(transpose, deflate):
    mdp, policy, rng = _problem(1)
    dyn = mdp.dynamics
    dat = scale_rows_by_policy(dyn.indptr, dyn.data, policy)
    rhs, x0 = rng.normal(size=60), 0.1 * rng.normal(size=60)
    target = 1e-11 * np.linalg.norm(rhs)
    # The uint32 index copies production passes (one compiled specialisation: ~20 s cold).
    ptr, idx = dyn.kernel_index[:2]
    assert ptr.dtype == np.uint32
    args = (ptr, idx, dat, 3, 0.95, rhs, x0, target, transpose, deflate, 7, 500)
    x, res, used, res0 = gmres_discounted(*args)
    x_ref, res_ref, used_ref, res0_ref = gmres_discounted_ref(*args)
    system = np.eye(60) - 0.95 * (_p_pi(dyn, policy).T if transpose else _p_pi(dyn, policy))
    exact = spla.spsolve(sp.csc_matrix(system), rhs)
    # Residual <= target = 1e-11 |rhs| and ||A^-1|| <= 1/(1-g) = 20 (row-stochastic P_pi;
    # its transpose has the same 1-norm bound): |x - exact| <= 2e-10 |rhs|.
    bound = 20 * target
    assert res <= target and res_ref <= target
    np.testing.assert_allclose(x, exact, rtol=0, atol=bound)
    np.testing.assert_allclose(x_ref, exact, rtol=0, atol=bound)
    assert res0 == pytest.approx(res0_ref, rel=1e-12)
    # Restart length 7 forces several cycles; both count mat-vecs the same way (the twin
    # always re-orthogonalises, which can save an iteration at most).
    assert used > 7 and abs(used - used_ref) <= 1
    # Negative control: the solution of the system with g = 0.96 is far outside the bound.
    other = gmres_discounted(*args[:4], 0.96, *args[5:])[0]
    assert np.abs(other - exact).max() > 100 * bound


def test_gmres_kernel_returns_at_budget_with_true_residual():
    mdp, policy, rng = _problem(2)
    dyn = mdp.dynamics
    dat = scale_rows_by_policy(dyn.indptr, dyn.data, policy)
    rhs = rng.normal(size=60)
    x, res, used, _ = gmres_discounted(*dyn.kernel_index[:2], dat, 3, 0.95, rhs,
                                       np.zeros(60), 1e-30, False, True, 40, 5)
    system = np.eye(60) - 0.95 * _p_pi(dyn, policy)
    assert used == 6  # 5 Arnoldi mat-vecs + the true residual
    assert res == pytest.approx(np.linalg.norm(rhs - system @ x), rel=1e-10)


def _newton_args(mdp, reward, starts, max_iter=50, max_linear=3000, factor_after=0):
    dyn = mdp.dynamics
    ptr, idx, ba_ptr, ba_idx = dyn.kernel_index
    return (ptr, idx, dyn.data, ba_ptr, ba_idx, dyn.by_action.data,
            np.ascontiguousarray(reward.T), mdp.discount, starts, 1e-10, max_iter,
            rounding_factor(dyn.max_row_nnz, dyn.n_actions), max_linear, factor_after)


@pytest.mark.parametrize("discount", [0.9, 0.99, 0.9999])
def test_newton_kernel_matches_twin_and_value_iteration(discount):
    mdp, _, rng = _problem(3, discount=discount)
    reward = 2.0 * mdp.reward(rng.normal(size=4))
    starts = np.stack([np.zeros(60), 0.5 * rng.normal(size=60)])
    starts -= starts.mean(axis=1, keepdims=True)
    out = soft_newton_csr(*_newton_args(mdp, reward, starts))
    ref = soft_newton_csr_ref(*_newton_args(mdp, reward, starts))
    assert out[7] == 0 and ref[7] == 0
    assert out[4] == ref[4] and abs(out[5] - ref[5]) <= out[4]  # same steps, ~same mat-vecs
    # Both are midpoints of MacQueen-Porteus boxes narrower than tol (or the rounding floor,
    # which the returned bound reports): they differ by at most the sum of the widths, and
    # so does value iteration's.
    vi = soft_value_iteration(mdp.dynamics, reward, discount)
    for sol in (out, ref):
        tol = sol[6] + vi.bound + 16 * EPS * np.abs(vi.values).max()
        np.testing.assert_allclose(sol[0], vi.values, rtol=0, atol=tol)
        np.testing.assert_allclose(sol[3], vi.log_policy_by_action, rtol=0, atol=2 * tol)


def test_newton_kernel_status_codes():
    mdp, _, rng = _problem(4, discount=0.95)
    reward = 2.0 * mdp.reward(rng.normal(size=4))
    start = np.zeros((1, 60))
    assert soft_newton_csr(*_newton_args(mdp, reward, start))[4] > 2
    assert soft_newton_csr(*_newton_args(mdp, reward, start, max_iter=2))[7] == 1
    # One Krylov mat-vec cannot meet a forcing term of at most 1e-2 on this system.
    assert soft_newton_csr(*_newton_args(mdp, reward, start, max_linear=1))[7] == 2
    # A slow-mixing grid at 0.999 with a budget of 3 mat-vecs asks for a factorisation.
    grid = slippery_grid(8, discount=0.999, seed=1)
    r = grid.reward(np.random.default_rng(5).normal(size=grid.n_features))
    out = soft_newton_csr(*_newton_args(grid, r, np.zeros((1, 64)), factor_after=3))
    assert out[7] == 3 and out[4] == 1
    assert soft_newton_csr_ref(*_newton_args(grid, r, np.zeros((1, 64)), factor_after=3))[7] == 3


def test_adjoint_kernel_matches_twin_and_spsolve():
    mdp, policy, rng = _problem(5)
    rho, m0 = rng.normal(size=60), rng.normal(size=60)
    dyn = mdp.dynamics
    args = (*dyn.kernel_index[:2], dyn.data, policy, 0.95, rho, m0, 1e-11, 3000, 0)
    m, rel, _, status = adjoint_csr(*args)
    m_ref, rel_ref, _, status_ref = adjoint_csr_ref(*args)
    exact = spla.spsolve(sp.csc_matrix(np.eye(60) - 0.95 * _p_pi(dyn, policy).T), rho)
    assert status == status_ref == 0 and rel <= 1e-11 and rel_ref <= 1e-11
    bound = 20 * 1e-11 * np.linalg.norm(rho)  # ||(I - g P^T)^-1||_1 <= 1/(1-g)
    np.testing.assert_allclose(m, exact, rtol=0, atol=bound)
    np.testing.assert_allclose(m_ref, exact, rtol=0, atol=bound)


def test_soft_newton_takes_the_compiled_path_and_agrees_with_value_iteration():
    """Above the dense limit and without factors, soft_newton is one kernel call; it meets
    value iteration within the two MacQueen-Porteus widths."""
    for mdp in (random_mdp(250, discount=0.95, seed=6), slippery_grid(16, discount=0.99,
                                                                       seed=6)):
        reward = mdp.reward(np.random.default_rng(6).normal(size=mdp.n_features))
        assert mdp.dynamics.dense is None
        vi = soft_value_iteration(mdp.dynamics, reward, mdp.discount)
        for precond in (None, Preconditioner()):
            sol = soft_newton(mdp.dynamics, reward, mdp.discount, precond=precond)
            tol = sol.bound + vi.bound + 16 * EPS * np.abs(vi.values).max()
            np.testing.assert_allclose(sol.values, vi.values, rtol=0, atol=tol)
    with pytest.raises(SolverError, match="Newton"):
        soft_newton(mdp.dynamics, reward, mdp.discount, max_iter=1)


def test_soft_newton_hands_over_to_factors_on_a_slow_grid():
    """At 0.9999 a grid's GMRES steps exceed the budget: the kernel hands over, SuperLU
    factors, and the result is a fixed point: one more backup moves V by a span within the
    returned MacQueen-Porteus width (value iteration would need ~10^5 backups here)."""
    mdp = slippery_grid(30, discount=0.9999, seed=6)
    reward = mdp.reward(np.random.default_rng(6).normal(size=mdp.n_features))
    precond = Preconditioner()
    sol = soft_newton(mdp.dynamics, reward, mdp.discount, precond=precond)
    assert precond.factorisations >= 1
    plain = soft_newton(mdp.dynamics, reward, mdp.discount)  # compiled throughout
    scale = mdp.discount / (1 - mdp.discount)
    for s in (sol, plain):
        q = reward.T + mdp.discount * mdp.dynamics.expected_next_by_action(s.values)
        d = np.log(np.exp(q - q.max(axis=0)).sum(axis=0)) + q.max(axis=0) - s.values
        assert scale * np.ptp(d) <= s.bound + 64 * scale * EPS * np.abs(s.values).max()
    np.testing.assert_allclose(sol.values, plain.values, rtol=0,
                               atol=sol.bound + plain.bound + 1e-9)
