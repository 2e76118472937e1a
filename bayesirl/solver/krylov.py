"""Restarted GMRES with optional right preconditioning (numpy, BLAS-2 Gram-Schmidt).

scipy's ``gmres`` spends ~1 ms of Python per iteration at S = 10^4, several times the cost of
the mat-vec itself; this loop keeps the per-iteration overhead to two or four GEMVs
(classical Gram-Schmidt with selective re-orthogonalisation).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np


def _arnoldi_step(basis, j, w):
    before = float(np.linalg.norm(w))
    h = basis[: j + 1] @ w
    w = w - basis[: j + 1].T @ h
    if np.linalg.norm(w) < 0.7 * before:
        # Heavy cancellation: a second pass restores orthogonality (Daniel, Gragg, Kaufman
        # & Stewart 1976 criterion), so classical Gram-Schmidt stays as stable as modified.
        h2 = basis[: j + 1] @ w
        w = w - basis[: j + 1].T @ h2
        h = h + h2
    return h, w


def _givens(h, cs, sn, j):
    for i in range(j):
        t = cs[i] * h[i] + sn[i] * h[i + 1]
        h[i + 1] = -sn[i] * h[i] + cs[i] * h[i + 1]
        h[i] = t
    r = np.hypot(h[j], h[j + 1])
    cs[j], sn[j] = (1.0, 0.0) if r == 0 else (h[j] / r, h[j + 1] / r)
    h[j], h[j + 1] = r, 0.0


def gmres(
    matvec: Callable[[np.ndarray], np.ndarray],
    rhs: np.ndarray,
    x0: np.ndarray,
    target: float,
    precond: Callable[[np.ndarray], np.ndarray] | None = None,
    restart: int = 40,
    maxiter: int = 400,
) -> tuple[np.ndarray, float, int, float]:
    """Solve ``A x = rhs`` until ``||rhs - A x||_2 <= target``.

    Returns ``(x, true residual norm, mat-vecs used, initial residual norm)``; the caller
    decides what a residual above ``target`` means (the budget ``maxiter`` was spent).
    """
    x = x0.copy()
    started_at_zero = not np.any(x)
    r = rhs.copy() if started_at_zero else rhs - matvec(x)
    used = 0 if started_at_zero else 1
    beta = float(np.linalg.norm(r))
    initial = beta
    n = rhs.shape[0]
    while beta > target and used < maxiter:
        m = min(restart, maxiter - used)
        basis = np.empty((m + 1, n))
        dirs = np.empty((m, n)) if precond is not None else basis
        hess = np.zeros((m + 1, m))
        cs, sn = np.zeros(m), np.zeros(m)
        g = np.zeros(m + 1)
        g[0] = beta
        basis[0] = r / beta
        k = 0
        for j in range(m):
            z = basis[j] if precond is None else precond(basis[j])
            if precond is not None:
                dirs[j] = z
            h, w = _arnoldi_step(basis, j, matvec(z))
            used += 1
            norm_w = float(np.linalg.norm(w))
            col = np.zeros(m + 1)
            col[: j + 1], col[j + 1] = h, norm_w
            _givens(col, cs, sn, j)
            hess[:, j] = col
            g[j + 1] = -sn[j] * g[j]
            g[j] = cs[j] * g[j]
            k = j + 1
            if abs(g[j + 1]) <= target or norm_w == 0.0:
                break
            basis[j + 1] = w / norm_w
        y = np.linalg.solve(np.triu(hess[:k, :k]), g[:k]) if k else np.zeros(0)
        x += dirs[:k].T @ y
        r = rhs - matvec(x)
        used += 1
        beta = float(np.linalg.norm(r))
    return x, beta, used, initial
