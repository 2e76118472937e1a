"""Hard-optimal values by policy iteration (used by the classic Bayesian-IRL likelihood)."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from bayesirl.errors import SolverError
from bayesirl.solver.dynamics import Dynamics


class HardSolution(NamedTuple):
    """Optimal values, Q-values and the greedy policy (lowest action index on ties)."""

    values: np.ndarray  # (S,)
    q: np.ndarray  # (S, A)
    greedy: np.ndarray  # int64 (S,)
    iterations: int


def evaluate_deterministic(
    dyn: Dynamics, reward: np.ndarray, discount: float, actions: np.ndarray
) -> np.ndarray:
    """Values of a deterministic policy: solve ``(I - g P_g) V = r_g`` by sparse LU."""
    p_g = dyn.greedy_matrix(actions)
    r_g = reward[np.arange(dyn.n_states), actions]
    system = (sp.identity(dyn.n_states, format="csc") - discount * p_g).tocsc()
    return spla.splu(system).solve(r_g)


def policy_iteration(
    dyn: Dynamics,
    reward: np.ndarray,
    discount: float,
    greedy0: np.ndarray | None = None,
    max_iter: int = 1000,
) -> HardSolution:
    """Howard's policy iteration, warm-started from a previous greedy policy.

    Improvement switches action only when it beats the current one by more than a relative
    1e-12, so floating-point noise cannot make the method cycle between tied actions.
    """
    n_s = dyn.n_states
    greedy = np.zeros(n_s, dtype=np.int64) if greedy0 is None else greedy0.astype(np.int64)
    rows = np.arange(n_s)
    for it in range(1, max_iter + 1):
        values = evaluate_deterministic(dyn, reward, discount, greedy)
        q = reward + discount * dyn.expected_next(values)
        best = np.argmax(q, axis=1)
        current = q[rows, greedy]
        margin = 1e-12 * (1.0 + np.abs(current))
        improve = q[rows, best] > current + margin
        if not improve.any():
            return HardSolution(values, q, greedy, it)
        greedy = np.where(improve, best, greedy)
    raise SolverError(f"policy iteration did not settle after {max_iter} improvements")
