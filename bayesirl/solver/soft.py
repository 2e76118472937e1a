"""Discounted soft Bellman equation: value iteration and Newton (soft policy iteration).

With the reward already multiplied by the rationality (so the temperature is one):

    Q(s,a) = r(s,a) + g * E[V(s') | s, a],    V(s) = log sum_a exp Q(s,a),
    pi(a|s) = exp(Q(s,a) - V(s)).

Both methods stop on the span of the Bellman residual: the backup is monotone and shifts by
``g*c`` when ``V`` shifts by ``c``, so the MacQueen-Porteus bounds place the fixed point in
``T(V) + g/(1-g) * [min D, max D]`` with ``D = T(V) - V``. We stop when that box is narrower
than the tolerance and return its midpoint.

Near discount 1 two things matter (both derived in :func:`rounding_factor`). The iteration
works on *relative* values: the start and every Newton iterate are re-centred, because the
policy ignores constants and a constant offset (``|r| / (1 - g)``, or the offset a warm start
from far-away weights carries) only adds rounding. And the floor of the stopping rule is the
span that rounding alone leaves in a computed residual, scaled by the same ``g/(1-g)`` as the
span itself; comparing the scaled span with an unscaled floor made the target unreachable
for ``g >= 0.999``.

Internally arrays are action-major ``(A, S)``: the reductions over actions then run over
contiguous rows and vectorise. The solution exposes ``(S, A)`` views.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import NamedTuple

import numpy as np

from bayesirl.errors import SolverError
from bayesirl.kernels import soft_max_actions, soft_newton_dense
from bayesirl.solver import compiled
from bayesirl.solver.defaults import DEFAULT_TOL
from bayesirl.solver.dynamics import Dynamics
from bayesirl.solver.linear import Preconditioner, solve_discounted


class SoftSolution(NamedTuple):
    """Fixed point of the soft Bellman equation and how it was reached."""

    values: np.ndarray  # (S,)
    q_by_action: np.ndarray  # (A, S)
    policy_by_action: np.ndarray  # (A, S)
    log_policy_by_action: np.ndarray  # (A, S), Q - V, so that tiny probabilities keep digits
    iterations: int  # backups (value iteration) or Newton steps
    matvecs: int  # CSR sweeps spent, backups included
    bound: float = float("nan")  # width of the box that holds the fixed point (see module)

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


_EPS = float(np.finfo(float).eps)


def rounding_factor(max_row_nnz: int, n_actions: int) -> float:
    """``c`` such that rounding alone leaves a residual span of at most ``c * eps * M``.

    ``M`` is the largest of ``|Q|``, ``|T(V)|`` and ``|V|``. Per entry of ``D = T(V) - V``:
    ``E[V'|s,a]`` sums ``k = max_row_nnz`` products with weights summing to one, error
    ``<= (k + 1) eps M`` (recursive summation, Higham, *Accuracy and Stability of Numerical
    Algorithms*, 2nd ed., sec. 4.2); adding ``r`` and scaling by ``g``, ``2 eps M``; the
    log-sum-exp over ``A`` actions adds ``(A + 2) eps`` from the sum of exponentials (our
    exponential is within 1.5 ulp) plus ``eps M`` for adding the maximum back; the final
    subtraction ``eps M``: ``(k + A + 7) eps M`` per entry. An iterate that is the exact
    solution up to its own rounding (``eps M`` per entry) has a true residual of at most
    ``(1 + g) eps M <= 2 eps M`` per entry. The computed span is then at most twice the sum,
    ``2 (k + A + 9) eps M``. A worst-case bound (typical rounding is far smaller), so a
    converged Newton iterate reaches it.
    """
    return 2.0 * (max_row_nnz + n_actions + 9)


def _converged(span: float, scale: float, tol: float, factor: float, size: float) -> bool:
    # The box g/(1-g) * span must be narrower than tol, unless rounding (factor * eps * size)
    # already dominates the span: then the box is as narrow as float64 can make it.
    return scale * span <= max(tol, scale * factor * _EPS * size)


def _size(q, new_values, values) -> float:
    return max(float(np.abs(q).max()), float(np.abs(new_values).max()),
               float(np.abs(values).max()))


def _finish(q, new_values, policy, residual, discount, iterations, matvecs) -> SoftSolution:
    # q was computed from the last input V, new_values = T(V). The fixed point is
    # T(V) + shift up to the tolerance; Q moves by g * (mid residual + shift) to match it.
    scale = discount / (1.0 - discount) if discount > 0 else 0.0
    hi, lo = residual.max(), residual.min()
    mid = 0.5 * (hi + lo)
    shift = scale * mid
    return SoftSolution(
        new_values + shift, q + discount * (mid + shift), policy, q - new_values,
        iterations, matvecs, float(scale * (hi - lo)),
    )


def _start(dyn: Dynamics, reward: np.ndarray, values0):
    reward_am = np.ascontiguousarray(reward.T)
    if values0 is None:
        return reward_am, np.zeros(dyn.n_states)
    values = np.array(values0, dtype=float)
    # Relative values: drop the constant a warm start carries (see the module docstring).
    return reward_am, values - values.mean()


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
    factor = rounding_factor(dyn.max_row_nnz, dyn.n_actions)
    for it in range(1, max_iter + 1):
        q, new_values, policy = _backup(dyn, reward_am, discount, values)
        residual = new_values - values
        span = residual.max() - residual.min()
        if _converged(span, scale, tol, factor, _size(q, new_values, values)):
            return _finish(q, new_values, policy, residual, discount, it, it)
        values = new_values - new_values.mean()
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
    factor = rounding_factor(dyn.max_row_nnz, dyn.n_actions)
    starts = [values, *(g - g.mean() for g in guesses)]
    budget = compiled.factor_budget(dyn, precond)
    done = matvecs = 0
    if budget is not None:  # no factors in play: the whole solve in one kernel call
        out = compiled.newton(dyn, reward_am, discount, starts, tol, max_iter, factor, budget)
        if not isinstance(out, compiled.Handover):
            return SoftSolution(*out[:7])
        # A step wants a factorisation: factor at the iterate reached, continue below.
        precond.refresh(dyn.policy_matrix_by_action(out.policy_by_action), discount)
        starts, done, matvecs = [out.values], out.iterations, out.matvecs
    return _newton_python(dyn, reward_am, discount, starts, tol, max_iter - done, precond,
                          factor, done, matvecs)


def _newton_python(dyn, reward_am, discount, starts, tol, max_iter, precond, factor, done,
                   matvecs) -> SoftSolution:
    """The Newton loop with :func:`solve_discounted` steps (LU-preconditioned GMRES)."""
    scale = discount / (1.0 - discount) if discount > 0 else 0.0
    first = _best_start(dyn, reward_am, discount, starts)
    values = starts[0]
    matvecs += len(starts) - 1
    for it in range(1, max_iter + 1):
        if first is not None:
            values, (q, new_values, policy), first = *first, None
        else:
            q, new_values, policy = _backup(dyn, reward_am, discount, values)
        matvecs += 1
        residual = new_values - values
        span = residual.max() - residual.min()
        size = _size(q, new_values, values)
        if _converged(span, scale, tol, factor, size):
            return _finish(q, new_values, policy, residual, discount, done + it, matvecs)
        # Remove the constant part: the policy ignores it and the final shift restores it.
        centred = residual - residual.mean()
        # Forcing term: shrinks with the residual (superlinear convergence), but never asks
        # for more than the stopping rule needs after this step.
        needed = 0.1 * max(tol, scale * factor * _EPS * size) / (scale * span)
        forcing = min(1e-2, max(1e-12, needed, span / (1.0 + np.abs(new_values).max())))
        step, used = solve_discounted(
            dyn.policy_matrix_by_action(policy), discount, centred, x0=None, rtol=forcing,
            precond=precond, what="soft Newton step",
        )
        matvecs += used
        values = values + step
        values -= values.mean()
    raise SolverError(
        f"soft Newton: span of the Bellman residual still {span:.3e} after {done + max_iter} "
        "steps"
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
    factor = rounding_factor(dyn.max_row_nnz, dyn.n_actions)
    values, q, policy, log_policy, it, bound = soft_newton_dense(
        dyn.dense, reward_am, float(discount), values, float(tol), int(max_iter), factor
    )
    if it < 0:
        raise SolverError(f"soft Newton (dense): not converged after {max_iter} steps")
    return SoftSolution(values, q, policy, log_policy, it, it, float(bound))
