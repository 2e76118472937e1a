"""L-BFGS path against scipy's L-BFGS-B (scipy.optimize.minimize, method="L-BFGS-B")."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize

from bayesirl.sampler.lbfgs import inverse_hessian, lbfgs_path


def _quadratic(dim: int, seed: int, eigenvalues):
    rng = np.random.default_rng(seed)
    q = np.linalg.qr(rng.normal(size=(dim, dim)))[0]
    a = q @ np.diag(eigenvalues) @ q.T
    b = rng.normal(size=dim)
    return a, b


def _scipy_iterates(a, b, x0, history):
    seen = [np.array(x0)]
    optimize.minimize(lambda x: (0.5 * x @ a @ x - b @ x, a @ x - b), x0, jac=True,
                      method="L-BFGS-B", callback=lambda xk: seen.append(np.array(xk)),
                      options={"maxcor": history, "ftol": 1e-12, "gtol": 1e-9})
    return np.array(seen)


_CASES = [(0, [0.5, 1.0, 2.0, 4.0, 8.0], 6), (0, [0.5, 1.0, 2.0, 4.0, 8.0], 10),
          (1, [0.5, 1.0, 2.0, 4.0, 8.0], 6), (2, [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0], 5)]


@pytest.mark.parametrize(("seed", "eigenvalues", "history"), _CASES)
def test_iterates_match_scipy_lbfgsb_on_a_quadratic(seed, eigenvalues, history):
    # Source: scipy.optimize.minimize(method="L-BFGS-B"); without bounds its direction is
    # the two-loop L-BFGS direction, so when every first trial step meets the strong Wolfe
    # conditions (asserted: one evaluation per iterate) both take the same steps. Where a
    # trial is rejected our bisection differs from scipy's More-Thuente search (measured:
    # seed 0 with history 4 or 5), so those cases are not compared. The tolerance is
    # round-off over ~20 iterations at condition number <= 16 (eps * 16 * 20 ~ 1e-13), x100.
    a, b = _quadratic(len(eigenvalues), seed, eigenvalues)
    x0 = np.full(len(eigenvalues), 3.0)
    ref = _scipy_iterates(a, b, x0, history)
    path = lbfgs_path(lambda x: (-(0.5 * x @ a @ x - b @ x), b - a @ x), x0, history=history,
                      rel_tol=1e-12, grad_tol=1e-9)
    assert path.n_evals == len(path.positions)  # every first trial accepted
    n = min(len(ref), len(path.positions))
    assert n >= 10 and abs(len(ref) - len(path.positions)) <= 1
    np.testing.assert_allclose(path.positions[:n], ref[:n], atol=1e-11, rtol=0)
    # The stop rule ends within a relative decrease of 1e-12 in f (|f| ~ 1), so
    # |x - x*| <~ sqrt(2e-12 / smallest eigenvalue) <= 3e-6: allow 1e-5.
    np.testing.assert_allclose(path.positions[-1], np.linalg.solve(a, b), atol=1e-5)


def test_iterates_differ_with_another_history():
    # Negative control: the comparison above sees the history length (3 vs 6 pairs).
    a, b = _quadratic(5, 0, [0.5, 1.0, 2.0, 4.0, 8.0])
    x0 = np.full(5, 3.0)
    ref = _scipy_iterates(a, b, x0, 6)
    path = lbfgs_path(lambda x: (-(0.5 * x @ a @ x - b @ x), b - a @ x), x0, history=3,
                      rel_tol=1e-12, grad_tol=1e-9)
    n = min(len(ref), len(path.positions))
    assert np.max(np.abs(path.positions[:n] - ref[:n])) > 1e-6


def test_inverse_hessian_obeys_the_newest_secant_condition():
    # The BFGS update makes H y = s for the newest pair (Nocedal & Wright 2006, eq. 6.17);
    # on a quadratic y = A s exactly, so H A s = s.
    a, b = _quadratic(4, 1, [0.2, 1.0, 3.0, 10.0])
    path = lbfgs_path(lambda x: (-(0.5 * x @ a @ x - b @ x), b - a @ x), np.zeros(4))
    for i in range(1, len(path.positions)):
        h = inverse_hessian(path, i)
        s = path.positions[i] - path.positions[i - 1]
        np.testing.assert_allclose(h @ (a @ s), s, atol=1e-9 * max(1.0, np.abs(s).max()))
        assert np.all(np.linalg.eigvalsh(h) > 0)
    assert inverse_hessian(path, 0) is None


def test_a_non_finite_start_is_refused():
    with pytest.raises(ValueError, match="start"):
        lbfgs_path(lambda x: (-np.inf, np.zeros(2)), np.zeros(2))
