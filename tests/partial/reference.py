"""Plain-numpy references for the partial-episode tests (nothing from bayesirl's solvers).

The policy comes from soft value iteration iterated until it no longer changes in floating
point (discounted) or from the backward recursion (finite horizon); likelihoods of episodes
with unrecorded parts come from enumerating every full sequence of states and actions.
"""

from __future__ import annotations

import itertools

import numpy as np


def tiny_mdp_arrays(seed: int, n_states: int = 3, n_actions: int = 2, n_features: int = 2):
    """Dynamics with some zero entries (so forbidden moves exist) and random features."""
    rng = np.random.default_rng(seed)
    p = rng.dirichlet(np.full(n_states, 0.7), size=(n_states, n_actions))
    p[p < 0.12] = 0.0
    p /= p.sum(axis=2, keepdims=True)
    phi = rng.normal(size=(n_states, n_actions, n_features))
    return p, phi


def soft_policy(p, phi, w, beta, discount, horizon=None):
    """``pi(a|s)`` (S, A), or (H, S, A) with a horizon, by plain iteration."""
    r = beta * phi @ w
    if horizon is not None:
        v = np.zeros(p.shape[0])
        out = np.empty((horizon,) + r.shape)
        for t in range(horizon - 1, -1, -1):
            q = r + discount * p @ v
            v = np.log(np.exp(q).sum(axis=1))
            out[t] = np.exp(q - v[:, None])
        return out
    v = np.zeros(p.shape[0])
    for _ in range(100_000):
        q = r + discount * p @ v
        v_new = np.log(np.exp(q).sum(axis=1))
        if np.array_equal(v_new, v):
            break
        v = v_new
    q = r + discount * p @ v
    return np.exp(q - np.log(np.exp(q).sum(axis=1))[:, None])


def brute_force_loglik(p, policy, states, actions, finite=False):
    """``log P(recorded parts | s_0)`` by summing over every completion (-1 = unrecorded)."""
    n_s, n_a, _ = p.shape
    t_len = len(actions)
    states = list(states) + [-1] * (t_len + 1 - len(states))
    free_s = [t for t in range(1, t_len + 1) if states[t] < 0]
    free_a = [t for t in range(t_len) if actions[t] < 0]
    total = 0.0
    for fill_s in itertools.product(range(n_s), repeat=len(free_s)):
        s = list(states)
        for t, v in zip(free_s, fill_s, strict=True):
            s[t] = v
        for fill_a in itertools.product(range(n_a), repeat=len(free_a)):
            a = list(actions)
            for t, v in zip(free_a, fill_a, strict=True):
                a[t] = v
            prob = 1.0
            for t in range(t_len):
                pol = policy[t] if finite else policy
                prob *= pol[s[t], a[t]] * p[s[t], a[t], s[t + 1]]
            total += prob
    return float(np.log(total))
