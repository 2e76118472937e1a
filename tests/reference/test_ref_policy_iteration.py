"""Large-rationality limit and the optimal-Q model vs an independent policy iteration.

Outside reference: Howard (1960) policy iteration, written here from scratch with
scipy.sparse.linalg.spsolve (SuperLU; Li 2005) for policy evaluation; nothing from
bayesirl.solver is used to build the reference.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy.special import log_softmax

from bayesirl import BoltzmannLikelihood, TabularMDP, simulate
from bayesirl.solver import policy_iteration

N_STATES, N_ACTIONS, N_FEATURES, DISCOUNT = 20, 3, 3, 0.9
BIG_BETA = 200.0


def _random_problem(seed: int):
    rng = np.random.default_rng(seed)
    trans = rng.dirichlet(np.full(N_STATES, 0.3), size=(N_STATES, N_ACTIONS))
    phi = rng.normal(size=(N_STATES, N_ACTIONS, N_FEATURES))
    w = rng.normal(size=N_FEATURES)
    w /= np.linalg.norm(w)  # rewards phi . w are then standard normal: unit scale
    return trans, phi, w


def _own_policy_iteration(trans, reward, discount):
    """Howard's policy iteration; returns (Q*, greedy policy, number of improvements)."""
    n_s = reward.shape[0]
    rows = np.arange(n_s)
    greedy = np.zeros(n_s, dtype=int)
    eye = sp.identity(n_s, format="csc")
    for it in range(100):
        p_g = sp.csc_matrix(trans[rows, greedy])
        values = spla.spsolve((eye - discount * p_g).tocsc(), reward[rows, greedy])
        q = reward + discount * (trans @ values)
        best = q.argmax(axis=1)
        # Switch only on a strict improvement beyond rounding, so ties cannot cycle.
        improve = q[rows, best] > q[rows, greedy] + 1e-12 * (1 + np.abs(q[rows, greedy]))
        if not improve.any():
            return q, greedy, it
        greedy = np.where(improve, best, greedy)
    raise AssertionError("own policy iteration did not settle")


def test_soft_policy_argmax_is_optimal_policy_at_large_rationality():
    trans, phi, w = _random_problem(seed=2)
    mdp = TabularMDP(trans, phi, discount=DISCOUNT)
    q_star, greedy, n_improve = _own_policy_iteration(trans, phi @ w, DISCOUNT)
    assert n_improve >= 1  # the start policy was not already optimal: PI did real work

    # With V_beta(s) = (1/beta) log sum_a exp(beta Q_beta(s, a)) in reward units,
    # max_a Q <= V_beta <= max_a Q + log(A)/beta, so 0 <= V_beta - V* <= log(A)/(beta (1-g))
    # and 0 <= Q_beta - Q* <= g log(A) / (beta (1-g)) =: bound. The argmax is therefore the
    # optimal action wherever the Q* gap (best minus second best) exceeds the bound; that
    # precondition is checked, not assumed (seed 2: min gap 0.18 against a bound of 0.049).
    bound = DISCOUNT * np.log(N_ACTIONS) / (BIG_BETA * (1 - DISCOUNT))
    top2 = np.sort(q_star, axis=1)[:, -2:]
    gap = top2[:, 1] - top2[:, 0]
    assert gap.min() > 2 * bound, (gap.min(), bound)

    # The sandwich holds at every beta; at beta = 200 the gaps make Q_beta = Q* to rounding,
    # so it is also checked at beta = 2 and 10 where the soft correction is O(0.1 - 1).
    for beta in (2.0, 10.0, BIG_BETA):
        q_soft = mdp.solve(w, rationality=beta).q / beta  # bayesirl uses reward beta*r, T = 1
        # Solver accuracy: DEFAULT_TOL = 1e-10 in beta units, i.e. 1e-10 / beta here.
        slack = 1e-10 / beta + 1e-12
        assert np.all(q_soft - q_star >= -slack)
        upper = DISCOUNT * np.log(N_ACTIONS) / (beta * (1 - DISCOUNT))
        assert np.all(q_soft - q_star <= upper + slack)
        if beta == 2.0:
            assert (q_soft - q_star).max() > 0.1  # the soft correction is really there

    policy = mdp.soft_policy(w, BIG_BETA)
    np.testing.assert_array_equal(policy.argmax(axis=1), greedy)
    # Quantitatively: pi(a*|s) >= 1 / (1 + (A-1) exp(-beta (gap - bound))).
    floor = 1.0 / (1.0 + (N_ACTIONS - 1) * np.exp(-BIG_BETA * (gap - bound)))
    assert np.all(policy[np.arange(N_STATES), greedy] >= floor - 1e-12)


def test_optimal_q_matches_own_policy_iteration():
    trans, phi, w = _random_problem(seed=2)
    mdp = TabularMDP(trans, phi, discount=DISCOUNT)
    q_star, greedy, _ = _own_policy_iteration(trans, phi @ w, DISCOUNT)
    # Both sides solve (I - g P_g) V = r_g by sparse LU; the error is <= cond * eps * |V| with
    # cond(I - g P_g) <= (1 + g)/(1 - g) = 19 and |V| <= max|r|/(1-g) ~ 30: ~1e-13.
    ours = policy_iteration(mdp.dynamics, mdp.reward(w), DISCOUNT)
    np.testing.assert_array_equal(ours.greedy, greedy)
    np.testing.assert_allclose(ours.q, q_star, rtol=0, atol=1e-11)

    # The q="optimal" likelihood is sum_t log softmax(beta Q*)(a_t | s_t) with that Q*.
    beta = 2.0
    demos = simulate(mdp, w, episodes=10, length=15, rationality=beta, seed=3)
    lik = BoltzmannLikelihood(mdp, demos, rationality=beta, q_function="optimal")
    st = demos.steps
    expected = log_softmax(beta * q_star, axis=1)[st.states, st.actions].sum()
    # 150 terms, each off by <= 2 beta |dQ*| ~ 4e-13 plus rounding: 1e-10 absolute is ~100x.
    assert abs(lik.evaluate(w).loglik - expected) < 1e-10
    # Non-vacuous: the Boltzmann-on-Q* and soft models differ at this beta.
    soft = BoltzmannLikelihood(mdp, demos, rationality=beta).evaluate(w).loglik
    assert abs(soft - expected) > 1e-3
