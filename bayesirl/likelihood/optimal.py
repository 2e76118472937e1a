"""Likelihood with actions ~ exp(beta Q*), Q* of the hard-optimal policy.

With ``g`` the greedy policy (lowest index on ties) and ``pi`` the Boltzmann policy on Q*:

    rho~ = sum_t (P(.|s_t,a_t) - sum_a pi(a|s_t) P(.|s_t,a)),   (I - g P_g^T) m~ = g rho~,
    dL/dw = beta * (sum_t (phi(s_t,a_t) - sum_a pi(a|s_t) phi(s_t,a)) + sum_s m~(s) phi_g(s)).

Valid wherever the greedy policy is unique, that is almost everywhere in ``w``.
"""

from __future__ import annotations

import numpy as np

from bayesirl.errors import SolverError
from bayesirl.likelihood.counts import policy_feature_sum, push_back
from bayesirl.likelihood.soft import ADJOINT_RTOL, MAX_LINEAR_ITERATIONS, MAX_NEWTON_STEPS
from bayesirl.solver import Preconditioner, logsumexp_rows, policy_iteration, solve_discounted
from bayesirl.solver.finite import forward_adjoint


def new_cache(mdp, counts, tol: float = 0.0, gradient_rtol: float = ADJOINT_RTOL,
              max_steps: int = MAX_NEWTON_STEPS,
              max_matvecs: int = MAX_LINEAR_ITERATIONS) -> dict:
    """Warm start: the previous greedy policy and adjoint (policy iteration is exact)."""
    return {"greedy": None, "adjoint": None, "gradient_rtol": gradient_rtol,
            "max_matvecs": max_matvecs, "precond": Preconditioner()}


def _boltzmann(q_star, beta):
    logits = beta * q_star
    log_policy = logits - logsumexp_rows(logits)[:, None]
    return log_policy, np.exp(log_policy)


def _one_hot(greedy, n_a):
    out = np.zeros((greedy.shape[0], n_a))
    out[np.arange(greedy.shape[0]), greedy] = 1.0
    return out


def evaluate(mdp, counts, cache, w, beta, gradient: bool = True, work: dict | None = None):
    """Return ``(log L, dlogL/dw)``; updates the warm starts in ``cache``.

    The gradient costs little beside policy iteration here, so it is always computed.
    ``work`` is accepted for the same signature as the soft model and left unchanged.
    """
    if mdp.horizon is not None:
        return _evaluate_finite(mdp, counts, w, beta)
    g = mdp.discount
    sol = policy_iteration(mdp.dynamics, mdp.reward(w), g, cache["greedy"])
    cache["greedy"] = sol.greedy
    log_policy, policy = _boltzmann(sol.q, beta)
    loglik = float(counts.sa @ log_policy.ravel())
    expected = (counts.s[:, None] * policy).ravel()
    rho = push_back(mdp, counts.sa - expected)
    m = _adjoint(mdp, sol.greedy, g * rho, cache)
    cache["adjoint"] = m
    one_hot = _one_hot(sol.greedy, mdp.n_actions)
    grad = counts.feature_total - policy_feature_sum(mdp, policy, counts.s)
    grad = grad + policy_feature_sum(mdp, one_hot, m)
    return loglik, beta * grad


def _adjoint(mdp, greedy, source, cache):
    """The adjoint from the previous one; once more from zero if that fails (see soft.py)."""
    matrix = mdp.dynamics.greedy_matrix(greedy)

    def solve(x0):
        # Preconditioned like the soft model's adjoint: near discount 1 a deterministic
        # policy's I - g P_g^T stalls plain GMRES (seen at 0.9999 on the bus-engine model).
        return solve_discounted(matrix, mdp.discount, source, x0=x0,
                                rtol=cache["gradient_rtol"], transpose=True,
                                precond=cache["precond"], maxiter=cache["max_matvecs"],
                                what="optimal-Q adjoint")[0]

    try:
        return solve(cache["adjoint"])
    except SolverError:
        if cache["adjoint"] is None and cache["precond"].lu is None:
            raise
    cache["precond"] = Preconditioner()
    return solve(None)


def _evaluate_finite(mdp, counts, w, beta):
    dyn, g, h = mdp.dynamics, mdp.discount, mdp.horizon
    reward = mdp.reward(w)
    n_s, n_a = mdp.n_states, mdp.n_actions
    q = np.empty((h, n_s, n_a))
    greedy = np.empty((h, n_s, n_a))
    v_next = np.zeros(n_s)
    for t in range(h - 1, -1, -1):
        q[t] = reward + g * dyn.expected_next(v_next)
        best = np.argmax(q[t], axis=1)
        greedy[t] = _one_hot(best, n_a)
        v_next = q[t][np.arange(n_s), best]
    loglik = 0.0
    grad = counts.feature_total.copy()
    sources = np.zeros((h, n_s))
    for t in range(h):
        log_policy, policy = _boltzmann(q[t], beta)
        loglik += float(counts.sa[t] @ log_policy.ravel())
        grad -= policy_feature_sum(mdp, policy, counts.s[t])
        if t + 1 < h:
            expected = (counts.s[t][:, None] * policy).ravel()
            sources[t + 1] = g * push_back(mdp, counts.sa[t] - expected)
    m = forward_adjoint(dyn, greedy, g, sources)
    grad = grad + policy_feature_sum(mdp, greedy, m)
    return loglik, beta * grad
