"""``suggest(..., backend=Cluster(...))``: the designer's work as Dask tasks on a cluster.

The problem (the MDP, the draws, the target values and the outer samples, pickled once) is
scattered to every worker once. Then one task per block of draws solves that block's
policies (:func:`bayesirl.design.policies.solve_block`); the blocks stay on the workers,
and each scoring task (one group of candidates, :mod:`bayesirl.design.work`) receives the
problem and the blocks by reference. Only the outer samples' policies, the scores and the
picks' log-likelihoods come back. Every task runs the same function on the same inputs as
the local run, so the numbers are the same bits.

Dask is imported lazily (the client passed in is already connected).
"""

from __future__ import annotations

import pickle
import uuid
from functools import lru_cache

import numpy as np

from bayesirl.design.policies import BlockList, solve_block
from bayesirl.design.work import block_loglik, score_groups

KEY_PREFIX = "bayesirl-design"


@lru_cache(maxsize=2)
def _problem(blob: bytes) -> dict:
    """The unpickled problem, once per worker process and run (the latest two stay cached
    on a worker after their runs)."""
    return pickle.loads(blob)


def block_task(blob: bytes, m0: int) -> np.ndarray:
    """Solve the block of draws starting at ``m0`` on a worker."""
    p = _problem(blob)
    return solve_block(p["mdp"], p["weights"], p["betas"], m0,
                       min(p["weights"].shape[0], m0 + p["chunk"]))


def take_task(block: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """Draws ``idx`` (positions within the block) of one block."""
    return np.ascontiguousarray(block[idx])


def loglik_task(block: np.ndarray, kind: str, what: tuple) -> np.ndarray:
    """One block's ``(n, J)`` log-likelihood of a pick's outcomes."""
    return block_loglik(block, kind, what)


def score_task(blob: bytes, blocks: list, group, prev: np.ndarray, first: bool):
    """Scores of one group of candidates, from every block of draws."""
    p = _problem(blob)
    policies = BlockList(p["mdp"], p["chunk"], blocks)
    return score_groups(policies, [group], p["g"], prev, p["outer"], first)[0]


class DaskBackend:
    """The designer's work on a cluster; same interface as ``work.LocalBackend``.

    Parameters
    ----------
    client : distributed.Client
    policies : DrawPolicies
        Supplies the MDP, the draws and the block size (nothing is solved here).
    g, outer : numpy.ndarray
        Target values per draw and the outer samples' draws.
    """

    def __init__(self, client, policies, g: np.ndarray, outer: np.ndarray) -> None:
        self.client, self.mdp, self.n, self.outer = client, policies.mdp, policies.n, outer
        self.chunk = policies.chunk
        self.run = uuid.uuid4().hex[:12]
        self._count = 0
        blob = pickle.dumps({"mdp": policies.mdp, "weights": policies.weights,
                             "betas": policies.rationalities, "chunk": policies.chunk,
                             "g": g, "outer": outer})
        # hash=False: a key of its own, so releasing it never touches another run's copy.
        self.shared = client.scatter(blob, broadcast=True, hash=False)
        self.blocks = [self._submit(block_task, self.shared, m0, name="block")
                       for m0 in range(0, self.n, self.chunk)]
        self._live = [self.shared, *self.blocks]

    def _submit(self, fn, *args, name: str):
        self._count += 1
        return self.client.submit(fn, *args, pure=False,
                                  key=f"{KEY_PREFIX}-{name}-{self._count}-{self.run}")

    def _gather(self, futures) -> list:
        try:
            return self.client.gather(futures)
        finally:
            self.client.cancel(futures)

    def outer_policies(self) -> np.ndarray:
        """Log-policies of the outer samples' draws ``(J, Tp, S, A)`` (outer is sorted)."""
        which = self.outer // self.chunk
        futures = [self._submit(take_task, self.blocks[k], self.outer[which == k] - k * self.chunk,
                                name="take") for k in np.unique(which)]
        return np.concatenate(self._gather(futures))

    def score(self, batch: list, prev: np.ndarray, first: bool) -> list:
        """Scores of every group, one task per group."""
        shared_prev = self.client.scatter(prev, hash=False)
        try:
            futures = [self._submit(score_task, self.shared, self.blocks, grp, shared_prev,
                                    first, name="score") for grp in batch]
            return self._gather(futures)
        finally:
            self.client.cancel([shared_prev])

    def loglik(self, kind: str, what: tuple) -> np.ndarray:
        """``(J, N)`` log-likelihood of one pick's outcomes under every draw."""
        futures = [self._submit(loglik_task, b, kind, what, name="loglik") for b in self.blocks]
        out = np.empty((self.outer.shape[0], self.n))
        for k, part in enumerate(self._gather(futures)):
            out[:, k * self.chunk:k * self.chunk + part.shape[0]] = part.T
        return out

    def close(self) -> None:
        """Release the problem and the blocks on the cluster."""
        self.client.cancel(self._live)
