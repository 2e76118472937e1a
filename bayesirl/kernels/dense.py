"""Dense soft-Bellman kernels for small MDPs (tens to a few hundred states).

There, sparse-matrix bookkeeping and Krylov iterations cost far more than the arithmetic; a
compiled Newton iteration with dense LU solves does a whole evaluation in microseconds.
Transitions are a dense ``(A, S, S)`` array ``P[a, s, s']``; arrays are action-major.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from bayesirl.kernels.softmax import soft_max_actions


@njit(cache=True)
def _policy_matrix(p, policy):  # pragma: no cover - compiled
    n_a, n_s, _ = p.shape
    m = np.zeros((n_s, n_s))
    for a in range(n_a):
        for s in range(n_s):
            w = policy[a, s]
            if w != 0.0:
                for t in range(n_s):
                    m[s, t] += w * p[a, s, t]
    return m


@njit(cache=True)
def _backup(p, reward, discount, values):  # pragma: no cover - compiled
    n_a, n_s, _ = p.shape
    q = np.empty((n_a, n_s))
    for a in range(n_a):
        q[a] = reward[a] + discount * (p[a] @ values)
    v_new, policy = soft_max_actions(q)
    return q, v_new, policy


@njit(cache=True)
def soft_newton_dense(p, reward, discount, values, tol, max_iter, floor_factor):  # pragma: no cover
    """Soft policy iteration with exact dense Newton steps and the span stopping rule.

    Works on relative values: the start and every iterate are re-centred (the policy ignores
    constants), so rounding stays at the scale of the value differences, not of
    ``|r| / (1 - g)`` or of an offset left in a warm start. Stops when the span of the
    residual is below ``tol / scale`` or below ``floor_factor * eps * M`` (the rounding bound
    of one backup, see :func:`bayesirl.solver.soft.rounding_factor`).

    Returns ``(values, q, policy, log_policy, iterations, bound)`` with the MacQueen-Porteus
    midpoint correction (see :mod:`bayesirl.solver.soft`) and ``bound`` the width of the box
    that holds the fixed point; ``iterations = -1`` when not converged in ``max_iter`` steps.
    """
    n_s = values.shape[0]
    scale = discount / (1.0 - discount) if discount > 0 else 0.0
    eye = np.eye(n_s)
    values = values - values.mean()
    for it in range(1, max_iter + 1):
        q, v_new, policy = _backup(p, reward, discount, values)
        residual = v_new - values
        hi, lo = residual.max(), residual.min()
        size = max(np.abs(q).max(), np.abs(v_new).max(), np.abs(values).max())
        floor = floor_factor * 2.220446049250313e-16 * size
        if scale * (hi - lo) <= max(tol, scale * floor):
            mid = 0.5 * (hi + lo)
            shift = scale * mid
            log_policy = q - v_new
            bound = scale * (hi - lo)
            return v_new + shift, q + discount * (mid + shift), policy, log_policy, it, bound
        centred = residual - residual.mean()
        step = np.linalg.solve(eye - discount * _policy_matrix(p, policy), centred)
        values = values + step
        values = values - values.mean()
    empty = np.empty((0, 0))
    return values, empty, empty, empty, -1, np.inf


@njit(cache=True)
def adjoint_dense(p, policy, discount, rho):  # pragma: no cover - compiled
    """Solve ``(I - g P_pi^T) m = rho`` densely."""
    n_s = rho.shape[0]
    m = _policy_matrix(p, policy)
    return np.linalg.solve(np.eye(n_s) - discount * m.T, rho)


def soft_newton_dense_ref(p, reward, discount, values, tol, max_iter, floor_factor):
    """Reference for :func:`soft_newton_dense`: numpy, same algorithm, uncompiled."""
    n_s = values.shape[0]
    scale = discount / (1.0 - discount) if discount > 0 else 0.0
    values = values - values.mean()
    for it in range(1, max_iter + 1):
        q = reward + discount * np.einsum("ast,t->as", p, values)
        top = q.max(axis=0)
        v_new = top + np.log(np.exp(q - top).sum(axis=0))
        policy = np.exp(q - v_new)
        residual = v_new - values
        hi, lo = residual.max(), residual.min()
        size = max(np.abs(q).max(), np.abs(v_new).max(), np.abs(values).max())
        floor = floor_factor * np.finfo(float).eps * size
        if scale * (hi - lo) <= max(tol, scale * floor):
            mid = 0.5 * (hi + lo)
            shift = scale * mid
            bound = scale * (hi - lo)
            return v_new + shift, q + discount * (mid + shift), policy, q - v_new, it, bound
        p_pi = np.einsum("as,ast->st", policy, p)
        step = np.linalg.solve(np.eye(n_s) - discount * p_pi, residual - residual.mean())
        values = values + step
        values = values - values.mean()
    return values, None, None, None, -1, np.inf


def adjoint_dense_ref(p, policy, discount, rho):
    """Reference for :func:`adjoint_dense` (numpy)."""
    p_pi = np.einsum("as,ast->st", policy, p)
    return np.linalg.solve(np.eye(rho.shape[0]) - discount * p_pi.T, rho)
