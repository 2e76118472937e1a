"""Per-draw demonstrator policies, solved in fixed blocks of draws and streamed block by block.

Draws ``m0 .. m0 + chunk - 1`` form one block, with ``m0`` a multiple of ``chunk``; a block's
first draw is solved from a cold start and each later one warm-started from the draw
before it. The boundaries depend only on the number of draws, :data:`BLOCK_DRAWS` and the
chunk byte bound, so a block solved on a Dask worker has the same bits as one solved here.
"""

from __future__ import annotations

import numpy as np

from bayesirl.design.kernels import log_policy_from_q
from bayesirl.errors import InputError
from bayesirl.solver import soft_newton

# Chunks of this many bytes of float64 log-policies keep the working set bounded whatever
# the number of draws; the cache holds every chunk only while the total stays under its cap.
CHUNK_BYTES = 64 * 2**20
CACHE_BYTES = 512 * 2**20
# At most this many draws per block: the unit of work of a policy solve task on a cluster.
BLOCK_DRAWS = 128


def posterior_draws(posterior, max_draws: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Evenly spaced draws ``(N, F)`` of the weights and their rationalities ``(N,)``."""
    w = posterior.weights.reshape(-1, posterior.weights.shape[-1])
    if posterior.rationality is None:
        beta = np.full(w.shape[0], float(posterior.model.fixed_rationality))
    else:
        beta = np.asarray(posterior.rationality, dtype=float).ravel()
    if max_draws is not None and max_draws < w.shape[0]:
        idx = np.linspace(0, w.shape[0] - 1, max_draws).round().astype(int)
        w, beta = w[idx], beta[idx]
    return np.ascontiguousarray(w), np.ascontiguousarray(beta)


def solve_block(mdp, weights: np.ndarray, rationalities: np.ndarray, m0: int, stop: int,
                on_solve=None) -> np.ndarray:
    """Log-policies ``(stop - m0, Tp, S, A)`` of draws ``m0 .. stop - 1``.

    Parameters
    ----------
    mdp : TabularMDP
    weights, rationalities : numpy.ndarray
        All draws' weights ``(N, F)`` and rationalities ``(N,)``.
    m0, stop : int
        The block's first draw and one past its last.
    on_solve : callable, optional
        Called with no argument after each draw's solve (progress counting).

    Returns
    -------
    numpy.ndarray
        float64 ``(stop - m0, Tp, S, A)``. The first draw starts cold, each later one from
        the previous draw's soft values (consecutive draws are close), so the result
        depends on ``m0`` and ``stop`` only, never on what was solved before.
    """
    tp = 1 if mdp.horizon is None else mdp.horizon
    out = np.empty((stop - m0, tp, mdp.n_states, mdp.n_actions))
    values = None
    for m in range(m0, stop):
        if mdp.horizon is not None:
            sol = mdp.solve(weights[m], rationalities[m])
            out[m - m0] = np.stack([log_policy_from_q(np.ascontiguousarray(q.T))
                                    for q in sol.q])
        else:
            reward = rationalities[m] * mdp.reward(weights[m])
            sol = soft_newton(mdp.dynamics, reward, mdp.discount, values)
            values = sol.values
            out[m - m0, 0] = log_policy_from_q(np.ascontiguousarray(sol.q_by_action))
        if on_solve is not None:
            on_solve()
    return out


def block_size(mdp, n_draws: int, chunk_bytes: int = CHUNK_BYTES) -> int:
    """Draws per block: ``BLOCK_DRAWS``, fewer when a block would exceed ``chunk_bytes``."""
    tp = 1 if mdp.horizon is None else mdp.horizon
    per_draw = tp * mdp.n_states * mdp.n_actions * 8
    return int(max(1, min(n_draws, BLOCK_DRAWS, chunk_bytes // per_draw)))


class BlockList:
    """Blocks that are already solved, with the ``chunks()`` interface of the estimators."""

    def __init__(self, mdp, chunk: int, blocks) -> None:
        self.mdp, self.chunk, self.blocks = mdp, int(chunk), list(blocks)
        self.tp = 1 if mdp.horizon is None else mdp.horizon
        self.n = sum(b.shape[0] for b in self.blocks)

    def chunks(self):
        """Yield ``(m0, logpol)`` block by block."""
        for k, block in enumerate(self.blocks):
            yield k * self.chunk, block


class DrawPolicies:
    """Log-policies ``(Tp, S, A)`` of the Boltzmann demonstrator under each posterior draw.

    Parameters
    ----------
    mdp : TabularMDP
    weights : array ``(N, F)``; rationalities : array ``(N,)``
    q : the likelihood's demonstrator model; only ``"soft"`` is supported.
    chunk_bytes, cache_bytes : memory bounds (see the module constants).
    """

    def __init__(self, mdp, weights, rationalities, q: str = "soft",
                 chunk_bytes: int = CHUNK_BYTES, cache_bytes: int = CACHE_BYTES) -> None:
        if q != "soft":
            raise InputError(f"suggest: demonstrator model q={q!r} is not supported; the "
                             "designer needs the soft (maximum causal entropy) model")
        self.mdp = mdp
        self.weights = np.ascontiguousarray(weights, dtype=float)
        self.rationalities = np.ascontiguousarray(rationalities, dtype=float)
        self.n = self.weights.shape[0]
        self.tp = 1 if mdp.horizon is None else mdp.horizon
        per_draw = self.tp * mdp.n_states * mdp.n_actions * 8
        self.chunk = block_size(mdp, self.n, chunk_bytes)
        self._cache_ok = per_draw * self.n <= cache_bytes
        self._cache: dict[int, np.ndarray] = {}
        self._last: tuple[int, np.ndarray] | None = None  # the latest block, when not cached
        self.solves = 0
        self.on_solve = None  # optional callback(solves so far), e.g. a progress line

    def _count(self) -> None:
        self.solves += 1
        if self.on_solve is not None:
            self.on_solve(self.solves)

    def block(self, m0: int) -> np.ndarray:
        """The block of draws starting at ``m0`` (a multiple of ``chunk``), solved once if
        every block fits the cache, else on each request (with the same bits)."""
        if m0 in self._cache:
            return self._cache[m0]
        if self._last is not None and self._last[0] == m0:
            return self._last[1]
        out = solve_block(self.mdp, self.weights, self.rationalities, m0,
                          min(self.n, m0 + self.chunk), self._count)
        if self._cache_ok:
            self._cache[m0] = out
        else:
            self._last = (m0, out)
        return out

    def one(self, m: int) -> np.ndarray:
        """Log-policy of draw ``m``: ``(Tp, S, A)`` (solves its block if needed)."""
        start = (m // self.chunk) * self.chunk
        return self.block(start)[m - start]

    def chunks(self):
        """Yield ``(m0, logpol)`` with ``logpol`` float64 ``(n, Tp, S, A)`` covering all draws."""
        for m0 in range(0, self.n, self.chunk):
            yield m0, self.block(m0)
