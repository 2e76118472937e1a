"""Benchmark problems: random sparse MDPs and slippery grid worlds (seeded, invented), and the
bus-engine replacement model of Rust (1987) (a published specification)."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from bayesirl.model import TabularMDP, simulate


def random_mdp(
    n_states: int, n_actions: int = 4, successors: int = 4, n_features: int = 8,
    discount: float = 0.95, seed: int = 0,
) -> TabularMDP:
    """Each (s, a) moves to ``successors`` distinct random states with Dirichlet(1) weights."""
    rng = np.random.default_rng(seed)
    rows = n_states * n_actions
    cols = np.empty((rows, successors), dtype=np.int64)
    for k in range(successors):  # distinct successors without a per-row choice() call
        cols[:, k] = rng.integers(0, n_states, size=rows)
    cols.sort(axis=1)
    dup = np.zeros_like(cols, dtype=bool)
    dup[:, 1:] = cols[:, 1:] == cols[:, :-1]
    probs = rng.dirichlet(np.ones(successors), size=rows)
    probs[dup] = 0.0  # merge-by-drop keeps rows stochastic after renormalising below
    probs /= probs.sum(axis=1, keepdims=True)
    m = sp.csr_matrix(
        (probs.ravel(), (np.repeat(np.arange(rows), successors), cols.ravel())),
        shape=(rows, n_states),
    )
    features = rng.normal(size=(n_states, n_features))
    return TabularMDP(m, features, discount=discount)


def slippery_grid(
    side: int, slip: float = 0.2, n_features: int = 8, discount: float = 0.95, seed: int = 0,
) -> TabularMDP:
    """A ``side x side`` grid, 4 moves; a move goes to a random other neighbour w.p. ``slip``.

    Moves off the grid stay put. Features are smooth random fields (sums of a few bumps), so
    neighbouring cells have similar rewards, as on a real map; mixing is slow.
    """
    rng = np.random.default_rng(seed)
    n = side * side
    r, c = np.divmod(np.arange(n), side)
    moves = np.array([(-1, 0), (0, 1), (1, 0), (0, -1)])
    targets = np.empty((n, 4), dtype=np.int64)
    for a, (dr, dc) in enumerate(moves):
        rr, cc = np.clip(r + dr, 0, side - 1), np.clip(c + dc, 0, side - 1)
        targets[:, a] = rr * side + cc
    rows, cols, vals = [], [], []
    for a in range(4):
        for b in range(4):
            p = 1.0 - slip if a == b else slip / 3.0
            rows.append(np.arange(n) * 4 + a)
            cols.append(targets[:, b])
            vals.append(np.full(n, p))
    m = sp.csr_matrix(
        (np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(4 * n, n)
    )
    centres = rng.uniform(0, side, size=(n_features, 3, 2))
    width = side / 4.0
    feats = np.zeros((n, n_features))
    for f in range(n_features):
        for cr, cc in centres[f]:
            feats[:, f] += np.exp(-((r - cr) ** 2 + (c - cc) ** 2) / (2 * width**2))
    feats -= feats.mean(axis=0)
    return TabularMDP(m, feats, discount=discount)


# Rust (1987), "Optimal replacement of GMC bus engines", Econometrica 55, Table IX (values from
# memory): 90 mileage bins, monthly increments of 0/1/2 bins, theta1 = 2.6275, RC = 9.7558.
BUS_BINS = 90
BUS_INCREMENTS = (0.3919, 0.5953, 0.0128)
BUS_TRUTH = np.array([2.6275, 9.7558])


def bus_engine(discount: float = 0.9999) -> TabularMDP:
    """Keep (0) or replace (1) an engine in mileage bin x; features keep -> (-0.001 x, 0),
    replace -> (0, -1), weights (theta1, RC). A replaced engine restarts at bin 0."""
    n = BUS_BINS
    p = np.zeros((n, 2, n))
    for s in range(n):
        for k, pk in enumerate(BUS_INCREMENTS):
            p[s, 0, min(s + k, n - 1)] += pk
            p[s, 1, min(k, n - 1)] += pk
    phi = np.zeros((n, 2, 2))
    phi[:, 0, 0] = -0.001 * np.arange(n)
    phi[:, 1, 1] = -1.0
    return TabularMDP(p, phi, discount=discount, feature_names=("theta1", "RC"))


def demonstrations_for(mdp: TabularMDP, episodes: int, length: int, seed: int = 0):
    """Weights ~ N(0, 1) and demonstrations simulated from them."""
    w = np.random.default_rng(seed + 1).normal(size=mdp.n_features)
    return w, simulate(mdp, w, episodes=episodes, length=length, seed=seed)
