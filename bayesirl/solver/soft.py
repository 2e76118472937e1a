"""Discounted soft Bellman equation: value iteration and Newton (soft policy iteration).

With the reward already multiplied by the rationality (so the temperature is one):

    Q(s,a) = r(s,a) + g * E[V(s') | s, a],    V(s) = log sum_a exp Q(s,a),
    pi(a|s) = exp(Q(s,a) - V(s)).

Both methods stop on the span of the Bellman residual: the backup is monotone and shifts by
``g*c`` when ``V`` shifts by ``c``, so the MacQueen-Porteus bounds place the fixed point in
``T(V) + g/(1-g) * [min D, max D]`` with ``D = T(V) - V``. We stop when that box is narrower
than the tolerance and return its midpoint.

Internally arrays are action-major ``(A, S)``: the reductions over actions then run over
contiguous rows and vectorise. The solution exposes ``(S, A)`` views.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import NamedTuple

import numpy as np

from bayesirl.errors import SolverError
from bayesirl.kernels import soft_max_actions, soft_newton_dense
from bayesirl.solver.dynamics import Dynamics
from bayesirl.solver.linear import Preconditioner, solve_discounted

DEFAULT_TOL = 1e-10


class SoftSolution(NamedTuple):
    """Fixed point of the soft Bellman equation and how it was reached."""

    values: np.ndarray  # (S,)
    q_by_action: np.ndarray  # (A, S)
    policy_by_action: np.ndarray  # (A, S)
    log_policy_by_action: np.ndarray  # (A, S), Q - V, so that tiny probabilities keep digits
    iterations: int  # backups (value iteration) or Newton steps
    matvecs: int  # CSR sweeps spent, backups included

    @property
    def q(self) -> np.ndarray:
        """Soft Q-values ``(S, A)`` (a view)."""
        return self.q_by_action.T

    @property
    def policy(self) -> np.ndarray:
        """``pi(a|s)`` as ``(S, A)`` (a view)."""
        return self.policy_by_action.T

    @property
    def log_policy(self) -> np.ndarray:
        """``log pi(a|s)`` as ``(S, A)`` (a view)."""
        return self.log_policy_by_action.T


def logsumexp_rows(q: np.ndarray) -> np.ndarray:
    """Row-wise ``log sum exp`` of an ``(S, A)`` array, stable for large entries."""
    return soft_max_actions(np.ascontiguousarray(q.T))[0]


def _backup(dyn: Dynamics, reward_am, discount, values):
    q = reward_am + discount * dyn.expected_next_by_action(values)
    new_values, policy = soft_max_actions(q)
    return q, new_values, policy


def soft_backup(
    dyn: Dynamics, reward: np.ndarray, discount: float, values: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """One backup for an ``(S, A)`` reward: returns ``(Q (S, A), T(V))``."""
    q, new_values, _ = _backup(dyn, np.ascontiguousarray(reward.T), discount, values)
    return q.T, new_values


def _tolerance(tol: float, values: np.ndarray) -> float:
    # Absolute span tolerance, widened near the floating-point floor of |V| (for discount
    # near 1, |V| ~ r/(1-g) and the residual cannot get below eps * |V|).
    return max(tol, 64 * np.finfo(float).eps * float(np.max(np.abs(values), initial=1.0)))


def _finish(q, new_values, policy, residual, discount, iterations, matvecs) -> SoftSolution:
    # q was computed from the last input V, new_values = T(V). The fixed point is
    # T(V) + shift up to the tolerance; Q moves by g * (mid residual + shift) to match it.
    scale = discount / (1.0 - discount) if discount > 0 else 0.0
    mid = 0.5 * (residual.max() + residual.min())
    shift = scale * mid
    return SoftSolution(
        new_values + shift, q + discount * (mid + shift), policy, q - new_values,
        iterations, matvecs,
    )


def _start(dyn: Dynamics, reward: np.ndarray, values0):
    reward_am = np.ascontiguousarray(reward.T)
    values = np.zeros(dyn.n_states) if values0 is None else np.array(values0, dtype=float)
    return reward_am, values


def soft_value_iteration(
    dyn: Dynamics,
    reward: np.ndarray,
    discount: float,
    values0: np.ndarray | None = None,
    tol: float = DEFAULT_TOL,
    max_iter: int = 100_000,
) -> SoftSolution:
    """Soft value iteration with the span stopping rule, warm-started from ``values0``."""
    reward_am, values = _start(dyn, reward, values0)
    scale = discount / (1.0 - discount) if discount > 0 else 0.0
    for it in range(1, max_iter + 1):
        q, new_values, policy = _backup(dyn, reward_am, discount, values)
        residual = new_values - values
        if scale * (residual.max() - residual.min()) <= _tolerance(tol, new_values):
            return _finish(q, new_values, policy, residual, discount, it, it)
        values = new_values
    raise SolverError(
        f"soft value iteration: span of the Bellman residual still "
        f"{residual.max() - residual.min():.3e} after {max_iter} backups"
    )


def soft_newton(
    dyn: Dynamics,
    reward: np.ndarray,
    discount: float,
    values0: np.ndarray | None = None,
    tol: float = DEFAULT_TOL,
    max_iter: int = 50,
    precond: Preconditioner | None = None,
    guesses: Sequence[np.ndarray] = (),
) -> SoftSolution:
    """Newton's method on ``V - T(V) = 0`` (soft policy iteration) with GMRES steps.

    The Jacobian is ``I - g P_pi``; each step solves it inexactly with a forcing term that
    shrinks with the residual, so convergence stays superlinear without oversolving early.
    Pass the same ``precond`` across calls to reuse its factorisation (see
    :mod:`bayesirl.solver.linear`). ``guesses`` are further starting points: the iteration
    starts from whichever of ``values0`` and ``guesses`` has the narrowest Bellman residual
    (one backup each; ties go to the earlier one).
    """
    reward_am, values = _start(dyn, reward, values0)
    if dyn.dense is not None:
        return _newton_dense(dyn, reward_am, discount, values, tol, max_iter)
    scale = discount / (1.0 - discount) if discount > 0 else 0.0
    first = _best_start(dyn, reward_am, discount, [values, *guesses])
    matvecs = len(guesses)
    for it in range(1, max_iter + 1):
        if first is not None:
            values, (q, new_values, policy), first = *first, None
        else:
            q, new_values, policy = _backup(dyn, reward_am, discount, values)
        matvecs += 1
        residual = new_values - values
        span = residual.max() - residual.min()
        if scale * span <= _tolerance(tol, new_values):
            return _finish(q, new_values, policy, residual, discount, it, matvecs)
        # Remove the constant part: the policy ignores it and the final shift restores it.
        centred = residual - residual.mean()
        # Forcing term: shrinks with the residual (superlinear convergence), but never asks
        # for more than the stopping rule needs after this step.
        needed = 0.1 * _tolerance(tol, new_values) / (scale * span)
        forcing = min(1e-2, max(1e-12, needed, span / (1.0 + np.abs(new_values).max())))
        step, used = solve_discounted(
            dyn.policy_matrix_by_action(policy), discount, centred, x0=None, rtol=forcing,
            precond=precond, what="soft Newton step",
        )
        matvecs += used
        values = values + step
    raise SolverError(
        f"soft Newton: span of the Bellman residual still {span:.3e} after {max_iter} steps"
    )


def _best_start(dyn, reward_am, discount, starts):
    """``(start, its backup)`` with the narrowest residual span (None: only one start)."""
    if len(starts) == 1:
        return None
    best = None
    for values in starts:
        backup = _backup(dyn, reward_am, discount, values)
        span = float(np.ptp(backup[1] - values))
        if best is None or span < best[0]:
            best = (span, values, backup)
    return best[1], best[2]


def _newton_dense(dyn, reward_am, discount, values, tol, max_iter) -> SoftSolution:
    values, q, policy, log_policy, it = soft_newton_dense(
        dyn.dense, reward_am, float(discount), values, float(tol), int(max_iter)
    )
    if it < 0:
        raise SolverError(f"soft Newton (dense): not converged after {max_iter} steps")
    return SoftSolution(values, q, policy, log_policy, it, it)
