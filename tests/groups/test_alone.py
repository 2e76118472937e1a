"""Each demonstrator's estimate from their own episodes alone (the forest plot's shrinkage).

Outside reference: McFadden (1974) conditional logit as implemented by statsmodels
(``ConditionalLogit``). With discount 0 the Boltzmann policy is a softmax of ``phi(s, a) . w``
(beta = 1), so each demonstrator's alone estimate under an almost flat prior (Normal, scale
1000) is the conditional-logit MLE of their choices, and the Laplace sd is its standard
error (the inverse observed information), as in tests/reference/test_ref_conditional_logit.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats
from statsmodels.discrete.conditional_models import ConditionalLogit

import bayesirl as bi
from bayesirl.posterior.alone import alone_estimates
from bayesirl.posterior.groups import make_model

N, A = 150, 3  # choice situations per demonstrator, actions
TRUTH = {"ann": np.array([1.0, -0.5]), "bob": np.array([-0.4, 0.8])}


def _choices(seed: int):
    rng = np.random.default_rng(seed)
    phi = rng.normal(size=(2 * N, A, 2))
    chosen = []
    for d, w in enumerate(TRUTH.values()):
        u = phi[d * N:(d + 1) * N] @ w
        p = np.exp(u - u.max(axis=1, keepdims=True))
        p /= p.sum(axis=1, keepdims=True)
        chosen += [int(rng.choice(A, p=row)) for row in p]
    trans = np.zeros((2 * N, A, 2 * N))
    trans[:, :, 0] = 1.0  # irrelevant at discount 0
    mdp = bi.TabularMDP(trans, phi, discount=0.0, feature_names=["x", "y"])
    demos = bi.Demonstrations.from_arrays([[s] for s in range(2 * N)], [[a] for a in chosen],
                                          demonstrators=["ann"] * N + ["bob"] * N)
    return mdp, demos, phi, np.array(chosen)


def _statsmodels(phi, chosen, d: int):
    part = slice(d * N, (d + 1) * N)
    endog = np.zeros(N * A)
    endog[np.arange(N) * A + chosen[part]] = 1.0
    fit = ConditionalLogit(endog, phi[part].reshape(N * A, 2),
                           groups=np.repeat(np.arange(N), A)).fit(method="newton", disp=False)
    return np.asarray(fit.params), np.asarray(fit.bse)


def test_alone_is_each_demonstrators_own_conditional_logit():
    mdp, demos, phi, chosen = _choices(4)
    model = make_model(bi.BoltzmannLikelihood(mdp, demos), bi.Normal(0.0, 1000.0),
                       pooling="partial")
    alone = alone_estimates(model, level=0.9)
    z = stats.norm.ppf(0.95)
    for d, who in enumerate(TRUTH):
        params, bse = _statsmodels(phi, chosen, d)
        mode = np.array([alone[who][n]["mean"] for n in ("x", "y")])
        sd = np.array([alone[who][n]["sd"] for n in ("x", "y")])
        # The prior N(0, 1000^2) moves the mode by H^-1 w / 1e6 ~ 1e-8 (H ~ 30 here) and the
        # sd by ~1e-8 relative; the Hessians are differences of exact gradients (~1e-7
        # relative, see the reference test): compared at 1e-6 and 1e-5.
        np.testing.assert_allclose(mode, params, rtol=0, atol=1e-6)
        np.testing.assert_allclose(sd, bse, rtol=1e-5)
        assert alone[who]["x"]["lower"] == pytest.approx(mode[0] - z * sd[0], abs=1e-12)
        # negative control: the other demonstrator's fit is many standard errors away
        other, _ = _statsmodels(phi, chosen, 1 - d)
        assert np.max(np.abs(mode - other) / bse) > 5


def test_failure_is_reported_not_replaced():
    from bayesirl.posterior.alone import laplace

    class Flat:  # a density with no curvature: no interval can be honest
        dim, free, feature_names = 1, np.array([0]), ("x",)
        _free_prior = bi.Normal(0.0, 1.0)

        def logdensity_and_grad(self, theta):
            return 0.0, np.zeros_like(theta)

        def logdensity(self, theta):
            return 0.0

    assert "failed" in laplace(Flat(), 0.9)
