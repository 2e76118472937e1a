"""Compiled restarted GMRES for ``(I - g P_pi) x = b`` and its transpose on plain CSR arrays.

``P_pi`` is never built as an object: its row ``s`` is rows ``s*A .. s*A + A - 1`` of the
state-major transition CSR, with ``data`` already scaled by the policy, so the kernels take
the transition ``indptr`` and read it with stride ``A``. The algorithm is that of
``bayesirl.solver.krylov`` (classical Gram-Schmidt with a second pass on heavy cancellation,
Givens rotations, a true-residual check at each restart) plus the optional rank-one
deflation of ``bayesirl.solver.linear._deflated``; the Gram-Schmidt products go through BLAS
(``@``) like the numpy version, so both do the same arithmetic up to summation order.
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse as sp
from numba import njit


@njit(cache=True)
def _operator(ptr, idx, dat, stride, discount, transpose, lift, v, z, out):  # pragma: no cover
    """``out = (I - g M) R v`` (``M^T`` with ``transpose``), ``R v = v + lift * mean(v)``."""
    n = v.shape[0]
    shift = lift * v.mean() if lift != 0.0 else 0.0
    for i in range(n):
        z[i] = v[i] + shift
    if transpose:
        out[:] = 0.0
        for i in range(n):
            zi = z[i]
            for k in range(ptr[i * stride], ptr[(i + 1) * stride]):
                out[idx[k]] += dat[k] * zi
        for i in range(n):
            out[i] = z[i] - discount * out[i]
    else:
        for i in range(n):
            acc = 0.0
            for k in range(ptr[i * stride], ptr[(i + 1) * stride]):
                acc += dat[k] * z[idx[k]]
            out[i] = z[i] - discount * acc


@njit(cache=True)
def _orthogonalise(basis, j, w, col):  # pragma: no cover - compiled
    """Classical Gram-Schmidt of ``w`` against ``basis[:j+1]``; a second pass when the norm
    drops below 0.7 of its start (Daniel, Gragg, Kaufman & Stewart 1976). Returns |w|."""
    before = np.linalg.norm(w)
    b = basis[: j + 1]
    h = b @ w
    w -= b.T @ h
    norm_w = np.linalg.norm(w)
    if norm_w < 0.7 * before:
        h2 = b @ w
        w -= b.T @ h2
        h += h2
        norm_w = np.linalg.norm(w)
    col[: j + 1] = h
    col[j + 1] = norm_w
    return norm_w


@njit(cache=True)
def _rotate(col, cs, sn, g, j):  # pragma: no cover - compiled
    """Apply the earlier Givens rotations to column ``j``, make its own, update ``g``."""
    for i in range(j):
        t = cs[i] * col[i] + sn[i] * col[i + 1]
        col[i + 1] = -sn[i] * col[i] + cs[i] * col[i + 1]
        col[i] = t
    r = math.hypot(col[j], col[j + 1])
    if r == 0.0:
        cs[j], sn[j] = 1.0, 0.0
    else:
        cs[j], sn[j] = col[j] / r, col[j + 1] / r
    col[j], col[j + 1] = r, 0.0
    g[j + 1] = -sn[j] * g[j]
    g[j] = cs[j] * g[j]


@njit(cache=True)
def _cycle(op, basis, hess, r, beta, target, m, x):  # pragma: no cover - compiled
    """One GMRES cycle of at most ``m`` mat-vecs from residual ``r``; updates ``x``."""
    ptr, idx, dat, stride, discount, transpose, lift = op
    n = r.shape[0]
    cs, sn, g = np.zeros(m), np.zeros(m), np.zeros(m + 1)
    col, w, z = np.zeros(m + 1), np.empty(n), np.empty(n)
    g[0] = beta
    basis[0] = r / beta
    k = 0
    for j in range(m):
        _operator(ptr, idx, dat, stride, discount, transpose, lift, basis[j], z, w)
        col[:] = 0.0
        norm_w = _orthogonalise(basis, j, w, col)
        _rotate(col, cs, sn, g, j)
        hess[: m + 1, j] = col
        k = j + 1
        if abs(g[j + 1]) <= target or norm_w == 0.0:
            break
        basis[j + 1] = w / norm_w
    y = np.zeros(k)
    for i in range(k - 1, -1, -1):  # back substitution with the triangular Hessenberg part
        acc = g[i]
        for c in range(i + 1, k):
            acc -= hess[i, c] * y[c]
        y[i] = acc / hess[i, i]
    if k:
        x += basis[:k].T @ y
    return k


@njit(cache=True)
def gmres_discounted(ptr, idx, dat, stride, discount, rhs, x0, target, transpose, deflate,
                     restart, maxiter):  # pragma: no cover - compiled
    """Solve ``(I - g P_pi) x = rhs`` (``P_pi^T`` with ``transpose``) until
    ``||rhs - A x||_2 <= target`` or ``maxiter`` mat-vecs.

    ``deflate`` (non-transposed only) moves the eigenvalue ``1 - g`` to 1 with the right
    preconditioner ``R = I + g/(1-g) 1 1^T / n`` (``bayesirl.solver.linear._deflated``).
    Returns ``(x, true residual norm, mat-vecs used, initial residual norm)``.
    """
    n = rhs.shape[0]
    lift = discount / (1.0 - discount) if deflate and not transpose and discount < 1.0 else 0.0
    op = (ptr, idx, dat, stride, discount, transpose, lift)
    x = x0.copy()
    at_zero = not np.any(x)
    if lift != 0.0 and not at_zero:
        x -= (lift / (1.0 + lift)) * x.mean()  # y0 = R^{-1} x0
    r, z = rhs.copy(), np.empty(n)
    used = 0
    if not at_zero:
        _operator(ptr, idx, dat, stride, discount, transpose, lift, x, z, r)
        r = rhs - r
        used = 1
    beta = np.linalg.norm(r)
    initial = beta
    basis = np.empty((restart + 1, n))
    hess = np.zeros((restart + 1, restart))
    while beta > target and used < maxiter:
        m = min(restart, maxiter - used)
        used += _cycle(op, basis, hess, r, beta, target, m, x)
        _operator(ptr, idx, dat, stride, discount, transpose, lift, x, z, r)
        r = rhs - r
        used += 1
        beta = np.linalg.norm(r)
    if lift != 0.0:
        x += lift * x.mean()  # x = R y
    return x, beta, used, initial


def gmres_discounted_ref(ptr, idx, dat, stride, discount, rhs, x0, target, transpose, deflate,
                         restart, maxiter):
    """Reference for :func:`gmres_discounted`: numpy and scipy, the same algorithm."""
    n = rhs.shape[0]
    m_pi = sp.csr_matrix((dat, idx, ptr[::stride]), shape=(n, n))
    op_m = m_pi.T if transpose else m_pi
    lift = discount / (1.0 - discount) if deflate and not transpose and discount < 1.0 else 0.0

    def matvec(v):
        z = v + lift * v.mean() if lift else v
        return z - discount * (op_m @ z)

    x = np.array(x0, dtype=float)
    at_zero = not np.any(x)
    if lift and not at_zero:
        x -= (lift / (1.0 + lift)) * x.mean()
    r, used = (rhs.copy(), 0) if at_zero else (rhs - matvec(x), 1)
    beta = initial = float(np.linalg.norm(r))
    while beta > target and used < maxiter:
        m = min(restart, maxiter - used)
        basis, hess = np.zeros((m + 1, n)), np.zeros((m + 1, m))
        basis[0], g, k = r / beta, np.r_[beta, np.zeros(m)], 0
        for j in range(m):
            w = matvec(basis[j])
            for _ in range(2):  # classical Gram-Schmidt, twice: same span as one + re-pass
                h = basis[: j + 1] @ w
                w = w - basis[: j + 1].T @ h
                hess[: j + 1, j] += h
            hess[j + 1, j] = np.linalg.norm(w)
            k = j + 1
            q, _ = np.linalg.qr(hess[: k + 1, :k], mode="complete")
            if abs((q.T @ g[: k + 1])[k]) <= target or hess[j + 1, j] == 0.0:
                break
            basis[j + 1] = w / hess[j + 1, j]
        y = np.linalg.lstsq(hess[: k + 1, :k], g[: k + 1], rcond=None)[0]
        x += basis[:k].T @ y
        r = rhs - matvec(x)
        used += k + 1
        beta = float(np.linalg.norm(r))
    if lift:
        x += lift * x.mean()
    return x, beta, used, initial
