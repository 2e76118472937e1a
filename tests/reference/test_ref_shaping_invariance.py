"""Invariance of policy and likelihood under potential-based shaping and constant shifts.

Outside references: Ng, Harada & Russell (1999), "Policy invariance under reward
transformations", ICML (potential-based shaping r + g E[Phi(s')|s,a] - Phi(s) leaves optimal
policies unchanged, Q*_shaped = Q* - Phi); Cao, Cohen & Szpruch (2021), "Identifiability in
inverse reinforcement learning", NeurIPS (the same for entropy-regularised/soft-optimal
policies: V_shaped = V - Phi, so pi is unchanged).

"Adding to the reward" is done by a second TabularMDP whose state-action features carry one
extra column (the shaping term, or ones) with weight 1 (or c). Since L(w, c) = L(w) for every
c, the extra weight's gradient must vanish and the other components must equal the original
gradient: that exercises the adjoint gradients, not just the values.

Finite horizon: bayesirl's features are stationary, so a time-dependent potential with
Phi_H = 0 (the finite-horizon form of the statement) cannot be expressed; shaping is therefore
tested in the discounted model only. A constant is tested in both.
"""

from __future__ import annotations

import numpy as np
import pytest

from bayesirl import BoltzmannLikelihood, TabularMDP, simulate
from bayesirl.solver import DEFAULT_TOL, policy_iteration

N_STATES, N_ACTIONS, N_FEATURES, DISCOUNT = 10, 3, 3, 0.9
BETA = 1.7
N_EPISODES, LENGTH = 10, 10
SOLVE_TOL = 1e-12


def _base(seed: int = 13):
    rng = np.random.default_rng(seed)
    trans = rng.dirichlet(np.full(N_STATES, 0.5), size=(N_STATES, N_ACTIONS))
    phi = rng.normal(size=(N_STATES, N_ACTIONS, N_FEATURES))
    w = rng.normal(size=N_FEATURES)
    potential = 2.0 * rng.normal(size=N_STATES)
    return trans, phi, w, potential


def _augmented(trans, phi, column, **kw):
    return TabularMDP(trans, np.concatenate([phi, column[..., None]], axis=2), **kw)


def _shaping_column(trans, potential, discount):
    return discount * (trans @ potential) - potential[:, None]


# Likelihood tolerances (derived from the solver/adjoint settings):
# - soft loglik: each model's log pi entries are within DEFAULT_TOL of exact (the stopping rule
#   bounds g * span(V - V*) by tol), so |dL| <= 2 * N * DEFAULT_TOL over N demonstrated steps.
# - gradients: the adjoint m (1^T m = -N, ||m|| ~ N) is solved to a relative residual
#   GRADIENT_RTOL; with cond(I - g P_pi^T) <= (1 + g)/(1 - g) = 19 and |phi| <~ 3, the
#   gradient error is <~ beta * 19 * GRADIENT_RTOL * N * 3 * 2 models, about 2e-7; the
#   policy error adds beta * N * tol * 3 ~ 5e-8. Checked at 1e-6 against gradient entries of
#   size 3-10 (observed differences are ~1e-13).
N_STEPS = N_EPISODES * LENGTH
GRADIENT_RTOL = 1e-11  # passed to the likelihoods: this check compares gradients closely
LOGLIK_ATOL = 2 * N_STEPS * DEFAULT_TOL
GRAD_ATOL = 1e-6
assert GRAD_ATOL > 2 * BETA * 19 * GRADIENT_RTOL * N_STEPS * 3 + BETA * N_STEPS * DEFAULT_TOL * 3


@pytest.mark.parametrize("transform", ["shaping", "constant"])
def test_soft_solution_invariant_discounted(transform):
    trans, phi, w, potential = _base()
    mdp = TabularMDP(trans, phi, discount=DISCOUNT)
    if transform == "shaping":
        column, coef = _shaping_column(trans, potential, DISCOUNT), 1.0
        # Cao, Cohen & Szpruch (2021): V_shaped = V - beta Phi (reward scaled by beta).
        v_shift = -BETA * potential
    else:
        column, coef = np.ones((N_STATES, N_ACTIONS)), 2.7
        v_shift = np.full(N_STATES, BETA * coef / (1 - DISCOUNT))
    mdp2 = _augmented(trans, phi, column, discount=DISCOUNT)
    w2 = np.append(w, coef)
    sol = mdp.solve(w, BETA, tol=SOLVE_TOL)
    sol2 = mdp2.solve(w2, BETA, tol=SOLVE_TOL)
    # Both solves are within SOLVE_TOL/2 of their fixed points (values) and SOLVE_TOL
    # (log-policy entries): the policies agree to 2 * SOLVE_TOL = 2e-12; checked at 1e-10.
    np.testing.assert_allclose(sol2.policy, sol.policy, rtol=0, atol=1e-10)
    np.testing.assert_allclose(sol2.values, sol.values + v_shift, rtol=0, atol=1e-10)
    # Non-vacuous: the transformation changes the rewards a lot.
    assert np.abs(mdp2.reward(w2) - mdp.reward(w)).max() > 1.0


@pytest.mark.parametrize("q", ["soft", "optimal"])
@pytest.mark.parametrize("transform", ["shaping", "constant"])
def test_loglik_and_gradient_invariant_discounted(transform, q):
    trans, phi, w, potential = _base()
    mdp = TabularMDP(trans, phi, discount=DISCOUNT)
    if transform == "shaping":
        column, coef = _shaping_column(trans, potential, DISCOUNT), 1.0
    else:
        column, coef = np.ones((N_STATES, N_ACTIONS)), -1.9
    mdp2 = _augmented(trans, phi, column, discount=DISCOUNT)
    demos = simulate(mdp, w, episodes=N_EPISODES, length=LENGTH, rationality=BETA, seed=4)
    lik = BoltzmannLikelihood(mdp, demos, rationality=BETA, q_function=q,
                              gradient_rtol=GRADIENT_RTOL)
    lik2 = BoltzmannLikelihood(mdp2, demos, rationality=BETA, q_function=q,
                               gradient_rtol=GRADIENT_RTOL)
    base = lik.evaluate(w)
    shaped = lik2.evaluate(np.append(w, coef))
    # The optimal-Q model uses exact policy iteration (LU), so its tolerance is rounding only;
    # the soft bound above covers both.
    assert abs(shaped.loglik - base.loglik) <= LOGLIK_ATOL
    np.testing.assert_allclose(shaped.grad_weights[:N_FEATURES], base.grad_weights,
                               rtol=0, atol=GRAD_ATOL)
    # L(w, c) does not depend on c: the extra weight's gradient is zero.
    assert abs(shaped.grad_weights[N_FEATURES]) <= GRAD_ATOL
    # Non-vacuous: the gradient is far from zero and the extra feature column varies.
    assert np.abs(base.grad_weights).max() > 1.0


def test_optimal_q_shifts_by_potential():
    # Ng, Harada & Russell (1999), Theorem 1: Q*_shaped(s, a) = Q*(s, a) - Phi(s), same greedy
    # policy. Both are exact LU solves; error ~ cond * eps * |Q| ~ 19 * 2e-16 * 50 ~ 2e-13.
    trans, phi, w, potential = _base()
    mdp = TabularMDP(trans, phi, discount=DISCOUNT)
    mdp2 = _augmented(trans, phi, _shaping_column(trans, potential, DISCOUNT),
                      discount=DISCOUNT)
    hard = policy_iteration(mdp.dynamics, mdp.reward(w), DISCOUNT)
    hard2 = policy_iteration(mdp2.dynamics, mdp2.reward(np.append(w, 1.0)), DISCOUNT)
    np.testing.assert_array_equal(hard2.greedy, hard.greedy)
    np.testing.assert_allclose(hard2.q, hard.q - potential[:, None], rtol=0, atol=1e-11)


@pytest.mark.parametrize("kind", ["state", "state_action"])
@pytest.mark.parametrize("discount", [1.0, 0.95])
def test_constant_invariant_finite_horizon(kind, discount):
    # A constant c per step adds c * sum_{k < H - t} g^k to V_t, the same for every state, so
    # the time-dependent policy is unchanged (the backward recursion is exact: rounding only,
    # ~eps * |V| with |V| <~ 30; checked at 1e-11). The likelihood is a sum of 60 log-policy
    # terms: 1e-9. The constant's gradient vanishes up to rounding of the forward adjoint.
    horizon = 6
    trans, phi_sa, w, _ = _base(seed=29)
    phi = phi_sa[:, 0, :] if kind == "state" else phi_sa
    ones = np.ones(phi.shape[:-1])
    mdp = TabularMDP(trans, phi, discount=discount, horizon=horizon)
    mdp2 = TabularMDP(trans, np.concatenate([phi, ones[..., None]], axis=-1),
                      discount=discount, horizon=horizon)
    w2 = np.append(w, 3.1)
    np.testing.assert_allclose(mdp2.soft_policy(w2, BETA), mdp.soft_policy(w, BETA),
                               rtol=0, atol=1e-11)
    demos = simulate(mdp, w, episodes=10, length=horizon, rationality=BETA, seed=8)
    base = BoltzmannLikelihood(mdp, demos, rationality=BETA).evaluate(w)
    shifted = BoltzmannLikelihood(mdp2, demos, rationality=BETA).evaluate(w2)
    assert abs(shifted.loglik - base.loglik) <= 1e-9
    np.testing.assert_allclose(shifted.grad_weights[:N_FEATURES], base.grad_weights,
                               rtol=0, atol=1e-9)
    assert abs(shifted.grad_weights[N_FEATURES]) <= 1e-9
    assert np.abs(base.grad_weights).max() > 1.0
