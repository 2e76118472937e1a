"""Soft-Q (maximum causal entropy) likelihood: discounted and finite-horizon.

Internally the reward is ``beta * phi . w`` with unit temperature, since the policy depends on
``beta * w`` only. Discounted gradient (DEVELOPERS.md, "Likelihood"):

    rho = sum_t (g P(.|s_t,a_t) - e_{s_t}),   (I - g P_pi^T) m = rho,
    dL/dw = beta * (sum_t phi(s_t,a_t) + sum_s m(s) phi_pi(s)).
"""

from __future__ import annotations

import numpy as np

from bayesirl.kernels import adjoint_dense
from bayesirl.likelihood.counts import policy_feature_sum, push_back
from bayesirl.likelihood.predict import predict, remember
from bayesirl.solver import (
    DEFAULT_TOL,
    Preconditioner,
    forward_adjoint,
    soft_backward,
    soft_newton,
    solve_discounted,
)

# Relative tolerance of the adjoint solve: the gradient's relative error is about this
# (measured on random MDPs, S = 10^4: 1e-8 -> 8.7e-9). A sampler needs far less: leapfrog
# steps are volume-preserving and reversible for any deterministic vector field, and the
# acceptance uses the log-likelihood, whose own tolerance is separate. Gradient checks pass
# a tighter value (BoltzmannLikelihood(gradient_rtol=...)).
ADJOINT_RTOL = 1e-8


def new_cache(mdp, counts, tol: float = DEFAULT_TOL, gradient_rtol: float = ADJOINT_RTOL) -> dict:
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
        "precond": Preconditioner(), "path": None,
    }


def evaluate(mdp, counts, cache, w, beta, gradient: bool = True):
    """Return ``(log L, dlogL/dw)`` (gradient None unless asked); updates ``cache``."""
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
    sol = soft_newton(
        mdp.dynamics, reward, mdp.discount, cache["values"], tol=cache["tol"],
        precond=cache["precond"], guesses=() if guess is None else (guess[0],),
    )
    cache["values"] = sol.values
    loglik = float(np.sum(counts.sa.reshape(mdp.n_states, -1) * sol.log_policy))
    if not gradient:
        return loglik, None
    if mdp.dynamics.dense is not None:
        m = adjoint_dense(mdp.dynamics.dense, sol.policy_by_action, mdp.discount, cache["rho"])
        grad = counts.feature_total + policy_feature_sum(mdp, sol.policy, m)
        return loglik, beta * grad
    m0 = cache["adjoint"] if guess is None else guess[1]
    m, _ = solve_discounted(
        mdp.dynamics.policy_matrix_by_action(sol.policy_by_action), mdp.discount, cache["rho"],
        x0=m0, rtol=cache["gradient_rtol"], transpose=True, precond=cache["precond"],
        what="likelihood adjoint",
    )
    cache["adjoint"] = m
    cache["path"] = remember(cache["path"], beta * w, sol.values, m)
    grad = counts.feature_total + policy_feature_sum(mdp, sol.policy, m)
    return loglik, beta * grad
