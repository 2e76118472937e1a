"""'No preference' answers: Davidson's (1970) tie extension of Bradley-Terry, against statsmodels.

Outside reference: Davidson's model is McFadden's (1974) conditional logit over three
alternatives per answer with utilities ``z/2`` (first episode preferred), ``-z/2`` (second)
and ``log nu`` (no preference). ``statsmodels.discrete.conditional_models.ConditionalLogit``
fits exactly that likelihood when each answer is a group of three rows with covariates
``[d/2, 0]``, ``[-d/2, 0]`` and ``[0, 1]`` (``d`` the feature-sum difference) and one chosen
row; its parameters are ``(beta_c w, log nu)``. Its MLE must be our term's maximum and its
``cov_params`` the inverse of our term's negative Hessian in ``(w, log nu)`` (by central
differences of our exact gradient). Finite differences check the gradient.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.optimize
from statsmodels.discrete.conditional_models import ConditionalLogit

from bayesirl.errors import InputError
from bayesirl.evidence.comparisons import ComparisonTerm

TRUE_W, TRUE_NU = np.array([0.8, -0.5]), 0.7


def _answers(seed=3, n=600):
    """Answers drawn from Davidson's model for random feature differences."""
    rng = np.random.default_rng(seed)
    d = rng.normal(scale=1.5, size=(n, 2))
    z = d @ TRUE_W
    p = np.stack([np.exp(z / 2), np.exp(-z / 2), np.full(n, TRUE_NU)], axis=1)
    p /= p.sum(axis=1, keepdims=True)
    outcome = np.array([rng.choice(3, p=row) for row in p])  # 0 first, 1 second, 2 tie
    return d, outcome


def _term(d, outcome, **kw):
    oriented = np.where((outcome == 1)[:, None], -d, d)  # preferred minus other
    return ComparisonTerm(oriented, rationality=1.0, ties=outcome == 2, tie="nu", **kw)


def _statsmodels(d, outcome):
    n = d.shape[0]
    rows = np.zeros((3 * n, 3))
    rows[0::3, :2], rows[1::3, :2], rows[2::3, 2] = d / 2, -d / 2, 1.0
    chosen = np.zeros(3 * n)
    chosen[3 * np.arange(n) + outcome] = 1.0
    return ConditionalLogit(chosen, rows, groups=np.repeat(np.arange(n), 3)).fit(
        disp=0, method="newton", tol=1e-12, maxiter=100)


def _fit(term):
    def neg(x):
        v = term.evaluate({"weights": x[:2], "nu": np.exp(x[2])})
        return -v.logp, -np.append(v.grads["weights"], v.grads["nu"])

    return scipy.optimize.minimize(neg, np.zeros(3), jac=True, method="BFGS",
                                   options={"gtol": 1e-11}).x


def _neg_hessian(term, x, h=1e-5):
    def grad(y):
        v = term.evaluate({"weights": y[:2], "nu": np.exp(y[2])})
        return np.append(v.grads["weights"], v.grads["nu"])

    cols = [(grad(x + h * e) - grad(x - h * e)) / (2 * h) for e in np.eye(3)]
    return -0.5 * (np.array(cols) + np.array(cols).T)


def test_mle_and_covariance_match_statsmodels_conditional_logit():
    d, outcome = _answers()
    assert 0.1 < np.mean(outcome == 2) < 0.5  # ties are a real part of the data
    term = _term(d, outcome)
    ours = _fit(term)
    ref = _statsmodels(d, outcome)
    # the unique maximiser of a concave log-likelihood (statsmodels by Newton to score 1e-15,
    # ours by BFGS to gradient ~3e-6 over a Hessian of order 100: ~1e-7 apart; measured 2e-8)
    assert np.allclose(ours, ref.params, rtol=0, atol=1e-6)
    cov = np.linalg.inv(_neg_hessian(term, ours))
    # central differences of an exact gradient, h = 1e-5: relative error ~1e-9; the end
    # points differ by ~1e-7 in the parameters, moving the Hessian by ~1e-7 relative
    assert np.allclose(cov, ref.cov_params(), rtol=1e-5, atol=0)
    assert term.evaluate({"weights": ref.params[:2], "nu": np.exp(ref.params[2])}).logp == \
        pytest.approx(ref.llf, abs=1e-6)
    # negative control: the same answers with the ties read as wins for the first episode
    # (a tie forced into the logistic model) move the weights by 0.23, 2.5 standard errors
    # (measured; the control asks for 0.1)
    as_wins = ComparisonTerm(np.where((outcome == 1)[:, None], -d, d), rationality=1.0)

    def neg(w):
        v = as_wins.evaluate({"weights": w})
        return -v.logp, -v.grads["weights"]

    wrong = scipy.optimize.minimize(neg, np.zeros(2), jac=True, method="BFGS").x
    assert np.max(np.abs(wrong - ref.params[:2])) > 0.1


def test_probabilities_gradient_and_reduction():
    d, outcome = _answers(n=40)
    term = ComparisonTerm(np.where((outcome == 1)[:, None], -d, d), rationality="beta_c",
                          ties=outcome == 2, tie="nu")
    q = {"weights": np.array([0.3, -0.9]), "beta_c": 1.7, "nu": 0.4}
    v = term.evaluate(q)
    h = 1e-6  # central differences: error ~ h^2 * f''' ~ 1e-11

    def f(w, lb, ln):
        return term.evaluate({"weights": w, "beta_c": np.exp(lb), "nu": np.exp(ln)}, False).logp

    x0 = (q["weights"], np.log(1.7), np.log(0.4))
    fd_w = [(f(x0[0] + h * e, *x0[1:]) - f(x0[0] - h * e, *x0[1:])) / (2 * h) for e in np.eye(2)]
    fd_b = (f(x0[0], x0[1] + h, x0[2]) - f(x0[0], x0[1] - h, x0[2])) / (2 * h)
    fd_n = (f(x0[0], x0[1], x0[2] + h) - f(x0[0], x0[1], x0[2] - h)) / (2 * h)
    assert np.allclose(v.grads["weights"], fd_w, rtol=1e-7, atol=1e-8)
    assert v.grads["beta_c"] == pytest.approx(fd_b, rel=1e-7)
    assert v.grads["nu"] == pytest.approx(fd_n, rel=1e-7)
    lp = term.answer_log_probabilities(q)
    assert lp.shape == (40,) and lp.sum() == pytest.approx(v.logp, rel=1e-14)
    # the three answers' probabilities of one question sum to one (Davidson 1970, eq. 2.1)
    one = [ComparisonTerm(r, rationality=1.7, ties=t, tie=0.4)
           for r, t in (([d[0]], [False]), ([-d[0]], [False]), ([d[0]], [True]))]
    total = sum(np.exp(t.evaluate(q, False).logp) for t in one)
    assert total == pytest.approx(1.0, abs=1e-14)
    # nu -> 0 without ties: the logistic model
    bt = ComparisonTerm(d, rationality=1.7)
    near = ComparisonTerm(d, rationality=1.7, tie=1e-300)
    assert near.evaluate(q).logp == pytest.approx(bt.evaluate(q).logp, rel=1e-12)


def test_ties_need_the_tie_parameter():
    with pytest.raises(InputError, match="Davidson"):
        ComparisonTerm(np.ones((2, 2)), ties=[True, False])
    with pytest.raises(InputError, match="tie must be positive"):
        ComparisonTerm(np.ones((2, 2)), ties=[True, False], tie=0.0)
    with pytest.raises(InputError, match="3 tie flags for 2"):
        ComparisonTerm(np.ones((2, 2)), ties=[True, False, True], tie=1.0)
