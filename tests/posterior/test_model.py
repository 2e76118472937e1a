"""PosteriorModel: the log-posterior in unconstrained theta, its gradient, pinning, refusals.

Outside references: central differences with a Richardson bound (``numerics.py``) for the
gradients; scipy.stats' log-densities for the prior and Jacobian terms of the value.
"""

from __future__ import annotations

import pickle

import numpy as np
import pytest
from scipy import special, stats

import bayesirl as bi
from bayesirl.errors import InputError
from bayesirl.posterior import PosteriorModel

from .numerics import EPS, assert_gradient
from .problems import small_mdp

H = 1e-4
# Noise in the log-likelihood from the warm-started solver: tests/engine/test_gradients.py
# (test_warm_start_equals_cold_start) bounds warm-vs-cold differences by 1e-10; rounding of
# |L| < 10^3 adds 64 eps |L| < 2e-11.
LOGLIK_NOISE = 1e-10


def _likelihood(horizon=None, state_features=False, seed=4):
    mdp = small_mdp(seed, 3, n_states=7, discount=0.9 if horizon is None else 0.95,
                    horizon=horizon)
    if state_features:
        mdp = bi.TabularMDP(mdp.transitions, mdp.features[:, 0, :], discount=mdp.discount,
                            horizon=horizon, feature_names=mdp.feature_names)
    length = 10 if horizon is None else horizon
    demos = bi.simulate(mdp, np.array([0.9, -0.4, 0.6]), episodes=6, length=length, seed=5)
    return bi.BoltzmannLikelihood(mdp, demos, rationality=1.3)


CASES = {
    # name: (PosteriorModel keyword arguments, theta)
    "beta-fixed-normal": (dict(prior=bi.Normal(np.array([0.0, 1.0, -0.5]),
                                               np.array([2.0, 0.8, 3.0])),
                               rationality=1.7),
                          np.array([0.7, -0.3, 0.5])),
    "beta-sampled-pinned-laplace": (dict(prior=bi.Laplace(0.0, np.array([1.0, 2.0, 0.5])),
                                         rationality=bi.LogNormal(0.2, 0.6), pin={"y": -0.8}),
                                    np.array([0.7, 0.4, 0.3])),  # (x, z, log beta)
    "uniform-prior": (dict(prior=bi.Uniform(np.array([-1.0, -3.0, 0.0]),
                                            np.array([2.0, 1.0, 1.5]))),
                      np.array([0.4, -1.2, 0.9])),
    "uniform-pinned-beta-sampled": (dict(prior=bi.Uniform(np.array([-1.0, -3.0, 0.0]),
                                                          np.array([2.0, 1.0, 1.5])),
                                         rationality=bi.LogNormal(0.0, 1.0), pin={"x": 1.0}),
                                    np.array([-1.2, 0.9, -0.2])),  # (y, z, log beta)
}
MDPS = {"discounted-sa": {}, "horizon-s": {"horizon": 6, "state_features": True}}


@pytest.mark.parametrize("mdp_case", MDPS)
@pytest.mark.parametrize("case", CASES)
def test_gradient_matches_central_differences(case, mdp_case):
    kwargs, theta = CASES[case]
    model = PosteriorModel(_likelihood(**MDPS[mdp_case]), **kwargs)
    assert model.dim == theta.size
    value, grad = model.logdensity_and_grad(theta)

    def f(t):
        return model.logdensity_and_grad(t)[0]

    delta = LOGLIK_NOISE + 64 * EPS * abs(value)
    bound = assert_gradient(f, grad, theta, H, delta)
    # Not vacuous: the bound is below 1e-5 of the gradient's scale (a Jacobian factor or a
    # prior term left out would move it by O(1)).
    assert np.all(bound < 1e-5 * max(1.0, np.abs(grad).max()))


def _reference_logdensity(lik, kwargs, theta) -> tuple[float, np.ndarray, float]:
    """Independent assembly: cold likelihood + scipy.stats prior densities + Jacobians."""
    names = lik.mdp.feature_names
    pin = kwargs.get("pin", {})
    free = [i for i, n in enumerate(names) if n not in pin]
    prior = kwargs["prior"]
    k = len(free)
    z = theta[:k]
    sampled = isinstance(kwargs.get("rationality"), bi.LogNormal)
    beta = np.exp(theta[k]) if sampled else kwargs.get("rationality", lik.rationality)
    w = np.array([pin.get(n, 0.0) for n in names])
    if isinstance(prior, bi.Uniform):
        low, high = (np.broadcast_to(np.asarray(v, float), (len(names),))[free]
                     for v in (prior.low, prior.high))
        w[free] = low + (high - low) * special.expit(z)
        lp = np.sum(stats.uniform.logpdf(w[free], low, high - low)
                    + np.log((high - low) * special.expit(z) * special.expit(-z)))
    else:
        w[free] = z
        loc, scale = (np.broadcast_to(np.asarray(v, float), (len(names),))[free]
                      for v in (prior.loc, prior.scale))
        dist = stats.laplace if isinstance(prior, bi.Laplace) else stats.norm
        lp = np.sum(dist.logpdf(z, loc, scale))
    if sampled:
        r = kwargs["rationality"]
        # density of log(beta): lognormal density of beta times d beta / d log beta = beta.
        lp += stats.lognorm.logpdf(beta, s=r.sigma, scale=np.exp(r.mu)) + np.log(beta)
    cold = bi.BoltzmannLikelihood(lik.mdp, lik.demos, rationality=lik.rationality)
    return float(cold.evaluate(w, beta).loglik + lp), w, beta


@pytest.mark.parametrize("case", CASES)
def test_value_and_unpack_match_an_independent_assembly(case):
    # The log-posterior is defined up to a constant: compare differences between points.
    kwargs, theta = CASES[case]
    lik = _likelihood()
    model = PosteriorModel(lik, **kwargs)
    other = theta + np.array([0.3, -0.2, 0.25])
    ref1, w1, b1 = _reference_logdensity(lik, kwargs, theta)
    ref2, _, _ = _reference_logdensity(lik, kwargs, other)
    diff = model(theta)[0] - model(other)[0]
    # Two log-likelihoods with noise <= 1e-10 each, plus rounding of O(100) values.
    assert diff == pytest.approx(ref1 - ref2, abs=2 * LOGLIK_NOISE + 1e-11)
    w, beta = model.unpack(theta)
    np.testing.assert_allclose(w, w1, rtol=1e-14, atol=1e-15)
    assert beta == pytest.approx(b1, rel=1e-14)


def test_model_pickles_to_the_same_function():
    # sample() ships the model to worker processes by pickling it.
    kwargs, theta = CASES["beta-sampled-pinned-laplace"]
    model = PosteriorModel(_likelihood(), **kwargs)
    copy = pickle.loads(pickle.dumps(model))
    v1, g1 = model(theta)
    v2, g2 = copy(theta)
    assert v1 == pytest.approx(v2, abs=LOGLIK_NOISE)
    np.testing.assert_allclose(g1, g2, rtol=0, atol=1e-7)


def test_sampled_rationality_without_a_pin_is_refused_with_the_fix():
    lik = _likelihood()
    msg = r"pin=\{'x': 1\.0\}"  # names the fix with the model's first feature
    with pytest.raises(InputError, match=msg):
        PosteriorModel(lik, rationality=bi.LogNormal(0.0, 1.0))
    with pytest.raises(InputError, match=msg):  # the public entry point, before any sampling
        bi.sample(lik, rationality=bi.LogNormal(0.0, 1.0), chains=1, draws=1, warmup=0,
                  progress=False)


def test_sampled_rationality_needs_a_lognormal():
    with pytest.raises(InputError, match="LogNormal"):
        PosteriorModel(_likelihood(), rationality=bi.Normal(1.0, 0.1), pin={"x": 1.0})


def test_unknown_pin_name_is_refused_naming_the_features():
    with pytest.raises(InputError, match=r"unknown feature 'speed'.*\['x', 'y', 'z'\]"):
        PosteriorModel(_likelihood(), pin={"speed": 1.0})


def test_pinning_every_weight_is_refused():
    with pytest.raises(InputError, match="every weight is pinned"):
        PosteriorModel(_likelihood(), pin={"x": 1.0, "y": 0.5, "z": -1.0})


def test_pinned_weights_are_held_and_excluded_from_theta():
    model = PosteriorModel(_likelihood(), prior=bi.Normal(), pin={"y": 0.25})
    assert model.dim == 2 and model.free.tolist() == [0, 2]
    w, beta = model.unpack(np.array([1.5, -2.0]))
    assert w.tolist() == [1.5, 0.25, -2.0] and beta == 1.3  # likelihood's rationality


def test_prior_of_the_wrong_length_is_refused():
    with pytest.raises(InputError, match=r"shape \(2,\).*\(3,\)"):
        PosteriorModel(_likelihood(), prior=bi.Normal(np.zeros(2), 1.0))


@pytest.mark.parametrize("value", ["one", None, float("nan"), 0.0])
def test_bad_pin_values_are_input_errors_naming_the_pin(value):
    # Regression for "one" and None (a bare ValueError / TypeError from float() before
    # 19a1b04). Zero is refused too: it cannot set the scale when beta is sampled.
    with pytest.raises(InputError, match="pin: 'x'"):
        PosteriorModel(_likelihood(), pin={"x": value})


@pytest.mark.parametrize("case", CASES)
def test_value_only_logdensity_equals_logdensity_and_grad(case):
    # The random-walk sampler uses PosteriorModel.logdensity (no adjoint solve); it must be
    # the same function as the one NUTS sees, up to the solver noise of the two paths.
    kwargs, theta = CASES[case]
    model = PosteriorModel(_likelihood(), **kwargs)
    for t in (theta, theta - 0.35):
        assert model.logdensity(t) == pytest.approx(model(t)[0], abs=2 * LOGLIK_NOISE)
