"""Sampling episodes from a (possibly time-dependent) stochastic policy."""

from __future__ import annotations

import numpy as np
from numba import njit


@njit(cache=True)
def _pick(cum_source, start, stop, u):  # pragma: no cover - compiled
    # Inverse-CDF over entries [start, stop) of a probability vector; rounding can leave the
    # running sum a hair under u, so fall back to the last entry with positive mass.
    acc = 0.0
    last = start
    for k in range(start, stop):
        p = cum_source[k]
        if p > 0.0:
            last = k
            acc += p
            if u < acc:
                return k
    return last


@njit(cache=True)
def sample_episodes(indptr, indices, data, policy, starts, length, uniforms):  # pragma: no cover
    """Roll out episodes.

    Parameters
    ----------
    indptr, indices, data : CSR arrays of the ``(S*A, S)`` transition matrix.
    policy : float64 array ``(Tp, S, A)``; step ``t`` uses ``policy[min(t, Tp - 1)]``.
    starts : int64 array ``(E,)`` of start states.
    length : number of actions per episode.
    uniforms : float64 array ``(E, length, 2)`` of U(0, 1) draws (action, successor).

    Returns
    -------
    states : int64 ``(E, length + 1)``; actions : int64 ``(E, length)``.
    """
    n_ep = starts.shape[0]
    tp, _, n_actions = policy.shape
    states = np.empty((n_ep, length + 1), dtype=np.int64)
    actions = np.empty((n_ep, length), dtype=np.int64)
    for e in range(n_ep):
        s = starts[e]
        states[e, 0] = s
        for t in range(length):
            row = policy[min(t, tp - 1), s]
            a = _pick(row, 0, n_actions, uniforms[e, t, 0])
            r = s * n_actions + a
            k = _pick(data, indptr[r], indptr[r + 1], uniforms[e, t, 1])
            s = indices[k]
            actions[e, t] = a
            states[e, t + 1] = s
    return states, actions


def sample_episodes_ref(indptr, indices, data, policy, starts, length, uniforms):
    """Reference for :func:`sample_episodes` (numpy ``searchsorted`` on cumulative sums)."""
    n_ep = starts.shape[0]
    tp, _, n_actions = policy.shape
    states = np.empty((n_ep, length + 1), dtype=np.int64)
    actions = np.empty((n_ep, length), dtype=np.int64)
    for e in range(n_ep):
        s = int(starts[e])
        states[e, 0] = s
        for t in range(length):
            a = _pick_ref(policy[min(t, tp - 1), s], uniforms[e, t, 0])
            r = s * n_actions + a
            lo, hi = indptr[r], indptr[r + 1]
            s = int(indices[lo + _pick_ref(data[lo:hi], uniforms[e, t, 1])])
            actions[e, t] = a
            states[e, t + 1] = s
    return states, actions


def _pick_ref(p, u):
    cum = np.cumsum(p)
    k = int(np.searchsorted(cum, u, side="right"))
    positive = np.flatnonzero(p > 0)
    return k if k < p.shape[0] and p[k] > 0 else int(positive[-1])
