"""Where the sparse solvers start and how far they solve: deflated GMRES, predicted warm
starts along a sampler's path, the best of several starting guesses, the adjoint tolerance.

Outside references: scipy.sparse.linalg.spsolve (direct sparse LU) for the deflated GMRES
solution; Brauer's theorem (Brauer 1952) for why deflation moves only the eigenvalue 1 - g.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
import scipy.sparse.linalg as spla

import bayesirl as bi
import bayesirl.likelihood.soft as soft_lik
from bayesirl.likelihood import predict as pred
from bayesirl.likelihood import warm
from bayesirl.solver import soft_newton, solve_discounted
from bayesirl.solver.krylov import gmres

from .conftest import make_random_mdp

N_SPARSE = 400  # above DENSE_MAX_STATES, so the Krylov path runs


def _policy_matrix(seed, discount):
    mdp = make_random_mdp(seed, n_states=N_SPARSE, n_actions=3, n_succ=3, discount=discount)
    pol = np.random.default_rng(seed).dirichlet(np.ones(3), size=N_SPARSE)
    return mdp.dynamics.policy_matrix(pol)


@pytest.mark.parametrize("discount", [0.95, 0.99])
def test_deflated_gmres_reaches_the_asked_residual_with_fewer_matvecs(discount):
    m = _policy_matrix(3, discount)
    b = np.random.default_rng(4).normal(size=N_SPARSE)
    x, used = solve_discounted(m, discount, b, rtol=1e-11)
    a = sp.identity(N_SPARSE, format="csc") - discount * m.tocsc()
    exact = spla.spsolve(a, b)
    # ||x - x*|| <= ||A^-1|| ||r|| with ||A^-1||_2 <= sqrt(n) ||A^-1||_inf <= sqrt(n)/(1-g).
    bound = np.sqrt(N_SPARSE) / (1 - discount) * 1e-11 * np.linalg.norm(b)
    assert np.linalg.norm(x - exact) <= bound
    assert np.linalg.norm(a @ x - b) <= 1e-11 * np.linalg.norm(b)
    _, _, plain, _ = gmres(lambda v: v - discount * (m @ v), b, np.zeros(N_SPARSE),
                           1e-11 * np.linalg.norm(b))
    # The isolated eigenvalue 1 - g costs plain GMRES iterations; deflated GMRES saves them.
    assert used < plain


def _linear_path(n_points, dim=3, n=50, seed=0):
    rng = np.random.default_rng(seed)
    a, jac = rng.normal(size=n), rng.normal(size=(n, dim))
    b, jac_m = rng.normal(size=n), rng.normal(size=(n, dim))
    path = None
    for _ in range(n_points):
        z = rng.normal(size=dim)
        path = pred.remember(path, z, a + jac @ z, b + jac_m @ z)
    return path, (a, jac, b, jac_m)


def test_prediction_is_exact_for_a_linear_map_once_the_directions_span():
    path, (a, jac, b, jac_m) = _linear_path(4)  # base + 3 directions span R^3
    z = np.array([0.3, -1.2, 0.7])
    values, adjoint = pred.predict(path, z)
    np.testing.assert_allclose(values, a + jac @ z, rtol=0, atol=1e-11)
    np.testing.assert_allclose(adjoint, b + jac_m @ z, rtol=0, atol=1e-11)
    # Negative control: with too few points the unseen direction is not predicted.
    short, _ = _linear_path(2)
    assert np.max(np.abs(pred.predict(short, z)[0] - (a + jac @ z))) > 1e-3


def test_history_is_bounded_and_reads_back_from_saved_arrays_bit_for_bit():
    path, _ = _linear_path(pred.HISTORY + 5)
    assert all(len(part) == pred.HISTORY for part in path)
    cache = {"rho": None, "tol": 1e-10, "gradient_rtol": 1e-8, "path": path}
    fresh = {"rho": None, "tol": 1e-10, "gradient_rtol": 1e-8, "path": None}
    restored = warm.from_arrays(fresh, warm.to_arrays(cache))["path"]
    z = np.array([0.1, 0.2, -0.3])
    for mine, theirs in zip(pred.predict(path, z), pred.predict(restored, z), strict=True):
        np.testing.assert_array_equal(mine, theirs)


def test_newton_starts_from_the_best_guess_and_lands_on_the_same_fixed_point():
    mdp = make_random_mdp(7, n_states=N_SPARSE, n_actions=3, n_succ=3, discount=0.95)
    w = np.random.default_rng(8).normal(size=mdp.n_features)
    reward = mdp.reward(w)
    exact = soft_newton(mdp.dynamics, reward, 0.95, tol=1e-12)
    bad = np.zeros(N_SPARSE)
    good = exact.values + 1e-6 * np.random.default_rng(9).normal(size=N_SPARSE)
    alone = soft_newton(mdp.dynamics, reward, 0.95, bad)
    both = soft_newton(mdp.dynamics, reward, 0.95, bad, guesses=(good,))
    assert both.matvecs < alone.matvecs
    # Both stop inside the MacQueen-Porteus box of width tol (solver/soft.py).
    np.testing.assert_allclose(both.values, exact.values, rtol=0, atol=2e-10)
    np.testing.assert_allclose(alone.values, exact.values, rtol=0, atol=2e-10)


@pytest.mark.parametrize("rtol", [1e-6, 1e-8])
def test_gradient_error_follows_the_adjoint_tolerance(rtol):
    mdp = make_random_mdp(11, n_states=N_SPARSE, n_actions=3, n_succ=3, discount=0.95)
    w = np.random.default_rng(12).normal(size=mdp.n_features)
    demos = bi.simulate(mdp, w, episodes=10, length=20, seed=13)
    ref = bi.BoltzmannLikelihood(mdp, demos, gradient_rtol=1e-13).evaluate(w)
    got = bi.BoltzmannLikelihood(mdp, demos, gradient_rtol=rtol).evaluate(w)
    # Same bound as tests/engine/test_gradients.py: m is off by <= rtol/(1-g) relative to
    # terms of size <= N * max|phi| (beta = 1).
    scale = demos.n_steps * np.abs(mdp.features).max()
    err = np.max(np.abs(got.grad_weights - ref.grad_weights))
    assert err <= rtol / (1 - 0.95) * scale
    assert abs(got.loglik - ref.loglik) <= 2 * demos.n_steps * 1e-10  # value tol unchanged


def test_predicted_starts_cut_the_newton_work_along_a_smooth_path(monkeypatch):
    mdp = make_random_mdp(21, n_states=N_SPARSE, n_actions=3, n_succ=3, discount=0.95)
    rng = np.random.default_rng(22)
    w0 = rng.normal(size=mdp.n_features)
    demos = bi.simulate(mdp, w0, episodes=10, length=20, seed=23)
    # A curved path, as a leapfrog trajectory is: w(t) = w0 + t u + t^2 v.
    u, v = rng.normal(size=(2, mdp.n_features)) * 0.05
    points = [w0 + t * u + t * t * v for t in np.linspace(0, 1, 12)]

    def work(with_prediction):
        if not with_prediction:
            monkeypatch.setattr(soft_lik, "predict", lambda path, z: None)
        lik = bi.BoltzmannLikelihood(mdp, demos)
        used = []
        original = soft_lik.soft_newton

        def counted(*args, **kwargs):
            sol = original(*args, **kwargs)
            used.append(sol.matvecs)
            return sol

        monkeypatch.setattr(soft_lik, "soft_newton", counted)
        values = [lik.evaluate(p) for p in points]
        monkeypatch.undo()
        return sum(used[4:]), values  # after the history has filled a little

    with_pred, vals = work(True)
    without, vals0 = work(False)
    assert with_pred < 0.9 * without  # measured 405 against 532 mat-vecs
    for a, b in zip(vals, vals0, strict=True):
        assert abs(a.loglik - b.loglik) <= 2 * demos.n_steps * 1e-10
