"""Soft Bellman solves at discounts 0.99-0.9999 on the bus-engine model of Rust (1987).

Outside reference: the dense nested-fixed-point code in ``bus.py`` (Newton with
``numpy.linalg.solve``, forward-sensitivity gradient), written for these tests only.
"""

from __future__ import annotations

import numpy as np
import pytest

from bayesirl import BoltzmannLikelihood, simulate
from bayesirl.errors import SolverError
from bayesirl.solver.soft import rounding_factor

from . import bus

DISCOUNTS = (0.99, 0.999, 0.9999)
EPS = np.finfo(float).eps


@pytest.fixture(scope="module")
def data():
    # 100 buses x 100 months from new engines; one data set for all discounts keeps the
    # checks comparable (the data need not come from each discount's own policy here).
    mdp = bus.bus_mdp(0.9999)
    return simulate(mdp, bus.TRUTH, episodes=100, length=100, seed=20261203, start=0)


def _steps(demos):
    states = np.concatenate([s[:-1] for s, _ in demos.episodes])
    actions = np.concatenate([a for _, a in demos.episodes])
    return states, actions


def _box_width(p, phi, theta, discount):
    """The stopping rule's bound on the fixed point's box (solver/soft.py), from the
    reference solution's magnitudes: max(tol, g/(1-g) * c * eps * M), M = max(|Q|, |V|)."""
    v, log_pi, _, _ = bus.reference_solve(p, phi, theta, discount)
    q = phi @ theta + discount * np.einsum("sat,t->sa", p, v)
    size = max(np.abs(q).max(), np.abs(v).max()) * 1.01  # iterates differ a little from V*
    scale = discount / (1 - discount)
    return max(1e-10, scale * rounding_factor(3, 2) * EPS * size)


@pytest.mark.parametrize("discount", DISCOUNTS)
@pytest.mark.parametrize("theta", [bus.TRUTH, np.array([-20.0, 35.0]), np.array([55.0, -3.0])])
def test_loglik_and_gradient_equal_the_nested_fixed_point(data, discount, theta):
    p, phi = bus.transitions(), bus.features()
    states, actions = _steps(data)
    ref_l, ref_g = bus.reference_loglik_and_grad(p, phi, theta, discount, states, actions)
    _, ref_log_pi, _, residual = bus.reference_solve(p, phi, theta, discount)
    # The reference itself must have converged (to rounding) for the comparison to mean much.
    assert residual <= 1e-9
    mdp = bus.bus_mdp(discount)
    width = _box_width(p, phi, theta, discount)
    # Every log pi entry lies within the box width of the exact one (the policy depends on
    # Q - V, both of which move by at most the width); the reference's own error is rounding.
    got_log_pi = mdp.solve(theta).log_policy
    assert np.abs(got_log_pi - ref_log_pi).max() <= width + 1e-12
    lik = BoltzmannLikelihood(mdp, data, gradient_rtol=1e-12)
    got_l, got_g = lik.value_and_grad(theta)
    n = states.size
    assert abs(got_l - ref_l) <= n * (width + 1e-12)
    # Gradient: the adjoint is solved to relative 1e-12 and cond(I - g P^T) <= (1+g)/(1-g);
    # the policy error adds 2 N width |phi| (|phi| <= 1 here). In units of the gradient size.
    cond = (1 + discount) / (1 - discount)
    g_tol = (cond * 1e-12 + 2 * width) * n + 1e-10 * np.abs(ref_g).max()
    np.testing.assert_allclose(got_g, ref_g, rtol=0, atol=g_tol)


@pytest.mark.parametrize("discount", DISCOUNTS)
def test_every_cold_and_warm_solve_converges(data, discount):
    # 200 random weight vectors with |theta| <= 60, each solved cold (fresh likelihood state)
    # and warm (continuing from the previous one, the far jumps a warmup makes).
    mdp = bus.bus_mdp(discount)
    rng = np.random.default_rng(7)
    thetas = rng.uniform(-60, 60, size=(200, 2))
    warm = BoltzmannLikelihood(mdp, data)
    cold = BoltzmannLikelihood(mdp, data)
    for theta in thetas:
        cold.reset()
        a = cold.value_and_grad(theta)
        b = warm.value_and_grad(theta)
        assert np.isfinite(a[0]) and np.isfinite(b[0])
        assert abs(a[0] - b[0]) <= 1e-6 * max(1.0, abs(a[0]))


@pytest.mark.parametrize("discount", DISCOUNTS)
def test_far_points_do_not_poison_the_truth(data, discount):
    # The failure the issue describes: evaluate at (10, 50), then at the truth -> it failed
    # three times in a row, while a cold solve of the truth succeeded.
    lik = BoltzmannLikelihood(bus.bus_mdp(discount), data)
    fresh = BoltzmannLikelihood(bus.bus_mdp(discount), data).value(bus.TRUTH)
    for far in ([10.0, 50.0], [-60.0, 60.0], [60.0, -60.0]):
        lik.value_and_grad(np.array(far))
        for _ in range(3):
            assert abs(lik.value(bus.TRUTH) - fresh) <= 1e-6 * abs(fresh)


def test_negative_control_the_old_stopping_rule_fails_at_0_9999():
    # The rule before the fix (bus.old_rule_newton) on the same problem: at 0.9999 it never
    # stops (span floor without g/(1-g), no re-centring); at 0.9 it does, so the control is
    # about the discount, not a broken reimplementation.
    p, r = bus.transitions(), bus.features() @ bus.TRUTH
    assert bus.old_rule_newton(p, r, 0.9, np.zeros(bus.N_BINS)) > 0
    assert bus.old_rule_newton(p, r, 0.9999, np.zeros(bus.N_BINS)) == -1


def test_a_solver_that_cannot_converge_still_raises(data):
    # Failures stay failures: one Newton step is never enough at 0.9999.
    lik = BoltzmannLikelihood(bus.bus_mdp(0.9999), data, max_newton_steps=1)
    with pytest.raises(SolverError):
        lik.value_and_grad(bus.TRUTH)


@pytest.mark.parametrize("discount", DISCOUNTS)
def test_the_optimal_q_model_also_solves_everywhere(data, discount):
    # Boltzmann in the optimal Q: policy iteration plus an adjoint with a deterministic
    # policy, whose unpreconditioned GMRES stalled at 0.9999 (15 of 50 points failed).
    lik = BoltzmannLikelihood(bus.bus_mdp(discount), data, q_function="optimal")
    rng = np.random.default_rng(8)
    for theta in rng.uniform(-60, 60, size=(200, 2)):
        value, grad = lik.value_and_grad(theta)
        assert np.isfinite(value) and np.all(np.isfinite(grad))
