"""Vectorised exponential and the soft maximum over actions.

numpy's float64 ``exp`` is scalar on AVX2 machines (its SIMD version needs AVX-512), and a
numba loop calling ``np.exp`` is no faster. :func:`exp_into` uses only arithmetic that LLVM
vectorises: Cody-Waite range reduction ``x = k ln2 + r``, ``|r| <= ln2/2``, a degree-13
Taylor polynomial (truncation below 2e-16 relative), and ``2**k`` built in the exponent bits.
Accuracy is about 1.5 ulp on ``[-700, 709]``; inputs below -700 give 0, above 709 are clamped.
"""

from __future__ import annotations

import numpy as np
from numba import njit

_LOG2E = 1.4426950408889634
_LN2_HI = 0.6931471803691238  # ln 2 split so that k * _LN2_HI is exact for |k| < 2^20
_LN2_LO = 1.9082149292705877e-10
_MAGIC = 6755399441055744.0  # 1.5 * 2^52: adding it rounds to an integer held in the low bits
_MAGIC_BITS = 0x4338000000000000
_LOW = -700.0
_HIGH = 709.0  # 2^k must stay a normal number: k <= 1023


@njit(cache=True, fastmath={"contract"})
def exp_into(x, out, work):  # pragma: no cover - compiled
    """``out[:] = exp(x)`` for 1-D float64 arrays; ``work`` is scratch of the same size."""
    n = x.shape[0]
    for i in range(n):
        xi = min(max(x[i], _LOW), _HIGH)
        t = xi * _LOG2E + _MAGIC
        k = t - _MAGIC
        r = (xi - k * _LN2_HI) - k * _LN2_LO
        p = 1.0 / 6227020800.0
        p = p * r + 1.0 / 479001600.0
        p = p * r + 1.0 / 39916800.0
        p = p * r + 1.0 / 3628800.0
        p = p * r + 1.0 / 362880.0
        p = p * r + 1.0 / 40320.0
        p = p * r + 1.0 / 5040.0
        p = p * r + 1.0 / 720.0
        p = p * r + 1.0 / 120.0
        p = p * r + 1.0 / 24.0
        p = p * r + 1.0 / 6.0
        p = p * r + 0.5
        p = p * r + 1.0
        p = p * r + 1.0
        out[i] = p
        work[i] = t
    bits = work.view(np.int64)
    for i in range(n):
        bits[i] = (bits[i] - _MAGIC_BITS + 1023) << 52
    scale = bits.view(np.float64)
    for i in range(n):
        v = out[i] * scale[i]
        out[i] = v if x[i] >= _LOW else 0.0
    return out


def exp_into_ref(x, out, work):
    """Reference for :func:`exp_into` (numpy), with the same cut-off below -700."""
    out[:] = np.where(x >= _LOW, np.exp(np.clip(x, _LOW, _HIGH)), 0.0)
    return out


@njit(cache=True)
def soft_max_actions(q):  # pragma: no cover - compiled
    """For action-major ``q`` ``(A, S)``: ``V = log sum_a exp q`` and ``pi = exp(q - V)``.

    Returns ``(V (S,), pi (A, S))``. The exponentials are computed once, shifted by the
    per-state maximum, and reused for the policy.
    """
    n_a, n_s = q.shape
    top = q[0].copy()
    for a in range(1, n_a):
        for s in range(n_s):
            if q[a, s] > top[s]:
                top[s] = q[a, s]
    shifted = np.empty(n_a * n_s)
    for a in range(n_a):
        for s in range(n_s):
            shifted[a * n_s + s] = q[a, s] - top[s]
    e = np.empty(n_a * n_s)
    exp_into(shifted, e, np.empty(n_a * n_s))
    acc = np.zeros(n_s)
    for a in range(n_a):
        for s in range(n_s):
            acc[s] += e[a * n_s + s]
    values = np.empty(n_s)
    inv = np.empty(n_s)
    for s in range(n_s):
        values[s] = top[s] + np.log(acc[s])
        inv[s] = 1.0 / acc[s]
    policy = e.reshape(n_a, n_s)
    for a in range(n_a):
        for s in range(n_s):
            policy[a, s] *= inv[s]
    return values, policy


def soft_max_actions_ref(q):
    """Reference for :func:`soft_max_actions` (numpy)."""
    top = q.max(axis=0)
    e = np.exp(q - top)
    acc = e.sum(axis=0)
    return top + np.log(acc), e / acc


@njit(cache=True)
def scale_rows_by_policy(indptr, data, policy):  # pragma: no cover - compiled
    """Data of ``P_pi`` from state-major rows ``s*A + a`` and an action-major policy ``(A, S)``.

    Row ``i = s*A + a`` is multiplied by ``policy[a, s]``; with ``indptr[::A]`` the result is
    the CSR matrix of ``P_pi`` (the rows of one state are contiguous).
    """
    n_a = policy.shape[0]
    out = np.empty_like(data)
    for i in range(indptr.shape[0] - 1):
        w = policy[i % n_a, i // n_a]
        for k in range(indptr[i], indptr[i + 1]):
            out[k] = data[k] * w
    return out


def scale_rows_by_policy_ref(indptr, data, policy):
    """Reference for :func:`scale_rows_by_policy` (numpy)."""
    return data * np.repeat(policy.T.ravel(), np.diff(indptr))
