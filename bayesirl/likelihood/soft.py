"""Soft-Q (maximum causal entropy) likelihood: discounted and finite-horizon.

Internally the reward is ``beta * phi . w`` with unit temperature, since the policy depends on
``beta * w`` only. Discounted gradient (docs/likelihood.md):

    rho = sum_t (g P(.|s_t,a_t) - e_{s_t}),   (I - g P_pi^T) m = rho,
    dL/dw = beta * (sum_t phi(s_t,a_t) + sum_s m(s) phi_pi(s)).
"""

from __future__ import annotations

import numpy as np

from bayesirl.errors import SolverError
from bayesirl.kernels import adjoint_dense
from bayesirl.likelihood.counts import policy_feature_sum, push_back
from bayesirl.likelihood.predict import predict, remember
from bayesirl.solver import (
    Preconditioner,
    compiled,
    forward_adjoint,
    soft_backward,
    soft_newton,
    solve_discounted,
)
from bayesirl.solver.defaults import (  # noqa: F401 - ADJOINT_RTOL, ... are read as soft.*
    ADJOINT_RTOL,
    DEFAULT_TOL,
    MAX_LINEAR_ITERATIONS,
    MAX_NEWTON_STEPS,
)

# Defaults of the adjoint tolerance and the work caps: bayesirl/solver/defaults.py.


def new_cache(mdp, counts, tol: float = DEFAULT_TOL, gradient_rtol: float = ADJOINT_RTOL,
              max_steps: int = MAX_NEWTON_STEPS,
              max_matvecs: int = MAX_LINEAR_ITERATIONS) -> dict:
    """Warm-start storage plus the weight-independent adjoint source ``rho``."""
    g = mdp.discount
    if mdp.horizon is None:
        rho = g * push_back(mdp, counts.sa) - counts.s
    else:
        rho = -counts.s.copy()
        for t in range(1, mdp.horizon):
            rho[t] += g * push_back(mdp, counts.sa[t - 1])
    return {
        "rho": rho, "values": None, "adjoint": None, "tol": tol, "gradient_rtol": gradient_rtol,
        "precond": Preconditioner(), "path": None, "max_steps": max_steps,
        "max_matvecs": max_matvecs,
    }


def evaluate(mdp, counts, cache, w, beta, gradient: bool = True, work: dict | None = None):
    """Return ``(log L, dlogL/dw)`` (gradient None unless asked); updates ``cache``.

    ``work``, if given, accumulates the solver's effort (see :func:`new_work`).
    """
    work = {} if work is None else work
    reward = beta * mdp.reward(w)
    if mdp.horizon is not None:
        sol = soft_backward(mdp.dynamics, reward, mdp.discount, mdp.horizon)
        loglik = float(np.sum(counts.sa * sol.log_policy.reshape(mdp.horizon, -1)))
        if not gradient:
            return loglik, None
        m = forward_adjoint(mdp.dynamics, sol.policy, mdp.discount, cache["rho"])
        grad = counts.feature_total + policy_feature_sum(mdp, sol.policy, m)
        return loglik, beta * grad
    guess = predict(cache["path"], beta * w)
    sol = _value_solve(mdp, reward, cache, guess, work)
    _add(work, newton_steps=sol.iterations, value_matvecs=sol.matvecs)
    cache["values"] = sol.values
    loglik = float(np.sum(counts.sa.reshape(mdp.n_states, -1) * sol.log_policy))
    if not gradient:
        return loglik, None
    if mdp.dynamics.dense is not None:
        m = adjoint_dense(mdp.dynamics.dense, sol.policy_by_action, mdp.discount, cache["rho"])
        grad = counts.feature_total + policy_feature_sum(mdp, sol.policy, m)
        return loglik, beta * grad
    m = _adjoint_solve(mdp, sol, cache, cache["adjoint"] if guess is None else guess[1], work)
    cache["adjoint"] = m
    cache["path"] = remember(cache["path"], beta * w, sol.values, m)
    grad = counts.feature_total + policy_feature_sum(mdp, sol.policy, m)
    return loglik, beta * grad


def new_work() -> dict[str, int]:
    """Counters of solver effort: Newton steps, mat-vecs (value solves count their backups),
    adjoint solves and their mat-vecs, and retries from cold after a failed warm start."""
    return {"newton_steps": 0, "value_matvecs": 0, "adjoint_solves": 0, "adjoint_matvecs": 0,
            "cold_retries": 0}


def _add(work: dict, **counts: int) -> None:
    for key, n in counts.items():
        work[key] = work.get(key, 0) + int(n)


def _value_solve(mdp, reward, cache, guess, work):
    """The soft Bellman solve from the warm starts; if that fails, once more from cold.

    A warm start only ever saves work, so a failure from one must not end the evaluation
    (nor poison later ones): the retry starts from zero values with a new preconditioner
    and forgets the path that predicted the start.
    """
    warm = cache["values"] is not None or guess is not None or cache["precond"].lu is not None
    try:
        return soft_newton(
            mdp.dynamics, reward, mdp.discount, cache["values"], tol=cache["tol"],
            max_iter=cache["max_steps"], precond=cache["precond"],
            guesses=() if guess is None else (guess[0],),
        )
    except SolverError:
        if not warm:
            raise
    _add(work, cold_retries=1)
    cache["precond"], cache["path"], cache["values"] = Preconditioner(), None, None
    return soft_newton(mdp.dynamics, reward, mdp.discount, None, tol=cache["tol"],
                       max_iter=cache["max_steps"], precond=cache["precond"])


def _adjoint_solve(mdp, sol, cache, m0, work):
    """``(I - g P_pi^T) m = rho`` from the warm start ``m0``, retried cold if that fails."""
    dyn = mdp.dynamics

    def solve(x0, precond):
        budget, used = compiled.factor_budget(dyn, precond), 0
        if budget is not None:  # no factors in play: one kernel call, no scipy objects
            x0, used, handed_over = compiled.adjoint(
                dyn, sol.policy_by_action, mdp.discount, cache["rho"], x0,
                cache["gradient_rtol"], cache["max_matvecs"], budget, "likelihood adjoint")
            if not handed_over:
                _add(work, adjoint_solves=1, adjoint_matvecs=used)
                return x0
        matrix = dyn.policy_matrix_by_action(sol.policy_by_action)
        if budget is not None:  # GMRES asked for factors: continue from where it stopped
            precond.refresh(matrix, mdp.discount)
        m, more = solve_discounted(
            matrix, mdp.discount, cache["rho"], x0=x0, rtol=cache["gradient_rtol"],
            transpose=True, precond=precond, maxiter=cache["max_matvecs"],
            what="likelihood adjoint",
        )
        _add(work, adjoint_solves=1, adjoint_matvecs=used + more)
        return m

    try:
        return solve(m0, cache["precond"])
    except SolverError:
        if m0 is None and cache["precond"].lu is None:
            raise
    _add(work, cold_retries=1)
    cache["precond"] = Preconditioner()
    return solve(None, cache["precond"])


# Public names of the warm-started solves (each with its cold retry) and the work counter,
# shared with likelihood.marginal, whose evidence sees the weights only through the policy.
value_solve = _value_solve
adjoint_solve = _adjoint_solve
add_work = _add
