"""The soft policy and the exact gradient of any log-likelihood that sees ``w`` only through it.

Evidence with unrecorded actions or states (``bayesirl.evidence.partial``) has a log-likelihood
``L(pi)`` that depends on the weights only through the soft policy. By Fisher's identity its
derivative in ``log pi(a|s)`` (each entry taken as free) is the expected count ``N(s, a)`` of
step ``(s, a)`` under the posterior over the unrecorded parts. Since ``d log pi(a|s) = dQ(s,a)
- dV(s)``, the gradient is then exactly that of a Boltzmann log-likelihood with the fractional
counts ``N`` held fixed, so the adjoint of DEVELOPERS.md ("Likelihood") applies unchanged:

    rho = g P^T N_sa - N_s,   (I - g P_pi^T) m = rho,   dL/dw = beta (N_sa . phi + m . phi_pi),

with the time-resolved forward adjoint under a finite horizon. The warm starts (values,
adjoint, preconditioner, path) are the discounted cache of :mod:`bayesirl.likelihood.soft`, so
:mod:`bayesirl.likelihood.warm` snapshots and saves them the same way.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl.kernels import adjoint_dense
from bayesirl.likelihood import soft
from bayesirl.likelihood.counts import policy_feature_sum, push_back
from bayesirl.likelihood.predict import predict, remember
from bayesirl.solver import forward_adjoint, soft_backward


class PolicySolve(NamedTuple):
    """The soft policy at ``beta * w`` and what the gradient step needs from the solve."""

    policy: np.ndarray  # (S, A), or (H, S, A) with a horizon
    solution: object  # SoftSolution or FiniteSolution
    guess: tuple | None  # the path's predicted (values, adjoint), discounted only


def new_cache(mdp, settings: dict) -> dict:
    """A discounted warm-start cache like the Boltzmann likelihood's (``rho`` set per call).

    ``settings``: ``tol``, ``gradient_rtol`` and optionally the iteration caps
    ``max_newton_steps`` and ``max_linear_iterations`` (the problem file's ``[solver]``)."""
    lead = () if mdp.horizon is None else (mdp.horizon,)
    counts = _Counts(np.zeros(lead + (mdp.n_states * mdp.n_actions,)),
                     np.zeros(lead + (mdp.n_states,)), np.zeros(mdp.n_features))
    caps = {"max_steps": settings.get("max_newton_steps", soft.MAX_NEWTON_STEPS),
            "max_matvecs": settings.get("max_linear_iterations", soft.MAX_LINEAR_ITERATIONS)}
    return soft.new_cache(mdp, counts, tol=settings["tol"],
                          gradient_rtol=settings["gradient_rtol"], **caps)


class _Counts(NamedTuple):
    sa: np.ndarray
    s: np.ndarray
    feature_total: np.ndarray


def solve_policy(mdp, cache: dict, w: np.ndarray, beta: float, work: dict) -> PolicySolve:
    """Soft Bellman solve for reward ``beta * phi . w`` from the cache's warm starts."""
    reward = beta * mdp.reward(w)
    if mdp.horizon is not None:
        sol = soft_backward(mdp.dynamics, reward, mdp.discount, mdp.horizon)
        return PolicySolve(sol.policy, sol, None)
    guess = predict(cache["path"], beta * w)
    sol = soft.value_solve(mdp, reward, cache, guess, work)
    soft.add_work(work, newton_steps=sol.iterations, value_matvecs=sol.matvecs)
    cache["values"] = sol.values
    return PolicySolve(sol.policy, sol, guess)


def gradient(mdp, cache: dict, solved: PolicySolve, n_sa: np.ndarray, w: np.ndarray,
             beta: float, work: dict) -> np.ndarray:
    """``dL/dw`` for expected step counts ``n_sa`` ((S*A,) or (H, S*A)) at the solved policy."""
    g, n_s, n_a = mdp.discount, mdp.n_states, mdp.n_actions
    feature_total = n_sa.reshape(-1, n_s * n_a).sum(axis=0) @ mdp.features_sa.reshape(
        n_s * n_a, mdp.n_features)
    n_state = n_sa.reshape(*n_sa.shape[:-1], n_s, n_a).sum(axis=-1)
    if mdp.horizon is not None:
        rho = -n_state
        for t in range(1, mdp.horizon):
            rho[t] += g * push_back(mdp, n_sa[t - 1])
        m = forward_adjoint(mdp.dynamics, solved.policy, g, rho)
        return beta * (feature_total + policy_feature_sum(mdp, solved.policy, m))
    cache["rho"] = g * push_back(mdp, n_sa) - n_state
    sol = solved.solution
    if mdp.dynamics.dense is not None:
        m = adjoint_dense(mdp.dynamics.dense, sol.policy_by_action, g, cache["rho"])
    else:
        start = cache["adjoint"] if solved.guess is None else solved.guess[1]
        m = soft.adjoint_solve(mdp, sol, cache, start, work)
        cache["adjoint"] = m
        cache["path"] = remember(cache["path"], beta * w, sol.values, m)
    return beta * (feature_total + policy_feature_sum(mdp, sol.policy, m))
