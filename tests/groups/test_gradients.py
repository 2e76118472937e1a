"""Gradients of the several-demonstrator models and the half-normal prior vs finite differences.

Outside reference: central differences with Richardson's h/2h estimate of their truncation
error, as in tests/engine/test_gradients.py (Richardson 1911). Per coordinate
    |g - D(h)| <= 2 |D(2h) - D(h)| / 3 + 1.5 delta / h,
with ``delta`` the accuracy of a log-density value: the likelihood documents
``2 * n_steps * tol`` per evaluation (BoltzmannLikelihood docstring), and every
demonstrator's solve contributes, so delta = 2 * 54 * 1e-10 (54 steps in all). The adjoint
runs at gradient_rtol = 1e-11 so the analytic gradient is exact to far below that.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

import bayesirl as bi
from bayesirl.posterior.groups import Pooling, make_model

from .problems import fresh, three_demonstrators

H = 1e-3
DELTA = 2 * 54 * 1e-10
CASES = {
    "partial": dict(pooling="partial"),
    "partial-fixed-spread": dict(pooling=Pooling("partial", 0.3)),
    "partial-per-feature-spread": dict(pooling=Pooling("partial", bi.HalfNormal([0.5, 2.0]))),
    "partial-sampled-rationality": dict(pooling="partial", rationality=bi.LogNormal(0, 0.5),
                                        pin={"x": 1.0}),
    # per-demonstrator rationality around the population's (sampled; one weight pinned)
    "partial-own-rationality": dict(pooling=Pooling("partial", rationality_spread=bi.HalfNormal(
        0.5)), rationality=bi.LogNormal(0, 0.5), pin={"x": 1.0}),
    "partial-own-rationality-fixed-spread": dict(
        pooling=Pooling("partial", 0.4, rationality_spread=0.3), rationality=bi.LogNormal(0, 0.5),
        pin={"y": -0.5}),
    "separate": dict(pooling="separate"),
    "separate-uniform-pinned": dict(pooling="separate", prior=bi.Uniform(-3.0, 3.0),
                                    rationality=bi.LogNormal(0, 0.5), pin={"y": -0.5}),
}


def model(case):
    args = {"prior": bi.Normal(0.0, 2.0), **CASES[case]}
    return make_model(fresh(three_demonstrators(1e-11)), **args)


def violations(density, theta, h=H, delta=DELTA):
    """Coordinates where the analytic gradient misses the Richardson bound."""
    _, g = density(theta)
    bad = []
    for i in range(theta.size):
        e = np.zeros(theta.size)
        e[i] = 1.0

        def d(step, i=i, e=e):
            return (density(theta + step * e)[0] - density(theta - step * e)[0]) / (2 * step)
        d1, d2 = d(h), d(2 * h)
        if not abs(g[i] - d1) <= 2 * abs(d2 - d1) / 3 + 1.5 * delta / h:
            bad.append((i, g[i], d1))
    return bad


@pytest.mark.parametrize("case", list(CASES))
def test_group_model_gradient(case):
    m = model(case)
    theta = np.random.default_rng(3).uniform(-1.0, 1.0, m.dim)
    assert violations(m, theta) == []
    # the gradient-free path gives the same log density
    assert abs(m.logdensity(theta) - m(theta)[0]) < 2 * DELTA


def test_own_rationality_reaches_each_demonstrators_term():
    # log beta_d = log beta + s u_d: moving u_0 changes demonstrator 0's rationality only
    m = model("partial-own-rationality")
    assert m.dim == 1 + 1 + 3 + 1 + 3 + 1  # mu, log tau, z (3), log s, u (3), log beta
    theta = np.random.default_rng(4).uniform(-1.0, 1.0, m.dim)
    d = m.draw(theta)
    s = np.exp(theta[5])
    assert np.allclose(np.log(d["rationalities"]), theta[-1] + s * theta[6:9], rtol=1e-13)
    assert d["rationality"] == pytest.approx(np.exp(theta[-1]), rel=1e-15)
    # negative control: without the option there are no own rationalities
    shared = model("partial-sampled-rationality")
    assert "rationalities" not in shared.draw(np.zeros(shared.dim))


def test_own_rationality_needs_a_sampled_population_rationality():
    with pytest.raises(bi.InputError, match="LogNormal prior and pin"):
        make_model(fresh(three_demonstrators()), pooling=Pooling("partial",
                                                                 rationality_spread=0.3))
    with pytest.raises(bi.InputError, match="needs partial pooling"):
        Pooling("separate", rationality_spread=0.3)


def test_negative_control_a_wrong_coordinate_is_caught():
    # One coordinate off by 1e-3 of its size plus 1e-3 must exceed the bound, which on this
    # problem is 1.6e-5 to 6e-5 per coordinate (measured; 1.6e-5 of it is the noise term),
    # while the exact gradients stay below 0.37 of it in every case above (measured).
    m = model("partial")
    theta = np.random.default_rng(3).uniform(-1.0, 1.0, m.dim)

    def wrong(t):
        lp, g = m(t)
        g = g.copy()
        g[-1] += 1e-3 * abs(g[-1]) + 1e-3
        return lp, g
    assert [i for i, *_ in violations(wrong, theta)] == [m.dim - 1]


def test_half_normal_density_matches_scipy():
    # scipy.stats.halfnorm, plus the Jacobian log(dx/dz) = z of the log transform.
    prior = bi.HalfNormal([0.5, 1.0, 3.0])
    z = np.array([-1.2, 0.3, 1.7])
    lp, g = prior.log_density(z)
    assert lp == pytest.approx(np.sum(stats.halfnorm.logpdf(np.exp(z), scale=[0.5, 1.0, 3.0])
                                      + z), rel=1e-13)
    fd = [(prior.log_density(z + e)[0] - prior.log_density(z - e)[0]) / 2e-6
          for e in np.eye(3) * 1e-6]
    assert np.allclose(g, fd, rtol=1e-7, atol=1e-8)


def test_half_normal_draws_match_scipy():
    # Kolmogorov-Smirnov against scipy's half-normal at level 1e-3; negative control: the
    # same draws against a 20% wider half-normal are rejected (D ~ 0.05 > 1.95/sqrt(4000)).
    x = np.concatenate([bi.HalfNormal(2.0).draw(np.random.default_rng(s), 1)
                        for s in range(4000)])
    assert stats.kstest(x, stats.halfnorm(scale=2.0).cdf).pvalue > 1e-3
    assert stats.kstest(x, stats.halfnorm(scale=2.4).cdf).pvalue < 1e-3
