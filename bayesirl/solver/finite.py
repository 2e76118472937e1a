"""Finite-horizon soft Bellman recursion (time-dependent policy) and its forward adjoint."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl.kernels import csr_rmatvec
from bayesirl.solver.dynamics import Dynamics
from bayesirl.solver.soft import logsumexp_rows


class FiniteSolution(NamedTuple):
    """Values ``(H+1, S)`` with ``V_H = 0``, Q-values and policies ``(H, S, A)``."""

    values: np.ndarray
    q: np.ndarray
    policy: np.ndarray
    log_policy: np.ndarray


def soft_backward(dyn: Dynamics, reward: np.ndarray, discount: float, horizon: int):
    """Backward recursion ``Q_t = r + g P V_{t+1}``, ``V_t = log sum exp Q_t``, ``V_H = 0``."""
    n_s, n_a = dyn.n_states, dyn.n_actions
    values = np.zeros((horizon + 1, n_s))
    q = np.empty((horizon, n_s, n_a))
    for t in range(horizon - 1, -1, -1):
        q[t] = reward + discount * dyn.expected_next(values[t + 1])
        values[t] = logsumexp_rows(q[t])
    log_policy = q - values[:horizon, :, None]
    return FiniteSolution(values, q, np.exp(log_policy), log_policy)


def forward_adjoint(
    dyn: Dynamics, policy: np.ndarray, discount: float, sources: np.ndarray
) -> np.ndarray:
    """``m_0 = c_0``, ``m_t = c_t + g P_{pi_{t-1}}^T m_{t-1}`` for source terms ``c`` (H, S).

    The products ``P_pi^T m`` are done as ``P^T (pi * m)`` on the ``(S*A, S)`` matrix, which
    avoids building one policy matrix per time step.
    """
    horizon = sources.shape[0]
    m = np.empty_like(sources)
    m[0] = sources[0]
    for t in range(1, horizon):
        weighted = (policy[t - 1] * m[t - 1][:, None]).ravel()
        pushed = csr_rmatvec(dyn.indptr, dyn.indices, dyn.data, weighted, dyn.n_states)
        m[t] = sources[t] + discount * pushed
    return m
