"""Solvers on plain arrays: soft and hard Bellman equations, finite horizons, adjoints.

Imports only :mod:`bayesirl.kernels` and :mod:`bayesirl.errors`.
"""

from typing import TYPE_CHECKING

from bayesirl.lazy import exports

# Imported on first use (bayesirl.lazy): building a TabularMDP needs only Dynamics, and
# `bayesirl check` loads neither numba nor the sparse linear solvers.
_EXPORTS = {
    "DEFAULT_TOL": "bayesirl.solver.defaults",
    "Dynamics": "bayesirl.solver.dynamics",
    "FiniteSolution": "bayesirl.solver.finite",
    "forward_adjoint": "bayesirl.solver.finite",
    "soft_backward": "bayesirl.solver.finite",
    "HardSolution": "bayesirl.solver.hard",
    "evaluate_deterministic": "bayesirl.solver.hard",
    "policy_iteration": "bayesirl.solver.hard",
    "Preconditioner": "bayesirl.solver.linear",
    "solve_discounted": "bayesirl.solver.linear",
    "SoftSolution": "bayesirl.solver.soft",
    "logsumexp_rows": "bayesirl.solver.soft",
    "soft_backup": "bayesirl.solver.soft",
    "soft_newton": "bayesirl.solver.soft",
    "soft_value_iteration": "bayesirl.solver.soft",
}
__getattr__, __dir__ = exports(__name__, _EXPORTS, globals())

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


if TYPE_CHECKING:  # the same names, eagerly, for type checkers
    from bayesirl.solver.defaults import DEFAULT_TOL
    from bayesirl.solver.dynamics import Dynamics
    from bayesirl.solver.finite import FiniteSolution, forward_adjoint, soft_backward
    from bayesirl.solver.hard import HardSolution, evaluate_deterministic, policy_iteration
    from bayesirl.solver.linear import Preconditioner, solve_discounted
    from bayesirl.solver.soft import (
        SoftSolution,
        logsumexp_rows,
        soft_backup,
        soft_newton,
        soft_value_iteration,
    )
