"""Exact likelihood gradients vs central finite differences, and the identities they rest on.

Outside reference for every gradient check: the central-difference quotient
``D(h) = (L(x + h e) - L(x - h e)) / (2h) = L'(x) + L'''(x) h^2 / 6 + O(h^4)`` (Taylor's
theorem), with Richardson's h/2h comparison to estimate the ``h^2`` term (Richardson 1911,
"The approximate arithmetical solution by finite differences of physical problems").
Forward differences (``scipy.optimize.approx_fprime``'s default) carry an O(h) error, which
is why they are not used here.

Tolerance of a central difference, derived (for each coordinate):
    D(h)  = L' + c h^2 + e1,   |e1| <= delta / h        (delta: noise in L, see below)
    D(2h) = L' + 4 c h^2 + e2, |e2| <= delta / (2h)
so |c h^2| <= (|D(2h) - D(h)| + 1.5 delta / h) / 3 and
    |L' - D(h)| <= |D(2h) - D(h)| / 3 + 1.5 delta / h   (+ O(h^4)).
We allow twice the first term for the neglected O(h^4) part (it enters D(2h) 16 times
larger than D(h)). ``delta`` is the history dependence of L through the warm-started solver,
which ``test_warm_start_equals_cold_start`` bounds by ``WARM_LOGLIK_TOL``; rounding in L is
far below it (|L| < 10^3, so 64 eps |L| < 2e-11).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.special import logsumexp

import bayesirl as bi
from bayesirl.likelihood import optimal as optimal_model
from bayesirl.likelihood import soft as soft_model

from .conftest import make_random_mdp

BETA = 1.7  # rationality used throughout: deliberately not 1
FD_STEP = 2e-4  # h; weights and features are O(1), so relative and absolute steps agree
WARM_LOGLIK_TOL = 1e-10  # the brief's warm-vs-cold target for L, see the warm-start test

HORIZONS = [(0.9, None), (0.95, 6), (1.0, 6)]  # (discount, horizon)


def _case_mdp(seed, state_action, discount, horizon):
    # S between 15 and 30 depending on the seed, A = 3, 3 successors per (s, a).
    n_states = 15 + (7 * seed) % 16
    n_features = 4 if state_action else 3
    return make_random_mdp(seed, n_states=n_states, n_features=n_features,
                           state_action=state_action, discount=discount, horizon=horizon)


# --- an independent hard-optimal Q (dense numpy), used only to pick safe weights -------------

def _dense_p(mdp):
    return mdp.transitions.toarray().reshape(mdp.n_states, mdp.n_actions, mdp.n_states)


def _hard_q(mdp, w):
    """Q* by dense backward recursion (finite) or value iteration to 1e-13 (discounted).

    Returns a list of (Q_t, Lipschitz constant of Q_t in sup-norm reward) pairs: Q* moves by at
    most ``lip * |delta r|_inf`` when the reward moves (Puterman 1994, Thm 6.2.3, contraction).
    """
    p, r, g = _dense_p(mdp), mdp.reward(w), mdp.discount
    if mdp.horizon is None:
        v = np.zeros(mdp.n_states)
        for _ in range(100_000):
            q = r + g * p @ v
            v_new = q.max(axis=1)
            if np.abs(v_new - v).max() < 1e-13:
                break
            v = v_new
        else:  # pragma: no cover
            raise AssertionError("dense value iteration did not converge")
        return [(r + g * p @ v_new, 1.0 / (1.0 - g))]
    out, v = [], np.zeros(mdp.n_states)
    for t in range(mdp.horizon - 1, -1, -1):
        q = r + g * p @ v
        v = q.max(axis=1)
        # With state-only features the last step has Q_{H-1}(s, .) = phi(s) . w for every
        # action: an identical tie for all w, under which phi_g (hence the gradient) does not
        # depend on the tie-break, so it needs no gap.
        if not (t == mdp.horizon - 1 and mdp.state_features):
            out.append((q, sum(g**k for k in range(mdp.horizon - t))))
    return out


def _min_gap_over_allowance(mdp, w, step):
    """min over (t, s) of (best - second best Q*) / (2 * largest Q* move for a w-step)."""
    worst = np.inf
    phi_max = np.abs(mdp.features).max()
    for q, lip in _hard_q(mdp, w):
        top2 = np.sort(q, axis=1)[:, -2:]
        gap = (top2[:, 1] - top2[:, 0]).min()
        # A step `step` in one weight moves r by <= step*|phi|max, Q* by <= lip times that;
        # best and runner-up can move in opposite directions, hence the factor 2.
        worst = min(worst, gap / (2.0 * lip * step * phi_max))
    return worst


def _weights(mdp, seed, q_model):
    """Standard-normal weights; for the optimal model, the first draw whose greedy policy
    cannot change anywhere within the largest FD step (2h) in any one coordinate."""
    rng = np.random.default_rng(1000 + seed)
    for _ in range(200):
        w = rng.normal(size=mdp.n_features)
        if q_model == "soft" or _min_gap_over_allowance(mdp, w, 2 * FD_STEP) > 1.0:
            return w
    raise AssertionError("no weights with a unique, FD-stable greedy policy found")


def _central(f, x, h):
    out = np.empty(x.shape[0])
    for i in range(x.shape[0]):
        e = np.zeros_like(x)
        e[i] = h
        out[i] = (f(x + e) - f(x - e)) / (2 * h)
    return out


def _fd_with_bound(f, x, h=FD_STEP, delta=WARM_LOGLIK_TOL):
    d1, d2 = _central(f, x, h), _central(f, x, 2 * h)
    bound = 2.0 * np.abs(d2 - d1) / 3.0 + 1.5 * delta / h
    return d1, bound


def _ragged(demos):
    """Episodes cut to lengths T, T-1, ... (so finite-horizon counts differ by time step), every
    other one without its final state."""
    states, actions = [], []
    for k, (st, ac) in enumerate(demos.episodes):
        t = ac.shape[0] - k % ac.shape[0]
        states.append(st[: t + (k % 2)])
        actions.append(ac[:t])
    return bi.Demonstrations.from_arrays(states, actions)


CASES = [
    pytest.param(sa, q, g, h, id=f"{'sa' if sa else 's'}-{q}-g{g}-H{h}")
    for sa in (False, True)
    for q in ("soft", "optimal")
    for g, h in HORIZONS
]


@pytest.mark.parametrize(("state_action", "q_model", "discount", "horizon"), CASES)
def test_gradient_matches_central_differences(state_action, q_model, discount, horizon):
    seed = 11 * (1 + 2 * state_action) + 3 * HORIZONS.index((discount, horizon))
    mdp = _case_mdp(seed, state_action, discount, horizon)
    demos = _ragged(bi.simulate(mdp, np.random.default_rng(seed).normal(size=mdp.n_features),
                                episodes=6, length=horizon or 10, rationality=BETA, seed=seed))
    lik = bi.BoltzmannLikelihood(mdp, demos, rationality=BETA, q_function=q_model)
    w = _weights(mdp, seed, q_model)
    v = lik.evaluate(w, BETA)

    fd_w, bound_w = _fd_with_bound(lambda x: lik.evaluate(x, BETA).loglik, w)
    fd_b, bound_b = _fd_with_bound(lambda x: lik.evaluate(w, BETA * np.exp(x[0])).loglik,
                                   np.zeros(1))
    scale = 1.0 + np.abs(v.grad_weights).max()
    # The FD bound must be informative: far below any formula error (which is O(scale)).
    assert bound_w.max() < 1e-5 * scale and bound_b[0] < 1e-5 * scale
    np.testing.assert_array_less(np.abs(v.grad_weights - fd_w), bound_w)
    assert abs(v.grad_log_rationality - fd_b[0]) < bound_b[0]


@pytest.mark.parametrize("q_model", ["soft", "optimal"])
@pytest.mark.parametrize(("discount", "horizon"), HORIZONS)
def test_log_rationality_identity(q_model, discount, horizon):
    """dL/dlog(beta) = w . dL/dw, because pi depends on beta * w only (soft: the reward is
    scaled; optimal: Q* is positively homogeneous in the reward). Checked on the function
    itself (L(w, beta) = L(beta w / c, c)) and on finite differences of both sides, so the
    check does not go through the package's own use of the identity."""
    seed = 5 + HORIZONS.index((discount, horizon))
    mdp = _case_mdp(seed, True, discount, horizon)
    demos = bi.simulate(mdp, np.ones(mdp.n_features), episodes=5, length=horizon or 8,
                        rationality=BETA, seed=seed)
    lik = bi.BoltzmannLikelihood(mdp, demos, q_function=q_model)
    w = _weights(mdp, seed, q_model)
    base = lik.evaluate(w, BETA).loglik
    for c in (0.5, 1.0, 3.0):
        assert abs(lik.evaluate(BETA * w / c, c).loglik - base) <= WARM_LOGLIK_TOL
    fd_w, bound_w = _fd_with_bound(lambda x: lik.evaluate(x, BETA).loglik, w)
    fd_b, bound_b = _fd_with_bound(lambda x: lik.evaluate(w, BETA * np.exp(x[0])).loglik,
                                   np.zeros(1))
    # |w . fd_w - fd_b| <= sum_i |w_i| bound_i + bound_b (triangle inequality).
    assert abs(w @ fd_w - fd_b[0]) <= np.abs(w) @ bound_w + bound_b[0]
    v = lik.evaluate(w, BETA)
    assert abs(v.grad_log_rationality - w @ v.grad_weights) <= 1e-12 * (1 + abs(base))


@pytest.mark.parametrize("q_model", ["soft", "optimal"])
@pytest.mark.parametrize("state_action", [False, True])
@pytest.mark.parametrize(("discount", "horizon"), [(0.9, None), (0.99, None), (0.95, 6)])
def test_warm_start_equals_cold_start(q_model, state_action, discount, horizon):
    """After a chain of nearby (w, beta), a warm-started likelihood agrees with a fresh one.

    Loglik: the brief's 1e-10. The worst-case span bound of the stopping rule allows
    2 N tol = 2 * 60 * 1e-10 per evaluation, but Newton's last step is quadratic, leaving an
    error ~tol^2; the policy-iteration Q* is exact after the greedy policy settles.
    Gradient (discounted): the adjoint ``(I - g P^T) m = rho`` is solved to relative residual
    ADJOINT_RTOL; with ||(I - g P_pi)^-1||_inf <= 1/(1-g), m is off by <= ADJOINT_RTOL/(1-g)
    relative to the terms of the gradient, each of size <= beta * N * max|phi| (the feature
    total and m . phi_pi, which nearly cancel); warm and cold each err, hence the factor 2.
    Finite horizon: nothing is carried between calls, so the results must be identical.
    """
    seed = 40 + 2 * state_action + (discount == 0.99)
    mdp = _case_mdp(seed, state_action, discount, horizon)
    demos = bi.simulate(mdp, np.random.default_rng(seed).normal(size=mdp.n_features),
                        episodes=6, length=horizon or 10, rationality=BETA, seed=seed)
    lik = bi.BoltzmannLikelihood(mdp, demos, rationality=BETA, q_function=q_model)
    rng = np.random.default_rng(seed + 1)
    w, beta = rng.normal(size=mdp.n_features), BETA
    rtol = (soft_model if q_model == "soft" else optimal_model).ADJOINT_RTOL
    term_scale = demos.n_steps * np.abs(mdp.features).max()  # per unit beta
    # Leapfrog-sized moves, then tiny ones that can be accepted by the stopping test at once.
    for step in [1e-2] * 12 + [1e-6] * 4 + [1e-12] * 4 + [1e-1] * 4:
        w = w + step * rng.normal(size=w.shape)
        beta = beta * np.exp(step * rng.normal())
        warm = lik.evaluate(w, beta)
        cold = bi.BoltzmannLikelihood(mdp, demos, rationality=BETA,
                                      q_function=q_model).evaluate(w, beta)
        if horizon is not None:
            assert warm.loglik == cold.loglik
            np.testing.assert_array_equal(warm.grad_weights, cold.grad_weights)
            continue
        assert abs(warm.loglik - cold.loglik) <= WARM_LOGLIK_TOL
        grad_tol = 2 * rtol / (1 - discount) * beta * term_scale
        np.testing.assert_allclose(warm.grad_weights, cold.grad_weights, rtol=0, atol=grad_tol)
    assert lik.n_evaluations == 24


def _conditional_logit(mdp, demos, w, beta):
    """McFadden (1974), "Conditional logit analysis of qualitative choice behavior": each
    step is one choice among the A actions with utilities beta * phi(s, a) . w."""
    u = beta * (mdp.features_sa @ w)  # (S, A)
    st = demos.steps
    return float(np.sum(u[st.states, st.actions] - logsumexp(u[st.states], axis=1)))


@pytest.mark.parametrize("q_model", ["soft", "optimal"])
@pytest.mark.parametrize("state_action", [False, True])
@pytest.mark.parametrize(("discount", "horizon"), [(0.0, None), (0.95, 1), (1.0, 1)])
def test_one_step_models_are_conditional_logit(q_model, state_action, discount, horizon):
    """With discount 0 or horizon 1, Q = r and L is the conditional-logit log-likelihood.
    Rounding only: |L| < 10^3 and both sides are sums of N logsumexps, so 1e-10 is ~100x the
    accumulated eps * |L|."""
    mdp = _case_mdp(7, state_action, discount, horizon)
    demos = bi.simulate(mdp, np.ones(mdp.n_features), episodes=40, length=horizon or 3,
                        rationality=BETA, seed=8)
    lik = bi.BoltzmannLikelihood(mdp, demos, rationality=BETA, q_function=q_model)
    rng = np.random.default_rng(9)
    for _ in range(3):
        w = rng.normal(size=mdp.n_features)
        got = lik.evaluate(w, BETA).loglik
        want = _conditional_logit(mdp, demos, w, BETA)
        assert abs(got - want) <= 1e-10 * max(1.0, abs(want))
    if not state_action:
        # State-only features cannot tell actions apart in one step: L = -N log A.
        assert abs(want + demos.n_steps * np.log(mdp.n_actions)) <= 1e-10 * abs(want)
