"""The Fisher-information split of the evidence (bayesirl.evidence.contributions).

Outside references: for comparisons the information is known in closed form (the logistic
model's Fisher information, ``beta^2 sum s(1-s) d d^T``, as statsmodels' Logit uses); for
Gaussian terms the Laplace sds are the exact conjugate posterior sds (normal-normal model,
precision adds).
"""

from __future__ import annotations

import numpy as np
from groups.gaussian import GaussianTerm

from bayesirl.evidence.comparisons import ComparisonTerm
from bayesirl.evidence.contributions import information, split


def test_information_of_comparisons_matches_the_closed_form():
    rng = np.random.default_rng(5)
    term = ComparisonTerm(rng.normal(size=(40, 3)), rationality=1.4)
    q = {"weights": np.array([0.2, -0.7, 1.1])}
    want = -term.hessian_weights(q)
    got = information(term, q, np.arange(3))
    # central differences of an exact gradient: error ~ (1e-4)^2 * third derivative
    assert np.allclose(got, want, rtol=1e-6, atol=1e-8)
    # a free subset is the matching sub-block
    assert np.allclose(information(term, q, np.array([0, 2])), want[np.ix_([0, 2], [0, 2])],
                       rtol=1e-6, atol=1e-8)


class _Renamed(GaussianTerm):
    """GaussianTerm reading "weights" (the name the split differentiates)."""

    def __init__(self, key, y, sigma):
        super().__init__(0, y, sigma)
        self.key, self.name, self.reads = key, "weights", ("weights",)


def test_gaussian_terms_give_the_conjugate_posterior_sds():
    terms = [_Renamed("a", 0.5, 0.5), _Renamed("b", -1.0, 1.0)]
    out = split(terms, {"weights": np.array([0.3])}, np.array([0]), np.array([4.0]))
    # precisions 1/4 (prior), 4 and 1: exact normal-normal sds
    assert np.allclose(out.sd_prior, [2.0])
    assert np.allclose(out.sd_all, [(0.25 + 4 + 1) ** -0.5], rtol=1e-7)
    assert np.allclose(out.kinds[0].sd_alone, [(0.25 + 4) ** -0.5], rtol=1e-7)
    assert np.allclose(out.kinds[0].sd_without, [(0.25 + 1) ** -0.5], rtol=1e-7)
    assert np.allclose(out.kinds[1].sd_alone, [(0.25 + 1) ** -0.5], rtol=1e-7)
    # negative control: a term with negative information (a log density convex in w) makes
    # the combination indefinite, reported as NaN rather than a number
    bad = _Renamed("c", 0.0, 1.0)
    bad.evaluate = lambda q, gradient=True: type(terms[0].evaluate(q))(
        0.0, {"weights": 10.0 * np.asarray(q["weights"])})
    assert np.isnan(split([bad], {"weights": np.array([0.3])}, np.array([0]),
                          np.array([4.0])).sd_all).all()
