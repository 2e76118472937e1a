"""The compiled sparse path: a whole soft Newton solve, or an adjoint solve, in one kernel call.

Used whenever no LU factorisation is in play (see :mod:`bayesirl.solver.linear`): random and
other fast-mixing MDPs, and every solve before the preconditioner's first factorisation. It
runs the algorithm of the Python path (same starts, stopping rule, forcing terms and the
factorise-or-continue rule of ``linear._with_factors``) inside
:mod:`bayesirl.kernels.newton`, so a warm ``value_and_grad`` builds no scipy object and runs
no Python per Newton step or Krylov iteration. When a step would be cheaper with a
factorisation the kernel hands back its iterate and the caller factors and continues in
Python with SuperLU solves (slow-mixing problems such as grids at high discount).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl.errors import SolverError
from bayesirl.kernels.newton import adjoint_csr, soft_newton_csr
from bayesirl.solver.dynamics import Dynamics
from bayesirl.solver.linear import FACTOR_AFTER, Preconditioner


class Handover(NamedTuple):
    """Where the compiled Newton stopped to let the caller factorise."""

    values: np.ndarray
    policy_by_action: np.ndarray
    iterations: int  # Newton steps completed
    matvecs: int


def factor_budget(dyn: Dynamics, precond: Preconditioner | None) -> int | None:
    """Mat-vecs the compiled path may spend on one solve before handing over to factorise:
    0 = never factorise; None = do not use the compiled path (factors exist)."""
    if precond is None:
        return 0
    if precond.lu is not None:
        return None
    if precond.allowed is None:  # the pattern of P_pi does not depend on the policy
        uniform = np.full((dyn.n_actions, dyn.n_states), 1.0 / dyn.n_actions)
        precond.decide(dyn.policy_matrix_by_action(uniform))
    # Small envelopes used to be factored at the first solve; the compiled GMRES measured
    # faster at every size tried (random and grid, 50-400 states), so they get the budget too.
    return FACTOR_AFTER if precond.allowed else 0


def newton(dyn: Dynamics, reward_am, discount, starts, tol, max_iter, floor_factor,
           budget: int, max_linear: int = 3000):
    """Run :func:`bayesirl.kernels.newton.soft_newton_csr`; returns its tuple on success or a
    :class:`Handover`; raises :class:`SolverError` as the Python path does."""
    ptr, idx, ba_ptr, ba_idx = dyn.kernel_index
    out = soft_newton_csr(
        ptr, idx, dyn.data, ba_ptr, ba_idx, dyn.by_action.data, reward_am,
        float(discount), np.ascontiguousarray(np.stack(starts)), float(tol), int(max_iter),
        float(floor_factor), int(max_linear), int(budget))
    values, q, policy, log_policy, it, matvecs, bound, status, detail = out
    if status == 0:
        return out
    if status == 3:
        return Handover(values, policy, it - 1, matvecs)
    if status == 1:
        raise SolverError(f"soft Newton: span of the Bellman residual still {detail:.3e} "
                          f"after {max_iter} steps")
    raise SolverError(f"soft Newton step: GMRES stopped at relative residual {detail:.3e} "
                      f"after {matvecs} mat-vecs in all")


def adjoint(dyn: Dynamics, policy_am, discount, rhs, x0, rtol, max_linear, budget,
            what: str = "linear system"):
    """``(I - g P_pi^T) m = rhs`` compiled: ``(m, mat-vecs, handed_over)``; when handed over,
    ``m`` is the partial solution to continue from with factors."""
    x0 = np.zeros(rhs.shape[0]) if x0 is None else np.asarray(x0, dtype=float)
    ptr, idx = dyn.kernel_index[:2]
    m, rel, used, status = adjoint_csr(
        ptr, idx, dyn.data, np.ascontiguousarray(policy_am), float(discount),
        rhs, x0, float(rtol), int(max_linear), int(budget))
    if status == 2:
        raise SolverError(f"{what}: GMRES stopped at relative residual {rel:.3e} "
                          f"(wanted {rtol:.1e}) after {used} mat-vecs")
    return m, used, status == 3
