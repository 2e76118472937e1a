"""Compiled sparse soft Newton (soft policy iteration with GMRES steps) and its adjoint solve.

The whole value solve of ``bayesirl.solver.soft.soft_newton`` (choice of start, backups, span
stopping rule with its rounding floor, forcing terms, GMRES steps with deflation) and the
adjoint solve ``(I - g P_pi^T) m = rho`` run here without returning to Python, on plain CSR
arrays: ``ptr, idx, dat`` the state-major transitions (row ``s*A + a``), ``ba_*`` the same
rows in action-major order (row ``a*S + s``). Arrays are action-major ``(A, S)``.

Status codes returned: 0 converged; 1 Newton not converged in ``max_iter`` steps; 2 a linear
solve missed its tolerance; 3 a linear solve would be cheaper with a factorisation (only
when ``factor_after > 0``: GMRES spent that many mat-vecs and its observed rate does not
promise convergence within twice as many more) - the caller factors and continues.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from bayesirl.kernels.krylov import gmres_discounted, gmres_discounted_ref
from bayesirl.kernels.softmax import (
    scale_rows_by_policy,
    scale_rows_by_policy_ref,
    soft_max_actions,
    soft_max_actions_ref,
)

_EPS = 2.220446049250313e-16
RESTART = 40  # GMRES restart length (as bayesirl.solver.krylov)


@njit(cache=True)
def _backup(ba_ptr, ba_idx, ba_dat, reward_am, discount, values):  # pragma: no cover
    n_a, n_s = reward_am.shape
    q = np.empty((n_a, n_s))
    for a in range(n_a):
        for s in range(n_s):
            row = a * n_s + s
            acc = 0.0
            for k in range(ba_ptr[row], ba_ptr[row + 1]):
                acc += ba_dat[k] * values[ba_idx[k]]
            q[a, s] = reward_am[a, s] + discount * acc
    v_new, policy = soft_max_actions(q)
    return q, v_new, policy


@njit(cache=True)
def _finishes_soon(res0, res, target, used, budget):  # pragma: no cover - compiled
    """Extrapolate GMRES's rate: done within 2 more budgets? (solver.linear._finishes_soon)"""
    if not (res0 > res > 0.0) or used == 0:
        return False
    rate = np.log(res0 / res) / used
    return np.log(res / target) / rate <= 2 * budget


@njit(cache=True)
def _linear(ptr, idx, dat, n_a, discount, rhs, x0, rtol, transpose, max_linear,
            factor_after):  # pragma: no cover - compiled
    """GMRES to ``rtol * |rhs|``; ``(x, relative residual, mat-vecs, status)``."""
    b_norm = np.linalg.norm(rhs)
    if b_norm == 0.0:
        return np.zeros(rhs.shape[0]), 0.0, 0, 0
    target = rtol * b_norm
    deflate = not transpose
    budget = factor_after if factor_after > 0 else max_linear
    x, res, used, res0 = gmres_discounted(ptr, idx, dat, n_a, discount, rhs, x0, target,
                                          transpose, deflate, RESTART, budget)
    if res > target and factor_after > 0:
        if not _finishes_soon(res0, res, target, used, factor_after):
            return x, res / b_norm, used, 3
        x, res, more, _ = gmres_discounted(ptr, idx, dat, n_a, discount, rhs, x, target,
                                           transpose, deflate, RESTART, max_linear)
        used += more
    status = 0 if np.isfinite(res) and res <= target else 2
    return x, res / b_norm, used, status


@njit(cache=True)
def _pick(ba_ptr, ba_idx, ba_dat, reward_am, discount, starts):  # pragma: no cover
    """The start with the narrowest residual span (ties: the earlier one) and its backup."""
    best, best_span = 0, np.inf
    q, v_new, policy = _backup(ba_ptr, ba_idx, ba_dat, reward_am, discount, starts[0])
    for i in range(starts.shape[0]):
        qi, vi, pi = _backup(ba_ptr, ba_idx, ba_dat, reward_am, discount, starts[i])
        d = vi - starts[i]
        span = d.max() - d.min()
        if span < best_span:
            best, best_span, q, v_new, policy = i, span, qi, vi, pi
    return starts[best].copy(), q, v_new, policy


@njit(cache=True)
def soft_newton_csr(ptr, idx, dat, ba_ptr, ba_idx, ba_dat, reward_am, discount, starts, tol,
                    max_iter, floor_factor, max_linear, factor_after):  # pragma: no cover
    """Soft Newton from the best of ``starts`` (rows, already re-centred).

    Returns ``(values, q, policy, log_policy, iterations, mat-vecs, bound, status, detail)``
    as ``bayesirl.solver.soft.soft_newton`` (the MacQueen-Porteus midpoint); on status 1
    ``detail`` is the last span, on 2 the linear solve's relative residual; on 3 ``values``
    and ``policy`` are the current iterate and its greedy soft policy.
    """
    n_a, n_s = reward_am.shape
    scale = discount / (1.0 - discount) if discount > 0 else 0.0
    values, q, v_new, policy = _pick(ba_ptr, ba_idx, ba_dat, reward_am, discount, starts)
    matvecs = starts.shape[0] - 1
    span = np.inf
    for it in range(1, max_iter + 1):
        if it > 1:
            q, v_new, policy = _backup(ba_ptr, ba_idx, ba_dat, reward_am, discount, values)
        matvecs += 1
        residual = v_new - values
        hi, lo = residual.max(), residual.min()
        span = hi - lo
        size = max(np.abs(q).max(), np.abs(v_new).max(), np.abs(values).max())
        floor = max(tol, scale * floor_factor * _EPS * size)
        if scale * span <= floor:
            mid = 0.5 * (hi + lo)
            shift = scale * mid
            return (v_new + shift, q + discount * (mid + shift), policy, q - v_new, it,
                    matvecs, scale * span, 0, 0.0)
        centred = residual - residual.mean()
        forcing = min(1e-2, max(1e-12, 0.1 * floor / (scale * span),
                                span / (1.0 + np.abs(v_new).max())))
        dat_pi = scale_rows_by_policy(ptr, dat, policy)
        step, rel, used, status = _linear(ptr, idx, dat_pi, n_a, discount, centred,
                                          np.zeros(n_s), forcing, False, max_linear,
                                          factor_after)
        matvecs += used
        if status != 0:
            return values, q, policy, q - v_new, it, matvecs, np.inf, status, rel
        values = values + step
        values -= values.mean()
    return values, q, policy, q - v_new, max_iter, matvecs, np.inf, 1, span


@njit(cache=True)
def adjoint_csr(ptr, idx, dat, policy, discount, rho, m0, rtol, max_linear,
                factor_after):  # pragma: no cover - compiled
    """``(I - g P_pi^T) m = rho`` from ``m0`` by GMRES: ``(m, relative residual, mat-vecs,
    status)``, status as in the module docstring."""
    dat_pi = scale_rows_by_policy(ptr, dat, policy)
    return _linear(ptr, idx, dat_pi, policy.shape[0], discount, rho, m0, rtol, True,
                   max_linear, factor_after)


def _linear_ref(ptr, idx, dat, n_a, discount, rhs, x0, rtol, transpose, max_linear,
                factor_after):
    b_norm = float(np.linalg.norm(rhs))
    if b_norm == 0.0:
        return np.zeros(rhs.shape[0]), 0.0, 0, 0
    target = rtol * b_norm
    budget = factor_after if factor_after > 0 else max_linear
    x, res, used, res0 = gmres_discounted_ref(ptr, idx, dat, n_a, discount, rhs, x0, target,
                                              transpose, not transpose, RESTART, budget)
    if res > target and factor_after > 0:
        rate = np.log(res0 / res) / used if res0 > res > 0 and used else 0.0
        if not (rate > 0 and np.log(res / target) / rate <= 2 * factor_after):
            return x, res / b_norm, used, 3
        x, res, more, _ = gmres_discounted_ref(ptr, idx, dat, n_a, discount, rhs, x, target,
                                               transpose, not transpose, RESTART, max_linear)
        used += more
    return x, res / b_norm, used, 0 if np.isfinite(res) and res <= target else 2


def soft_newton_csr_ref(ptr, idx, dat, ba_ptr, ba_idx, ba_dat, reward_am, discount, starts,
                        tol, max_iter, floor_factor, max_linear, factor_after):
    """Reference for :func:`soft_newton_csr` (numpy and scipy, the same algorithm)."""
    n_a, n_s = reward_am.shape
    ba = np.zeros((n_a * n_s, n_s))
    np.add.at(ba, (np.repeat(np.arange(n_a * n_s), np.diff(ba_ptr)), ba_idx), ba_dat)
    scale = discount / (1.0 - discount) if discount > 0 else 0.0

    def backup(v):
        q = reward_am + discount * (ba @ v).reshape(n_a, n_s)
        return (q, *soft_max_actions_ref(q))

    backups = [backup(v) for v in starts]
    best = int(np.argmin([np.ptp(b[1] - v) for b, v in zip(backups, starts, strict=True)]))
    values, (q, v_new, policy) = starts[best].copy(), backups[best]
    matvecs, span = len(starts) - 1, np.inf
    for it in range(1, max_iter + 1):
        if it > 1:
            q, v_new, policy = backup(values)
        matvecs += 1
        residual = v_new - values
        hi, lo = residual.max(), residual.min()
        span = hi - lo
        size = max(np.abs(q).max(), np.abs(v_new).max(), np.abs(values).max())
        floor = max(tol, scale * floor_factor * _EPS * size)
        if scale * span <= floor:
            mid = 0.5 * (hi + lo)
            return (v_new + scale * mid, q + discount * (mid + scale * mid), policy, q - v_new,
                    it, matvecs, scale * span, 0, 0.0)
        forcing = min(1e-2, max(1e-12, 0.1 * floor / (scale * span),
                                span / (1.0 + np.abs(v_new).max())))
        step, rel, used, status = _linear_ref(
            ptr, idx, scale_rows_by_policy_ref(ptr, dat, policy), n_a, discount,
            residual - residual.mean(), np.zeros(n_s), forcing, False, max_linear, factor_after)
        matvecs += used
        if status != 0:
            return values, q, policy, q - v_new, it, matvecs, np.inf, status, rel
        values = values + step
        values -= values.mean()
    return values, q, policy, q - v_new, max_iter, matvecs, np.inf, 1, span


def adjoint_csr_ref(ptr, idx, dat, policy, discount, rho, m0, rtol, max_linear, factor_after):
    """Reference for :func:`adjoint_csr` (numpy and scipy)."""
    return _linear_ref(ptr, idx, scale_rows_by_policy_ref(ptr, dat, policy), policy.shape[0],
                       discount, rho, m0, rtol, True, max_linear, factor_after)
