"""Soft Bellman fixed point vs a general-purpose root finder.

Outside reference: scipy.optimize.root, method "hybr" (MINPACK's Powell hybrid method;
Moré, Garbow & Hillstrom 1980), on F(V) = V - log sum_a exp(beta r + g P V), written here from
the definition without any bayesirl solver code.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.optimize as so
from scipy.special import logsumexp

from bayesirl import TabularMDP
from bayesirl.solver import DEFAULT_TOL

N_STATES, N_ACTIONS, N_FEATURES, DISCOUNT = 8, 3, 2, 0.9


def _random_mdp(seed: int):
    rng = np.random.default_rng(seed)
    trans = rng.dirichlet(np.full(N_STATES, 0.5), size=(N_STATES, N_ACTIONS))
    phi = rng.normal(size=(N_STATES, N_ACTIONS, N_FEATURES))
    w = rng.normal(size=N_FEATURES)
    return trans, phi, w


def _root_values(trans, phi, w, beta):
    reward = beta * (phi @ w)

    def residual(v):
        return v - logsumexp(reward + DISCOUNT * (trans @ v), axis=1)

    sol = so.root(residual, np.zeros(N_STATES), method="hybr", options={"xtol": 1e-14})
    # Status 3 ("xtol too small, no further improvement") means hybr reached rounding level;
    # what counts is the residual bound below.
    assert sol.status in (1, 3), sol.message
    # |V_root - V*| <= ||(I - g P_pi)^-1|| * |F(V_root)| <= |F| / (1 - g).
    err = np.abs(residual(sol.x)).max() / (1 - DISCOUNT)
    q = reward + DISCOUNT * (trans @ sol.x)
    return sol.x, q, np.exp(q - sol.x[:, None]), err


@pytest.mark.parametrize("method", ["newton", "value-iteration"])
@pytest.mark.parametrize("beta", [1.0, 3.0])
def test_soft_values_equal_scipy_root(method, beta):
    trans, phi, w = _random_mdp(seed=3)
    mdp = TabularMDP(trans, phi, discount=DISCOUNT)
    v_ref, q_ref, pi_ref, root_err = _root_values(trans, phi, w, beta)
    assert root_err < 1e-12
    sol = mdp.solve(w, rationality=beta, method=method)
    # Tolerances (derived from the solver's stopping rule, DEFAULT_TOL = 1e-10):
    # - values: the solver stops when the MacQueen-Porteus box g/(1-g) [min D, max D] around
    #   T(V) is narrower than tol and returns its midpoint, so |V - V*| <= tol / 2; with the
    #   root finder's own error (< 1e-12, checked above) the bound is 5e-11 + 1e-12.
    # - policy: log pi = Q(V) - T(V) at the last iterate V differs from log pi* by at most
    #   g * span(V - V*) <= g * span(D) / (1 - g) <= tol; probabilities are <= 1, so the same
    #   bound holds for pi, plus the root finder's error.
    v_tol = DEFAULT_TOL / 2 + root_err
    np.testing.assert_allclose(sol.values, v_ref, rtol=0, atol=v_tol)
    np.testing.assert_allclose(sol.policy, pi_ref, rtol=0, atol=DEFAULT_TOL + 2 * root_err)
    # Q = beta r + g P V: moves with V by at most g |V - V*| (plus the same error sources).
    np.testing.assert_allclose(sol.q, q_ref, rtol=0, atol=v_tol)
    # Non-vacuous: values are O(10) and vary across states, so an O(tol) agreement matters.
    assert np.ptp(v_ref) > 0.1 and np.abs(v_ref).max() > 1.0
