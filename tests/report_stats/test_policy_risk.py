"""``policy_risk`` on tiny problems against a brute-force computation.

Brute force: every deterministic policy is evaluated by a sparse solve (``evd.py``); the
optimal value is the state-wise best of them (Puterman 1994, Thm 6.2.10; for a finite
horizon, the best time-dependent policy). For each posterior draw ``w`` the expected value
difference of acting on the policy optimal for the posterior-mean weights is
``d0 . (V*_w - V^pi_hat_w)`` (Brown & Niekum 2018's EVD), ``d0`` the start distribution
(the model's, or the demonstrations' empirical start frequencies when it has none).
With 1 chain of 60 draws every draw is used (policy_risk thins only above 200).
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.execution.backend import Processes
from bayesirl.report.derived import policy_risk

from . import evd

S, A, F = 3, 2, 2
DRAWS = 60
# Values of 3-state systems by LU: rounding ~1e-15 * |V| with |V| < 50; checked at 1e-9.
ATOL = 1e-9


@cache
def tiny(kind: str):
    rng = np.random.default_rng(11)
    p = rng.dirichlet(np.full(S, 1.0), size=(S, A))
    phi = rng.normal(size=(S, A, F))
    start = np.array([0.2, 0.3, 0.5]) if kind == "start" else None
    horizon = 3 if kind == "finite" else None
    mdp = bi.TabularMDP(p, phi, discount=0.8, horizon=horizon, start=start,
                        feature_names=["x", "y"])
    # Few demonstrations: the posterior is wide, so many draws disagree with pi_hat.
    demos = bi.simulate(mdp, [0.6, -0.4], episodes=3, length=3, seed=2)
    post = bi.sample(bi.BoltzmannLikelihood(mdp, demos), bi.Normal(0, 1), chains=1,
                     draws=DRAWS, warmup=100, seed=5, progress=False, backend=Processes(1))
    return p, phi, mdp, demos, post


def brute_force(kind):
    p, phi, mdp, demos, post = tiny(kind)
    draws = post.weights.reshape(-1, F)
    w_hat = draws.mean(axis=0)
    d0 = (mdp.start if mdp.start is not None else
          np.bincount(demos.start_states, minlength=S) / demos.n_episodes)
    if mdp.horizon is None:
        _, pi_hat = evd.enumerate_optimal(p, evd.rewards(phi, w_hat), mdp.discount)
    else:
        _, pi_hat = evd.enumerate_finite(p, evd.rewards(phi, w_hat), mdp.discount, mdp.horizon)
    loss, frac = [], []
    for w in draws:
        r = evd.rewards(phi, w)
        if mdp.horizon is None:
            v_star, _ = evd.enumerate_optimal(p, r, mdp.discount)
            v_hat = evd.policy_value(p, r, mdp.discount, pi_hat)
        else:
            v_star, _ = evd.enumerate_finite(p, r, mdp.discount, mdp.horizon)
            v_hat = evd.finite_value(p, r, mdp.discount, pi_hat)
        loss.append(d0 @ (v_star - v_hat))
        frac.append(loss[-1] / (v_star.max() - v_star.min()))
    return w_hat, np.array(loss), np.array(frac)


@pytest.mark.parametrize("kind", ["empirical-start", "start", "finite"])
def test_policy_risk_matches_brute_force(kind):
    post = tiny(kind)[-1]
    risk = policy_risk(post, alpha=0.95)
    w_hat, loss, frac = brute_force(kind)
    assert risk["draws_used"] == DRAWS
    np.testing.assert_allclose(risk["estimate"], w_hat, rtol=0, atol=1e-12)
    assert np.all(loss > -ATOL)  # an optimal policy is never beaten
    np.testing.assert_allclose(risk["values"], np.maximum(loss, 0), rtol=0, atol=ATOL)
    np.testing.assert_allclose(risk["fractions"], np.maximum(frac, 0), rtol=0, atol=ATOL)
    assert risk["bound"] == pytest.approx(np.quantile(np.maximum(loss, 0), 0.95), abs=ATOL)
    assert risk["mean"] == pytest.approx(loss.mean(), abs=ATOL)
    assert risk["fraction_bound"] == pytest.approx(np.quantile(frac, 0.95), abs=ATOL)
    # Non-vacuous: a real share of the draws prefer another policy (observed 34-42 of 60).
    assert np.count_nonzero(loss > 1e-6) >= 5
    assert risk["bound"] > 0


def test_bound_follows_alpha():
    post = tiny("empirical-start")[-1]
    _, loss, _ = brute_force("empirical-start")
    for alpha in (0.5, 0.8, 0.99):
        assert policy_risk(post, alpha=alpha)["bound"] == pytest.approx(
            np.quantile(np.maximum(loss, 0), alpha), abs=ATOL)


def test_own_policy_iteration_agrees_with_enumeration():
    # The slow suite uses evd.howard on a 16-state grid where enumeration is impossible;
    # here both independent routes agree on random rewards.
    p, phi, _, _, _ = tiny("start")
    rng = np.random.default_rng(3)
    for _ in range(20):
        r = evd.rewards(phi, rng.normal(size=F))
        v1, pi1 = evd.enumerate_optimal(p, r, 0.8)
        v2, pi2 = evd.howard(p, r, 0.8)
        np.testing.assert_allclose(v2, v1, rtol=0, atol=ATOL)
        np.testing.assert_array_equal(pi2, pi1)
