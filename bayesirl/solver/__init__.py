"""Solvers on plain arrays: soft and hard Bellman equations, finite horizons, adjoints.

Imports only :mod:`bayesirl.kernels` and :mod:`bayesirl.errors`.
"""

from bayesirl.solver.dynamics import Dynamics
from bayesirl.solver.finite import FiniteSolution, forward_adjoint, soft_backward
from bayesirl.solver.hard import HardSolution, evaluate_deterministic, policy_iteration
from bayesirl.solver.linear import Preconditioner, solve_discounted
from bayesirl.solver.soft import (
    DEFAULT_TOL,
    SoftSolution,
    logsumexp_rows,
    soft_backup,
    soft_newton,
    soft_value_iteration,
)

__all__ = [
    "DEFAULT_TOL",
    "Dynamics",
    "FiniteSolution",
    "HardSolution",
    "Preconditioner",
    "SoftSolution",
    "evaluate_deterministic",
    "forward_adjoint",
    "logsumexp_rows",
    "policy_iteration",
    "soft_backup",
    "soft_backward",
    "soft_newton",
    "soft_value_iteration",
    "solve_discounted",
]
