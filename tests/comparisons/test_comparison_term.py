"""Comparisons between episodes: the Bradley-Terry / Luce choice term against statsmodels Logit.

Outside reference: ``statsmodels.discrete.discrete_model.Logit`` (Seabold & Perktold 2010),
fitted without an intercept to simulated answers for fixed episode pairs, with regressors the
pairs' discounted feature differences (Bradley & Terry 1952; Luce 1959: the choice
probability is logistic in the utility difference). Its coefficients are the maximum of our
term (the MAP under a flat prior) and its ``cov_params`` is the inverse of our term's negative
Hessian there. Finite differences check the gradient, including the one in log(beta_c).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.optimize
from posterior.problems import small_mdp
from statsmodels.discrete.discrete_model import Logit

import bayesirl as bi
from bayesirl.errors import InputError
from bayesirl.evidence import EvidenceTerm
from bayesirl.evidence.comparisons import ComparisonTerm, discounted_features

TRUE_W = np.array([0.8, -0.5])


def _simulated(seed=0, n_pairs=400, beta_c=1.5):
    """Fixed pairs of simulated episodes, answers drawn from the logistic choice model."""
    mdp = small_mdp(0, 2)
    demos = bi.simulate(mdp, np.zeros(2), episodes=40, length=8, seed=seed)
    phi = np.array([discounted_features(mdp, s, a) for s, a in demos.episodes])
    rng = np.random.default_rng(seed + 1)
    a_idx = rng.integers(0, 40, n_pairs)
    b_idx = (a_idx + rng.integers(1, 40, n_pairs)) % 40
    x = phi[a_idx] - phi[b_idx]  # A minus B
    y = (rng.random(n_pairs) < 1 / (1 + np.exp(-beta_c * x @ TRUE_W))).astype(float)
    return mdp, demos, x, y, a_idx, b_idx


def test_map_and_inverse_hessian_match_statsmodels_logit():
    _, _, x, y, _, _ = _simulated()
    term = ComparisonTerm(np.where(y[:, None] == 1, x, -x), rationality=1.0)
    assert isinstance(term, EvidenceTerm)

    def neg(w):
        v = term.evaluate({"weights": w})
        return -v.logp, -v.grads["weights"]

    fit = scipy.optimize.minimize(neg, np.zeros(2), jac=True, method="BFGS",
                                  options={"gtol": 1e-12})
    ref = Logit(y, x).fit(disp=0, tol=1e-14, maxiter=200)
    # both are the unique maximiser of a strictly concave function (measured difference 1e-8;
    # covariances agree to 2e-8 relative)
    assert np.allclose(fit.x, ref.params, rtol=0, atol=1e-6)
    cov = np.linalg.inv(-term.hessian_weights({"weights": fit.x}))
    assert np.allclose(cov, ref.cov_params(), rtol=1e-5, atol=0)
    assert np.allclose(np.sqrt(np.diag(cov)), ref.bse, rtol=1e-5)
    assert term.evaluate({"weights": ref.params}).logp == pytest.approx(ref.llf, abs=1e-8)
    # negative control: answers flipped for a tenth of the pairs move the MLE far beyond the
    # tolerance (measured 0.69, several standard errors of 0.14 and 0.10)
    flip = np.where(np.arange(y.size) % 10 == 0, 1 - y, y)
    other = Logit(flip, x).fit(disp=0, tol=1e-14)
    assert np.max(np.abs(other.params - fit.x)) > 1e-2


def test_gradient_matches_finite_differences():
    _, _, x, y, _, _ = _simulated(n_pairs=50)
    term = ComparisonTerm(np.where(y[:, None] == 1, x, -x), rationality="beta_c")
    q = {"weights": np.array([0.3, -0.9]), "beta_c": 1.7}
    v = term.evaluate(q)
    h = 1e-6  # central differences: error ~ h^2 * f''' ~ 1e-11 here

    def f(w, lb):
        return term.evaluate({"weights": w, "beta_c": np.exp(lb)}, False).logp

    fd = [(f(q["weights"] + h * e, np.log(1.7)) - f(q["weights"] - h * e, np.log(1.7)))
          / (2 * h) for e in np.eye(2)]
    fd_b = (f(q["weights"], np.log(1.7) + h) - f(q["weights"], np.log(1.7) - h)) / (2 * h)
    assert np.allclose(v.grads["weights"], fd, rtol=1e-7, atol=1e-8)
    assert v.grads["beta_c"] == pytest.approx(fd_b, rel=1e-7)
    assert term.answer_log_probabilities(q).sum() == pytest.approx(v.logp, rel=1e-14)
    # one comparison: the probability is the logistic function of the return difference
    one = ComparisonTerm(x[:1], rationality=2.0)
    z = 2.0 * x[0] @ q["weights"]
    assert np.exp(one.evaluate(q).logp) == pytest.approx(1 / (1 + np.exp(-z)), rel=1e-14)


def test_from_episodes_and_refusals():
    mdp, demos, _, _, _, _ = _simulated(n_pairs=5)
    eps = {f"e{k}": ep for k, ep in enumerate(demos.episodes)}
    term = ComparisonTerm.from_episodes(mdp, eps, [("e0", "e1"), ("e2", "e0")])
    want = discounted_features(mdp, *eps["e0"]) - discounted_features(mdp, *eps["e1"])
    assert np.array_equal(term.differences[0], want)
    # the discounted sum by hand for episode 0
    s, a = eps["e0"]
    hand = sum(mdp.discount ** t * mdp.features[s[t], a[t]] for t in range(a.size))
    assert np.allclose(discounted_features(mdp, s, a), hand, rtol=1e-14)
    with pytest.raises(InputError, match="pair 0 names episode 'nope'"):
        ComparisonTerm.from_episodes(mdp, eps, [("nope", "e1")])
    with pytest.raises(InputError, match="with itself"):
        ComparisonTerm.from_episodes(mdp, eps, [("e1", "e1")])
    with pytest.raises(InputError, match="needs every state and action recorded"):
        ComparisonTerm.from_episodes(mdp, {"x": (s, np.where(a > 0, -1, a)), "y": eps["e1"]},
                                     [("x", "y")])
