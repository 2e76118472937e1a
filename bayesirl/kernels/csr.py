"""CSR products and row operations used by every solver.

Each ``@njit`` kernel has a ``*_ref`` twin written with numpy/scipy only; the tests check that
the two agree to 1e-10 on random inputs.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from numba import njit


@njit(cache=True)
def csr_matvec(indptr, indices, data, x):  # pragma: no cover - compiled
    """``y = M @ x`` for a CSR matrix ``M``; one pass over the non-zeros."""
    n = indptr.shape[0] - 1
    y = np.empty(n)
    for i in range(n):
        acc = 0.0
        for k in range(indptr[i], indptr[i + 1]):
            acc += data[k] * x[indices[k]]
        y[i] = acc
    return y


def csr_matvec_ref(indptr, indices, data, x):
    """Reference for :func:`csr_matvec` (scipy)."""
    n = indptr.shape[0] - 1
    m = sp.csr_matrix((data, indices, indptr), shape=(n, x.shape[0]))
    return m @ x


@njit(cache=True)
def csr_rmatvec(indptr, indices, data, x, n_cols):  # pragma: no cover - compiled
    """``y = M.T @ x`` for a CSR matrix ``M`` with ``n_cols`` columns (a scatter pass)."""
    y = np.zeros(n_cols)
    n = indptr.shape[0] - 1
    for i in range(n):
        xi = x[i]
        if xi != 0.0:
            for k in range(indptr[i], indptr[i + 1]):
                y[indices[k]] += data[k] * xi
    return y


def csr_rmatvec_ref(indptr, indices, data, x, n_cols):
    """Reference for :func:`csr_rmatvec` (scipy)."""
    n = indptr.shape[0] - 1
    m = sp.csr_matrix((data, indices, indptr), shape=(n, n_cols))
    return m.T @ x


@njit(cache=True)
def scale_rows(indptr, data, weights):  # pragma: no cover - compiled
    """Return a copy of ``data`` with row ``i`` multiplied by ``weights[i]``.

    With the state-major layout (row ``s*A + a``) and ``weights = policy.ravel()``, the result
    together with ``indptr[::A]`` is the CSR matrix of ``P_pi(s, s') = sum_a pi(a|s) P(s'|s,a)``:
    the rows of one state are contiguous, so no merging is needed.
    """
    out = np.empty_like(data)
    n = indptr.shape[0] - 1
    for i in range(n):
        w = weights[i]
        for k in range(indptr[i], indptr[i + 1]):
            out[k] = data[k] * w
    return out


def scale_rows_ref(indptr, data, weights):
    """Reference for :func:`scale_rows` (numpy)."""
    return data * np.repeat(weights, np.diff(indptr))


@njit(cache=True)
def select_rows(indptr, indices, data, rows):  # pragma: no cover - compiled
    """CSR arrays ``(indptr, indices, data)`` of the sub-matrix made of ``rows`` (in order)."""
    m = rows.shape[0]
    new_ptr = np.zeros(m + 1, dtype=np.int64)
    for i in range(m):
        r = rows[i]
        new_ptr[i + 1] = new_ptr[i] + indptr[r + 1] - indptr[r]
    new_idx = np.empty(new_ptr[m], dtype=np.int64)
    new_dat = np.empty(new_ptr[m])
    for i in range(m):
        r = rows[i]
        base = new_ptr[i]
        for j in range(indptr[r + 1] - indptr[r]):
            new_idx[base + j] = indices[indptr[r] + j]
            new_dat[base + j] = data[indptr[r] + j]
    return new_ptr, new_idx, new_dat


def select_rows_ref(indptr, indices, data, rows):
    """Reference for :func:`select_rows` (scipy fancy indexing)."""
    n = indptr.shape[0] - 1
    n_cols = int(indices.max()) + 1 if indices.size else 0
    m = sp.csr_matrix((data, indices, indptr), shape=(n, n_cols))[rows]
    return m.indptr.astype(np.int64), m.indices.astype(np.int64), m.data
