"""Feature matching at the maximum-likelihood weights (finite horizon, undiscounted).

Outside reference: Ziebart, Maas, Bagnell & Dey (2008), "Maximum Entropy Inverse Reinforcement
Learning", AAAI: at the maximum-likelihood weights the expected feature counts of the fitted
policy from the demonstrations' start states equal the empirical feature counts. The expected
counts are computed here by an own backward pass (policy) and forward pass (state
distributions) in numpy; bayesirl supplies only the log-likelihood and gradient used by the
optimiser.

The identity is exact for deterministic dynamics (the setting of Ziebart et al. 2008). With
stochastic dynamics the gradient of sum_t log pi_t(a_t|s_t) is, by telescoping
log pi_t = Q_t - V_t (derived here),

    grad / beta = sum_t phi(s_t,a_t) - sum_ep G_0(s_0)
                  - sum_ep sum_{t>=1} [G_t(s_t) - E_{s'~P(.|s_{t-1},a_{t-1})} G_t(s')],

with G_t(s) the expected future feature count from s at time t; the last sum (a martingale
with zero mean, but not zero in a sample) is what separates the MLE from plain feature
matching. Both statements are tested.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.optimize as so
from scipy.special import logsumexp

from bayesirl import BoltzmannLikelihood, TabularMDP, simulate

N_STATES, N_ACTIONS, N_FEATURES, HORIZON = 10, 3, 3, 8
BETA = 1.5
FD_STEP = 1e-4


def _problem(kind: str, dynamics: str, seed: int = 21):
    rng = np.random.default_rng(seed)
    if dynamics == "stochastic":
        trans = rng.dirichlet(np.full(N_STATES, 0.5), size=(N_STATES, N_ACTIONS))
    else:
        trans = np.zeros((N_STATES, N_ACTIONS, N_STATES))
        nxt = rng.integers(N_STATES, size=(N_STATES, N_ACTIONS))
        trans[np.arange(N_STATES)[:, None], np.arange(N_ACTIONS)[None, :], nxt] = 1.0
    shape = (N_STATES, N_FEATURES) if kind == "state" else (N_STATES, N_ACTIONS, N_FEATURES)
    phi = rng.normal(size=shape)
    w_true = np.array([0.8, -0.5, 0.3])
    mdp = TabularMDP(trans, phi, discount=1.0, horizon=HORIZON)
    demos = simulate(mdp, w_true, episodes=60, length=HORIZON, rationality=BETA, seed=rng,
                     start=np.full(N_STATES, 1.0 / N_STATES))
    return trans, mdp, demos


def _own_backward(trans, phi_sa, w, beta):
    """Time-dependent soft policy (H, S, A) for reward beta * phi . w, V_H = 0, discount 1."""
    reward = beta * (phi_sa @ w)
    v = np.zeros(N_STATES)
    policy = np.empty((HORIZON, N_STATES, N_ACTIONS))
    for t in range(HORIZON - 1, -1, -1):
        q = reward + trans @ v
        v = logsumexp(q, axis=1)
        policy[t] = np.exp(q - v[:, None])
    return policy


def _own_future_counts(trans, phi_sa, policy):
    """G_t(s) = sum_a pi_t(a|s) [phi(s, a) + sum_s' P(s'|s, a) G_{t+1}(s')], G_H = 0."""
    g = np.zeros((HORIZON + 1, N_STATES, N_FEATURES))
    for t in range(HORIZON - 1, -1, -1):
        g[t] = np.einsum("sa,saf->sf", policy[t], phi_sa + trans @ g[t + 1])
    return g


def _own_expected_counts(trans, phi_sa, policy, start_counts):
    """sum_t sum_s d_t(s) sum_a pi_t(a|s) phi(s, a) with d_{t+1} = d_t P_{pi_t}."""
    d = start_counts.astype(float)
    total = np.zeros(N_FEATURES)
    for t in range(HORIZON):
        total += np.einsum("s,sa,saf->f", d, policy[t], phi_sa)
        d = np.einsum("s,sa,sat->t", d, policy[t], trans)
    return total


def _mle(lik, n_features):
    def negative(w):
        value, grad = lik.value_and_grad(w)
        return -value, -grad

    res = so.minimize(negative, np.zeros(n_features), jac=True, method="BFGS",
                      options={"gtol": 1e-10, "maxiter": 1000})
    w = res.x
    # BFGS' line search cannot resolve loglik changes below its rounding (~1e-13 on |L| ~ 500),
    # so it may stop with a gradient ~1e-7 ("precision loss"); Newton steps on the central
    # finite-difference Hessian of our gradient then bring the gradient to rounding level.
    for _ in range(3):
        cols = []
        for j in range(n_features):
            e = np.zeros(n_features)
            e[j] = FD_STEP
            cols.append((lik.value_and_grad(w + e)[1] - lik.value_and_grad(w - e)[1])
                        / (2 * FD_STEP))
        hess = np.column_stack(cols)
        w = w - np.linalg.solve(0.5 * (hess + hess.T), lik.value_and_grad(w)[1])
    return w


def _fit_and_count(kind, dynamics):
    trans, mdp, demos = _problem(kind, dynamics)
    lik = BoltzmannLikelihood(mdp, demos, rationality=BETA)
    w_hat = _mle(lik, N_FEATURES)
    assert np.abs(lik.value_and_grad(w_hat)[1]).max() < 1e-10  # the brief's gtol, reached
    assert np.all(demos.lengths == HORIZON)  # full-length episodes, all starting at t = 0

    phi_sa = np.asarray(mdp.features_sa)
    st = demos.steps
    empirical = phi_sa[st.states, st.actions].sum(axis=0)
    scale = np.abs(phi_sa[st.states, st.actions]).sum(axis=0)  # sum of |phi|, ~ N H = 480

    policy = _own_backward(trans, phi_sa, w_hat, BETA)
    # bayesirl's time-dependent policy is the same object (backward recursion, no iteration;
    # rounding only).
    np.testing.assert_allclose(mdp.soft_policy(w_hat, BETA), policy, rtol=0, atol=1e-12)
    start_counts = np.bincount(demos.start_states, minlength=N_STATES)
    expected = _own_expected_counts(trans, phi_sa, policy, start_counts)
    return trans, demos, phi_sa, w_hat, policy, empirical, expected, scale


# Tolerance for both tests: at the MLE, |grad| / beta < 1e-10 / 1.5 absolute, plus rounding of
# sums of ~480 O(1) terms (~1e-13). Relative to sum |phi| (> 300) that is < 1e-12; the checks
# are at 1e-9 of sum |phi| (the brief's 1e-7 relative is looser than needed).
REL = 1e-9


@pytest.mark.parametrize("kind", ["state", "state_action"])
def test_feature_matching_at_mle_deterministic_dynamics(kind):
    # Ziebart et al. (2008): empirical feature counts = expected counts from the start states.
    trans, demos, phi_sa, w_hat, _, empirical, expected, scale = _fit_and_count(
        kind, "deterministic"
    )
    np.testing.assert_allclose(expected, empirical, rtol=0, atol=REL * scale.min())
    # Non-vacuous: 10% away from the MLE the counts no longer match.
    start_counts = np.bincount(demos.start_states, minlength=N_STATES)
    off = _own_expected_counts(
        trans, phi_sa, _own_backward(trans, phi_sa, 0.9 * w_hat, BETA), start_counts
    )
    assert np.abs(off - empirical).max() > 1e-3 * scale.min()


@pytest.mark.parametrize("kind", ["state", "state_action"])
def test_feature_matching_at_mle_stochastic_dynamics_with_martingale_terms(kind):
    trans, demos, phi_sa, _, policy, empirical, expected, scale = _fit_and_count(
        kind, "stochastic"
    )
    future = _own_future_counts(trans, phi_sa, policy)
    # Cross-check of the two own passes: sum over episodes of G_0(s_0) = forward-pass counts.
    np.testing.assert_allclose(future[0][demos.start_states].sum(axis=0), expected,
                               rtol=0, atol=1e-12 * scale.min())
    martingale = np.zeros(N_FEATURES)
    for states, actions in demos.episodes:
        for t in range(1, HORIZON):
            prev = trans[states[t - 1], actions[t - 1]]
            martingale += future[t][states[t]] - prev @ future[t]
    np.testing.assert_allclose(expected + martingale, empirical, rtol=0, atol=REL * scale.min())
    # Plain feature matching does NOT hold exactly here: the martingale term is O(sqrt(N H)).
    assert np.abs(martingale).max() > 1e-3 * scale.min()
