"""Kernels of the designer: per-draw log-policies, trajectory log-probabilities, accumulators.

Each ``@njit`` kernel works on plain float64/int64 arrays and has a numpy twin ``*_ref`` with
the same signature (``tests/design/test_kernels.py`` checks they agree). A chunk of draws is
an array ``logpol`` of shape ``(n, Tp, S, A)``; step ``t`` of a trajectory uses
``logpol[m, min(t, Tp - 1)]`` (one slice for stationary policies, ``H`` with a horizon).
"""

from __future__ import annotations

import numpy as np
from numba import njit


@njit(cache=True)
def log_policy_from_q(q_by_action):  # pragma: no cover - compiled
    """``log pi(a|s) = Q(s, a) - log sum_b exp Q(s, b)`` as ``(S, A)`` from ``Q`` as ``(A, S)``.

    The maximum is subtracted first so that large Q-values neither overflow nor lose the
    digits of small probabilities.
    """
    n_a, n_s = q_by_action.shape
    out = np.empty((n_s, n_a))
    for s in range(n_s):
        top = q_by_action[0, s]
        for a in range(1, n_a):
            top = max(top, q_by_action[a, s])
        acc = 0.0
        for a in range(n_a):
            acc += np.exp(q_by_action[a, s] - top)
        lse = top + np.log(acc)
        for a in range(n_a):
            out[s, a] = q_by_action[a, s] - lse
    return out


def log_policy_from_q_ref(q_by_action):
    """Reference for :func:`log_policy_from_q` (numpy reductions)."""
    q = np.asarray(q_by_action).T
    top = q.max(axis=1, keepdims=True)
    return q - (top + np.log(np.exp(q - top).sum(axis=1, keepdims=True)))


@njit(cache=True)
def trajectory_loglik(logpol, states, actions):  # pragma: no cover - compiled
    """``sum_t log pi_m(a_t | s_t)`` for each draw ``m`` and trajectory ``j``: ``(n, J)``.

    ``states`` is int64 ``(J, L + 1)`` (or ``(J, L)``), ``actions`` int64 ``(J, L)``. The
    transition probabilities are the same under every draw and are left out.
    """
    n, tp = logpol.shape[0], logpol.shape[1]
    n_traj, length = actions.shape
    out = np.zeros((n, n_traj))
    for m in range(n):
        for j in range(n_traj):
            acc = 0.0
            for t in range(length):
                acc += logpol[m, min(t, tp - 1), states[j, t], actions[j, t]]
            out[m, j] = acc
    return out


def trajectory_loglik_ref(logpol, states, actions):
    """Reference for :func:`trajectory_loglik` (fancy indexing)."""
    tp = logpol.shape[1]
    length = actions.shape[1]
    t_idx = np.minimum(np.arange(length), tp - 1)
    picked = logpol[:, t_idx[None, :], states[:, :length], actions]  # (n, J, L)
    return picked.sum(axis=2)


def flat_steps(states, actions, tp: int, n_states: int, n_actions: int):
    """Flat positions ``(t' S + s) A + a`` of each step in a draw's ``(Tp, S, A)`` log-policy.

    ``t' = min(t, Tp - 1)``. One integer per step instead of three lets the accumulating
    kernel read each draw's log-policy as a single row.
    """
    length = actions.shape[-1]
    t_idx = np.minimum(np.arange(length), tp - 1)
    return np.ascontiguousarray((t_idx * n_states + states[..., :length]) * n_actions + actions)


@njit(cache=True)
def nested_accumulate(logpol_t, m0, steps, prev, outer, g, acc):  # pragma: no cover - compiled
    """Stream one chunk of draws into the nested Monte-Carlo sums of every trajectory.

    ``logpol_t`` is float64 ``(Tp * S * A, n)``: the chunk's log-policies with the draws
    along the contiguous axis, so that one step of a trajectory adds a contiguous row over
    all draws (vectorisable) instead of ``n`` scattered reads. ``steps`` int64 ``(C, J, L)``
    are the :func:`flat_steps` of the simulated demonstrations. For candidate ``c`` and
    outer sample ``j`` (simulated under draw ``outer[j]``) the joint log-likelihood under
    draw ``m0 + m`` is ``prev[j, m0 + m]`` (earlier picks) plus the trajectory's
    log-probability. ``acc`` is float64 ``(5, C, J)``: running maximum, then ``sum e``,
    ``sum e g``, ``sum e g^2`` with ``e = exp(ll - max)`` (an online log-sum-exp, so no
    draw's term underflows), and the log-likelihood under the simulating draw itself.
    """
    n = logpol_t.shape[1]
    n_c, n_j, length = steps.shape
    buf = np.empty(n)
    for c in range(n_c):
        for j in range(n_j):
            for m in range(n):
                buf[m] = prev[j, m0 + m]
            for t in range(length):
                row = logpol_t[steps[c, j, t]]
                for m in range(n):
                    buf[m] += row[m]
            k = outer[j] - m0
            if 0 <= k < n:
                acc[4, c, j] = buf[k]
            top = buf[0]
            for m in range(1, n):
                top = max(top, buf[m])
            s0 = s1 = s2 = 0.0
            for m in range(n):
                e = np.exp(buf[m] - top)
                gm = g[m0 + m]
                s0 += e
                s1 += e * gm
                s2 += e * gm * gm
            old = acc[0, c, j]
            if top > old:
                scale = np.exp(old - top)
                acc[1, c, j] = acc[1, c, j] * scale + s0
                acc[2, c, j] = acc[2, c, j] * scale + s1
                acc[3, c, j] = acc[3, c, j] * scale + s2
                acc[0, c, j] = top
            else:
                scale = np.exp(top - old)
                acc[1, c, j] += s0 * scale
                acc[2, c, j] += s1 * scale
                acc[3, c, j] += s2 * scale


def nested_accumulate_ref(logpol_t, m0, steps, prev, outer, g, acc):
    """Reference for :func:`nested_accumulate`: whole-chunk arrays, then a merge of the sums."""
    n = logpol_t.shape[1]
    ll = logpol_t[steps].sum(axis=2)  # (C, J, n)
    ll = ll + prev[None, :, m0:m0 + n]
    gm = g[m0:m0 + n]
    hit = (outer >= m0) & (outer < m0 + n)
    acc[4][:, hit] = ll[:, np.flatnonzero(hit), outer[hit] - m0]
    top = np.maximum(acc[0], ll.max(axis=2))
    old = np.exp(acc[0] - top)
    e = np.exp(ll - top[..., None])
    acc[1] = acc[1] * old + e.sum(axis=2)
    acc[2] = acc[2] * old + (e * gm).sum(axis=2)
    acc[3] = acc[3] * old + (e * gm * gm).sum(axis=2)
    acc[0] = top


@njit(cache=True)
def query_moments(logpol, g, acc_p, acc_h):  # pragma: no cover - compiled
    """Accumulate the sums behind exact query-state information gains (time step 0).

    ``acc_p`` float64 ``(4, S, A)``: ``sum pi``, ``sum H pi``, ``sum pi g``, ``sum pi g^2``.
    ``acc_h`` float64 ``(2 + A, S, A)``: ``sum H`` and ``sum H^2`` (in column 0 of rows 0
    and 1), then rows ``2 + b`` hold ``sum pi(b) pi(a)``, the second moments of the policy.
    ``H_m(s) = -sum_a pi_m(a|s) log pi_m(a|s)``.
    """
    n = logpol.shape[0]
    n_s, n_a = logpol.shape[2], logpol.shape[3]
    p = np.empty(n_a)
    for m in range(n):
        gm = g[m]
        for s in range(n_s):
            h = 0.0
            for a in range(n_a):
                lp = logpol[m, 0, s, a]
                p[a] = np.exp(lp)  # one exponential per entry, reused below
                if p[a] > 0.0:
                    h -= p[a] * lp
            acc_h[0, s, 0] += h
            acc_h[1, s, 0] += h * h
            for a in range(n_a):
                acc_p[0, s, a] += p[a]
                acc_p[1, s, a] += h * p[a]
                acc_p[2, s, a] += p[a] * gm
                acc_p[3, s, a] += p[a] * gm * gm
                for b in range(n_a):
                    acc_h[2 + b, s, a] += p[a] * p[b]


def query_moments_ref(logpol, g, acc_p, acc_h):
    """Reference for :func:`query_moments` (array reductions over the draws)."""
    lp = logpol[:, 0]
    p = np.exp(lp)
    h = -np.where(p > 0, p * lp, 0.0).sum(axis=2)  # (n, S)
    gm = g[:, None, None]
    acc_h[0, :, 0] += h.sum(axis=0)
    acc_h[1, :, 0] += (h * h).sum(axis=0)
    acc_p[0] += p.sum(axis=0)
    acc_p[1] += (h[:, :, None] * p).sum(axis=0)
    acc_p[2] += (p * gm).sum(axis=0)
    acc_p[3] += (p * gm * gm).sum(axis=0)
    acc_h[2:] += np.einsum("nsb,nsa->bsa", p, p)
