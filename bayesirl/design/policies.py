"""Per-draw demonstrator policies, solved once per draw and streamed in bounded chunks."""

from __future__ import annotations

import numpy as np

from bayesirl.design.kernels import log_policy_from_q
from bayesirl.errors import InputError
from bayesirl.solver import soft_newton

# Chunks of this many bytes of float64 log-policies keep the working set bounded whatever
# the number of draws; the cache holds every chunk only while the total stays under its cap.
CHUNK_BYTES = 64 * 2**20
CACHE_BYTES = 512 * 2**20


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
        self.weights = np.asarray(weights, dtype=float)
        self.rationalities = np.asarray(rationalities, dtype=float)
        self.n = self.weights.shape[0]
        self.tp = 1 if mdp.horizon is None else mdp.horizon
        per_draw = self.tp * mdp.n_states * mdp.n_actions * 8
        self.chunk = int(max(1, min(self.n, chunk_bytes // per_draw)))
        self._cache_ok = per_draw * self.n <= cache_bytes
        self._cache: dict[int, np.ndarray] = {}
        self._values = None  # warm start: the previous draw's soft values
        self.solves = 0
        self.on_solve = None  # optional callback(solves so far), e.g. a progress line

    def one(self, m: int) -> np.ndarray:
        """Log-policy of draw ``m``: ``(Tp, S, A)``."""
        start = (m // self.chunk) * self.chunk
        if start in self._cache:
            return self._cache[start][m - start]
        return self._solve(m)

    def _solve(self, m: int) -> np.ndarray:
        mdp = self.mdp
        reward = self.rationalities[m] * mdp.reward(self.weights[m])
        self.solves += 1
        if self.on_solve is not None:
            self.on_solve(self.solves)
        if mdp.horizon is not None:
            sol = mdp.solve(self.weights[m], self.rationalities[m])
            return np.stack([log_policy_from_q(np.ascontiguousarray(q.T)) for q in sol.q])
        sol = soft_newton(mdp.dynamics, reward, mdp.discount, self._values)
        # Consecutive draws are close, so the previous solution is a good starting point.
        self._values = sol.values
        return log_policy_from_q(np.ascontiguousarray(sol.q_by_action))[None]

    def chunks(self):
        """Yield ``(m0, logpol)`` with ``logpol`` float64 ``(n, Tp, S, A)`` covering all draws."""
        for m0 in range(0, self.n, self.chunk):
            if m0 in self._cache:
                yield m0, self._cache[m0]
                continue
            stop = min(self.n, m0 + self.chunk)
            block = np.empty((stop - m0, self.tp, self.mdp.n_states, self.mdp.n_actions))
            for m in range(m0, stop):
                block[m - m0] = self._solve(m)
            if self._cache_ok:
                self._cache[m0] = block
            yield m0, block
