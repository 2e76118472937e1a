"""The vectorised exponential, the soft maximum and the dense Newton kernels vs numpy twins."""

from __future__ import annotations

import numpy as np
import pytest

from bayesirl.kernels import (
    adjoint_dense,
    adjoint_dense_ref,
    exp_into,
    exp_into_ref,
    scale_rows_by_policy,
    scale_rows_by_policy_ref,
    soft_max_actions,
    soft_max_actions_ref,
    soft_newton_dense,
    soft_newton_dense_ref,
)

ULP = np.finfo(float).eps


def test_exp_matches_numpy_to_two_ulp_over_its_range():
    # exp_into claims about 1.5 ulp on [-700, 700] (range reduction + degree-13 Taylor whose
    # truncation is below 2e-16); 2 ulp is that claim with rounding of the comparison itself.
    x = np.concatenate([np.linspace(-700, 709, 200_001), [0.0, -1e-300, 1e-12, -0.5]])
    out, ref = np.empty_like(x), np.empty_like(x)
    exp_into(x, out, np.empty_like(x))
    exp_into_ref(x, ref, np.empty_like(x))
    assert np.max(np.abs(out / ref - 1.0)) <= 2 * ULP


def test_exp_below_cutoff_is_zero_and_a_wrong_polynomial_would_show():
    x = np.array([-700.5, -1e4, -np.inf])
    out = np.empty(3)
    exp_into(x, out, np.empty(3))
    assert np.all(out == 0.0)
    # Negative control: truncating the series at degree 8 is off by ~1e-9 at |r| = ln2/2,
    # which the 2-ulp comparison above would reject.
    r = np.log(2) / 2
    taylor8 = sum(r**k / np.prod(np.arange(1, k + 1)) for k in range(9))
    assert abs(taylor8 / np.exp(r) - 1) > 100 * ULP


@pytest.mark.parametrize("scale", [1.0, 50.0, 1e3])
def test_soft_max_actions_matches_reference(scale):
    q = np.random.default_rng(3).normal(size=(5, 300)) * scale
    v, pi = soft_max_actions(q)
    v_ref, pi_ref = soft_max_actions_ref(q)
    np.testing.assert_allclose(v, v_ref, rtol=1e-13, atol=1e-12)
    np.testing.assert_allclose(pi, pi_ref, rtol=1e-12, atol=1e-300)
    np.testing.assert_allclose(pi.sum(axis=0), 1.0, atol=1e-14)


def test_scale_rows_by_policy_matches_reference():
    rng = np.random.default_rng(4)
    n_s, n_a, k = 30, 3, 4
    indptr = np.arange(0, n_s * n_a * k + 1, k, dtype=np.int64)
    data = rng.random(n_s * n_a * k)
    policy = rng.dirichlet(np.ones(n_a), size=n_s).T.copy()
    np.testing.assert_allclose(
        scale_rows_by_policy(indptr, data, policy),
        scale_rows_by_policy_ref(indptr, data, policy), rtol=1e-15,
    )


def _dense_problem(seed, n_s=20, n_a=3):
    rng = np.random.default_rng(seed)
    p = rng.dirichlet(np.ones(n_s) * 0.3, size=(n_a, n_s))
    reward = rng.normal(size=(n_a, n_s))
    return p, reward


@pytest.mark.parametrize("discount", [0.0, 0.5, 0.95, 0.99])
def test_dense_newton_matches_reference(discount):
    p, reward = _dense_problem(5)
    v0 = np.zeros(p.shape[1])
    got = soft_newton_dense(p, reward, discount, v0, 1e-10, 50, 30.0)
    ref = soft_newton_dense_ref(p, reward, discount, v0, 1e-10, 50, 30.0)
    assert got[4] == ref[4] > 0
    for a, b in zip(got[:4], ref[:4], strict=True):
        np.testing.assert_allclose(a, b, rtol=1e-10, atol=1e-10)


def test_dense_newton_reports_non_convergence():
    p, reward = _dense_problem(6)
    assert soft_newton_dense(p, reward, 0.99, np.zeros(p.shape[1]), 1e-10, 1, 30.0)[4] == -1


def test_dense_adjoint_matches_reference():
    p, reward = _dense_problem(7)
    pi = soft_newton_dense(p, reward, 0.9, np.zeros(p.shape[1]), 1e-10, 50, 30.0)[2]
    rho = np.random.default_rng(8).normal(size=p.shape[1])
    np.testing.assert_allclose(adjoint_dense(p, pi, 0.9, rho), adjoint_dense_ref(p, pi, 0.9, rho),
                               rtol=1e-10, atol=1e-12)
