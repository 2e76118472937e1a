"""Priors: log-densities and gradients, the unconstrained transforms, variances, JSON.

Outside references, named beside each check: scipy.stats' densities and variances (Virtanen
et al. 2020), scipy.integrate.quad (QUADPACK, Piessens et al. 1983) for the change of
variables, Kolmogorov-Smirnov tests (scipy.stats.kstest) for the draws, and central
differences with a Richardson bound (``numerics.py``) for the gradients.
"""

from __future__ import annotations

import json
import warnings

import numpy as np
import pytest
from scipy import integrate, special, stats

import bayesirl as bi
from bayesirl.errors import InputError
from bayesirl.priors import from_json, to_json

from .numerics import EPS, assert_gradient

H = 1e-4  # finite-difference step; the points below are O(1)


def _delta(prior, z) -> float:
    # Rounding in a sum of O(n) elementary terms, each a few ulps: 64 eps max(1, |f|).
    return 64 * EPS * max(1.0, abs(prior.log_density(z)[0]))


def _scipy_logpdf_z(prior, z: np.ndarray) -> float:
    """log density of z = transform^-1(x) from scipy.stats' density of x plus log|dx/dz|."""
    n = z.size
    if isinstance(prior, bi.Normal):
        loc, scale = prior.params(n)
        return float(np.sum(stats.norm.logpdf(z, loc, scale)))
    if isinstance(prior, bi.Laplace):
        loc, scale = prior.params(n)
        return float(np.sum(stats.laplace.logpdf(z, loc, scale)))
    if isinstance(prior, bi.Uniform):
        low, high = prior.params(n)
        x = low + (high - low) * special.expit(z)
        jac = (high - low) * special.expit(z) * special.expit(-z)
        return float(np.sum(stats.uniform.logpdf(x, low, high - low) + np.log(jac)))
    mu, sigma = prior.params(n)  # LogNormal on z = log(x): density of x times dx/dz = x
    x = np.exp(z)
    return float(np.sum(stats.lognorm.logpdf(x, s=sigma, scale=np.exp(mu)) + z))


PRIORS = {
    "normal": bi.Normal(np.array([0.5, -1.0, 0.0]), np.array([2.0, 0.7, 5.0])),
    "laplace": bi.Laplace(np.array([0.5, -1.0, 0.0]), np.array([2.0, 0.7, 1.5])),
    "uniform": bi.Uniform(np.array([-1.0, 0.0, -5.0]), np.array([1.0, 3.0, 2.0])),
    "lognormal": bi.LogNormal(0.3, 0.8),
}
# Points on the unconstrained scale; the Laplace ones are >= 0.3 from its kinks at loc, far
# more than the 2h = 2e-4 reach of the differences, so each coordinate is linear there.
POINTS = [np.array([1.3, -0.2, 0.9]), np.array([-2.5, -1.7, 3.1]), np.array([0.8, 0.4, -0.3])]


@pytest.mark.parametrize("kind", PRIORS)
def test_log_density_matches_scipy(kind):
    # scipy.stats logpdf (plus log|dx/dz| for the transformed priors): the same function,
    # to rounding of O(10) terms of size O(10): 1e-12 absolute is ~100x the rounding.
    prior = PRIORS[kind]
    for z in POINTS:
        z = z[:1] if kind == "lognormal" else z
        assert prior.log_density(z)[0] == pytest.approx(_scipy_logpdf_z(prior, z), abs=1e-12)


@pytest.mark.parametrize("kind", PRIORS)
def test_gradient_matches_central_differences(kind):
    # Central differences with the Richardson bound (numerics.py); delta = rounding of f.
    prior = PRIORS[kind]
    for z in POINTS:
        z = z[:1] if kind == "lognormal" else z

        def f(v, prior=prior):
            return prior.log_density(v)[0]

        bound = assert_gradient(f, prior.log_density(z)[1], z, H, _delta(prior, z))
        # The check has teeth: its bound is far below any gradient error worth finding.
        assert np.all(bound < 1e-6)


def test_laplace_gradient_at_the_kink_is_the_documented_subgradient_zero():
    prior = PRIORS["laplace"]
    z = np.array([0.5, -1.0, 0.0])  # exactly loc
    assert np.array_equal(prior.log_density(z)[1], np.zeros(3))


@pytest.mark.parametrize("kind", ["uniform", "lognormal"])
def test_dtransform_matches_central_differences(kind):
    # dx/dz of the transform, per coordinate (the transforms act coordinate-wise).
    prior = PRIORS[kind]
    z = POINTS[0][:1] if kind == "lognormal" else POINTS[0]
    for i in range(z.size):

        def xi(v, i=i):
            zz = z.copy()
            zz[i] = v[0]
            return prior.transform(zz)[i]

        delta = 4 * EPS * max(1.0, abs(prior.transform(z)[i]))
        assert_gradient(xi, prior.dtransform(z)[i:i + 1], z[i:i + 1], H, delta)


def test_uniform_z_density_is_normalised_and_pushes_forward_to_uniform():
    # Change of variables, evaluated by quadrature: scipy.integrate.quad on [-Z, .] returns an
    # error estimate e (asserted < 1e-8 so the comparison stays sharp) and we allow e plus
    # rounding 1e-12; the z-density decays like exp(-|z|), so the mass beyond Z = 60 is
    # < 2 exp(-60) ~ 2e-26. The z-density integrates to 1 and
    # P(transform(Z) <= x) = (x - low) / (high - low).
    low, high, reach = -1.5, 4.0, 60.0
    prior = bi.Uniform(low, high)

    def density(v):
        return np.exp(prior.log_density(np.array([v]))[0])

    total, err = integrate.quad(density, -reach, reach, epsabs=1e-13, limit=200)
    assert err < 1e-8 and abs(total - 1.0) <= err + 1e-12
    for x in (-1.2, 0.0, 1.3, 3.9):
        z_x = special.logit((x - low) / (high - low))
        assert prior.transform(np.array([z_x]))[0] == pytest.approx(x, abs=1e-12)
        cdf, err = integrate.quad(density, -reach, z_x, epsabs=1e-13, limit=200)
        assert err < 1e-8 and abs(cdf - (x - low) / (high - low)) <= err + 1e-12


def test_uniform_z_density_is_the_standard_logistic():
    # The pushforward identity in closed form: sigmoid(Z) ~ U(0, 1) iff Z ~ Logistic(0, 1)
    # (scipy.stats.logistic), whatever low and high; compare densities on a grid.
    prior = bi.Uniform(np.array([-3.0, 10.0]), np.array([-2.0, 50.0]))
    for v in np.linspace(-30.0, 30.0, 61):
        z = np.array([v, -0.5 * v])
        lp = prior.log_density(z)[0]
        assert lp == pytest.approx(float(np.sum(stats.logistic.logpdf(z))), abs=1e-12)


@pytest.mark.parametrize("kind", PRIORS)
def test_variance_matches_scipy(kind):
    # scipy.stats' .var() of the same distribution of x (not of z).
    prior = PRIORS[kind]
    n = 1 if kind == "lognormal" else 3
    if kind == "normal":
        loc, scale = prior.params(n)
        ref = stats.norm(loc, scale).var()
    elif kind == "laplace":
        loc, scale = prior.params(n)
        ref = stats.laplace(loc, scale).var()
    elif kind == "uniform":
        low, high = prior.params(n)
        ref = stats.uniform(low, high - low).var()
    else:
        mu, sigma = prior.params(n)
        ref = stats.lognorm(s=sigma, scale=np.exp(mu)).var()
    np.testing.assert_allclose(prior.variance(n), ref, rtol=1e-12)


SCIPY_X = {
    "normal": lambda p: stats.norm(p.loc, p.scale).cdf,
    "laplace": lambda p: stats.laplace(p.loc, p.scale).cdf,
    "uniform": lambda p: stats.uniform(p.low, p.high - p.low).cdf,
    "lognormal": lambda p: stats.lognorm(s=p.sigma, scale=np.exp(p.mu)).cdf,
}
SCALAR_PRIORS = {"normal": bi.Normal(0.5, 2.0), "laplace": bi.Laplace(-1.0, 0.7),
                 "uniform": bi.Uniform(-1.0, 3.0), "lognormal": bi.LogNormal(0.3, 0.8)}


@pytest.mark.parametrize("kind", SCALAR_PRIORS)
def test_draws_follow_the_distribution(kind):
    # Kolmogorov-Smirnov test (scipy.stats.kstest) of 4000 iid coordinates against scipy's
    # cdf, at level 1e-3 / 4 (Bonferroni over the four priors). Power: a scale error of 5%
    # moves the cdf by ~0.02 near the quartiles, ~1.2 in units of 1/sqrt(n), so KS would
    # flag it with probability ~0.1; a wrong family or a 20% scale error is flagged surely.
    prior = SCALAR_PRIORS[kind]
    x = prior.draw(np.random.default_rng(7), 4000)
    assert stats.kstest(x, SCIPY_X[kind](prior)).pvalue > 1e-3 / 4


def test_draws_test_can_fail():
    # Negative control: Normal draws with the scale 20% too large are rejected.
    x = bi.Normal(0.5, 2.4).draw(np.random.default_rng(7), 4000)
    assert stats.kstest(x, SCIPY_X["normal"](bi.Normal(0.5, 2.0))).pvalue < 1e-6


ROUND_TRIP = [
    bi.Normal(), bi.Normal(np.array([0.0, 1.5]), np.array([1.0, 3.0])),
    bi.Laplace(0.2, 4.0), bi.Laplace(np.array([0.0, -1.0, 2.0]), 0.5),
    bi.Uniform(-2.0, 2.0), bi.Uniform(np.array([-1.0, 0.0]), np.array([1.0, 10.0])),
    bi.LogNormal(), bi.LogNormal(-0.4, 0.25),
]


@pytest.mark.parametrize("prior", ROUND_TRIP, ids=lambda p: to_json(p))
def test_json_round_trip(prior):
    text = to_json(prior)
    json.loads(text)  # plain JSON
    back = from_json(text)
    assert type(back) is type(prior)
    for name, value in prior.__dict__.items():
        assert np.array_equal(np.asarray(getattr(back, name)), np.asarray(value)), name
    n = np.broadcast_shapes(*(np.shape(v) for v in prior.__dict__.values()), (1,))[0]
    z = np.linspace(-0.7, 1.1, n)
    lp, g = prior.log_density(z)
    lp2, g2 = back.log_density(z)
    assert lp == lp2 and np.array_equal(g, g2)


def test_from_json_refuses_an_unknown_kind():
    with pytest.raises(InputError, match="unknown kind 'cauchy'"):
        from_json('{"kind": "cauchy", "loc": 0, "scale": 1}')


def test_uniform_transform_is_warning_free_far_in_the_tails():
    # Regression (found while writing these tests, fixed in 19a1b04): 1 / (1 + exp(-z))
    # overflowed with a RuntimeWarning for z < -709 although the result, low, is exact.
    prior = bi.Uniform(-1.0, 1.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        for z, x in ((-800.0, -1.0), (800.0, 1.0)):
            assert prior.transform(np.array([z]))[0] == x
            assert prior.dtransform(np.array([z]))[0] == 0.0
            assert np.isfinite(prior.log_density(np.array([z]))[0])
