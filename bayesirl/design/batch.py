"""Outer samples, simulated outcomes and the log-likelihood of earlier picks.

Every random number comes from a child of ``numpy.random.SeedSequence(seed)`` named by what
it is for, so the outcomes depend on the seed alone, never on the order of the work:
``spawn_key (0,)`` the outer samples, ``(1, s, r)`` the ``r``-th simulation of the
demonstrations from start state ``s`` (``r`` counts the earlier picks of that start),
``(2, step)`` the simulated answers of the query picked at greedy ``step``, ``(3, step)``
the resamples that measure how settled the ranking at greedy ``step`` is. A start
candidate's simulated demonstrations, and so its first-step gain, are therefore the same
whichever other candidates are scored with it.
"""

from __future__ import annotations

import numpy as np

from bayesirl.kernels import sample_episodes

OUTER, START, QUERY, RANKING = 0, 1, 2, 3
# Candidates simulated per call of the rollout kernel (bounds the uniforms' memory).
SIM_GROUP = 256


def child_rng(seed: int, *key: int) -> np.random.Generator:
    """The generator of the ``SeedSequence(seed)`` child with spawn key ``key``."""
    return np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=key))


def outer_samples(n: int, n_outer: int, seed: int) -> np.ndarray:
    """Sorted draws ``(J,)`` that simulate the outcomes (with replacement if ``J > n``)."""
    rng = child_rng(seed, OUTER)
    return np.sort(rng.choice(n, size=n_outer, replace=n_outer > n)).astype(np.int64)


class Batch:
    """The greedy batch's state: simulated demonstrations and the earlier picks' ``prev``.

    Parameters
    ----------
    backend : LocalBackend or DaskBackend
    start_index : numpy.ndarray
        Positions in the candidate list of the start candidates.
    start_states : numpy.ndarray
        Their start states.
    length : int
        Demonstration length.
    seed : int
    """

    def __init__(self, backend, start_index, start_states, length: int, seed: int) -> None:
        self.backend, self.seed = backend, int(seed)
        self.mdp = backend.mdp
        self.outer = backend.outer
        n_j = self.outer.shape[0]
        self.pol = np.exp(backend.outer_policies())  # (J, Tp, S, A)
        self.prev = np.zeros((n_j, backend.n))
        self.start_index = np.asarray(start_index, dtype=np.int64)
        self.start_states = np.ascontiguousarray(start_states, dtype=np.int64)
        c = self.start_states.shape[0]
        self.rounds = np.zeros(c, dtype=np.int64)
        self.states = np.empty((c, n_j, length + 1), dtype=np.int64)
        self.actions = np.empty((c, n_j, length), dtype=np.int64)
        for a in range(0, c, SIM_GROUP):
            self._simulate(np.arange(a, min(c, a + SIM_GROUP)))

    def _simulate(self, which: np.ndarray) -> None:
        tm = self.mdp.transitions
        n_j, length = self.actions.shape[1], self.actions.shape[2]
        u = np.stack([child_rng(self.seed, START, int(self.start_states[c]),
                                int(self.rounds[c])).random((n_j, length, 2)) for c in which])
        starts = np.ascontiguousarray(self.start_states[which])
        for j in range(n_j):
            s, a = sample_episodes(tm.indptr, tm.indices, tm.data, self.pol[j], starts, length,
                                   np.ascontiguousarray(u[:, j]))
            self.states[which, j], self.actions[which, j] = s, a

    def add_start(self, c: int) -> None:
        """Condition on the simulated demonstrations of start candidate ``c``."""
        self.prev += self.backend.loglik("start", (self.states[c], self.actions[c]))
        # A second demonstration from the same start is a fresh, independent outcome (for
        # every candidate with that start, should the list name it twice).
        same = np.flatnonzero(self.start_states == self.start_states[c])
        self.rounds[same] += 1
        self._simulate(same)

    def add_query(self, state: int, step: int) -> None:
        """Condition on one simulated answer at ``state`` per outer sample."""
        n_a = self.mdp.n_actions
        u = child_rng(self.seed, QUERY, int(step)).random(self.outer.shape[0])
        answers = np.empty(self.outer.shape[0], dtype=np.int64)
        for j in range(self.outer.shape[0]):
            p = self.pol[j, 0, state]
            answers[j] = min(int(np.searchsorted(np.cumsum(p), u[j])), n_a - 1)
        self.prev += self.backend.loglik("query", (int(state), answers))
