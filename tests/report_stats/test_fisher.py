"""Fisher-information findings at the posterior mean: flat directions and only those.

``fisher_findings`` takes the observed information from central differences of the exact
gradient. The independent checks: along a flagged direction the log-likelihood itself stays
put; on the well-determined park the information computed here from log-likelihood *values*
only (second differences, no gradient) has no eigenvalue anywhere near the 1e-6 cut-off.
"""

from __future__ import annotations

import numpy as np

import bayesirl as bi
from bayesirl.report import structural

from .problems import mud2_posterior, park_posterior
from .test_structural import LIK_TOL, case

# Park: 40 x 15 = 600 steps; with the span tolerance LIK_TOL each log-policy entry is within
# LIK_TOL of exact, so two invariant points agree to 2 * 600 * LIK_TOL = 1.2e-8.
PARK_STEPS = 600
PARK_ATOL = 2 * PARK_STEPS * LIK_TOL


def _mean(posterior) -> np.ndarray:
    return posterior.weights.reshape(-1, posterior.weights.shape[-1]).mean(axis=0)


def _fresh(posterior) -> bi.BoltzmannLikelihood:
    lik = posterior.model.likelihood
    return bi.BoltzmannLikelihood(lik.mdp, lik.demos, rationality=lik.rationality,
                                  q_function=lik.q_function, tol=LIK_TOL)


def _value_information(lik, w, h):
    """Negative Hessian of L from values only: central second differences."""
    f = w.shape[0]
    e = np.eye(f) * h
    info = np.empty((f, f))
    for i in range(f):
        info[i, i] = -(lik.value(w + e[i]) - 2 * lik.value(w) + lik.value(w - e[i])) / h**2
        for j in range(i):
            info[i, j] = info[j, i] = -(
                lik.value(w + e[i] + e[j]) - lik.value(w + e[i] - e[j])
                - lik.value(w - e[i] + e[j]) + lik.value(w - e[i] - e[j])) / (4 * h * h)
    return info


def test_duplicate_mud_is_flat_at_the_posterior_mean():
    post = mud2_posterior()
    lik = _fresh(post)
    w = _mean(post)
    found = structural.fisher_findings(lik, w)
    assert [(f.cause, sorted(f.features)) for f in found] == [("flat-information",
                                                               ["mud", "mud2"])]
    c = np.array([found[0].combination.get(n, 0.0) for n in lik.mdp.feature_names])
    # sparse_basis scales the largest coefficient to 1; mud - mud2 up to the sign, to the
    # finite-difference precision of the Hessian (~1e-6 relative; checked at 1e-4).
    np.testing.assert_allclose(np.abs(c), [1, 1, 0, 0, 0], atol=1e-4)
    assert c[0] * c[1] < 0
    # The independent statement: the likelihood does not move along mud - mud2 (the flagged
    # vector is that direction to 1e-4; along its tiny error the likelihood does move).
    base = lik.value(w)
    exact = np.array([1.0, -1.0, 0, 0, 0])
    for t in (-3.0, 2.0, 5.0):
        assert abs(lik.value(w + t * exact) - base) <= PARK_ATOL


def test_well_determined_park_has_no_flat_direction():
    post = park_posterior()
    lik = _fresh(post)
    w = _mean(post)
    assert structural.fisher_findings(lik, w) == []
    # Independent: information from second differences of log-likelihood values. With
    # h = 1e-2 the truncation error is ~h^2 |L''''| ~ 1e-4 * 600 = 0.06 and rounding
    # 4 * PARK_ATOL / h^2 ~ 5e-4: the smallest eigenvalue is known to ~0.1, and it must be far
    # above 1e-6 of the largest (observed: a few units against ~50).
    info = _value_information(lik, w, h=1e-2)
    vals = np.linalg.eigvalsh(0.5 * (info + info.T))
    assert vals.min() > 1e-3 * vals.max(), vals


def test_collinear_triple_is_flat_at_any_weights():
    mdp, demos, w, _ = case("triple")
    lik = bi.BoltzmannLikelihood(mdp, demos, tol=LIK_TOL)
    found = structural.fisher_findings(lik, w)
    assert [(f.cause, sorted(f.features)) for f in found] == [("flat-information",
                                                               ["f1", "f2", "f3"])]
    c = np.array([found[0].combination[n] for n in mdp.feature_names])
    np.testing.assert_allclose(c / c[1], [0.5, 1.0, -0.5], atol=1e-4)


def test_flat_direction_never_prints_a_negative_information():
    # An information (a variance of the score) is >= 0; along an exactly flat direction the
    # finite-difference value is rounding noise of either sign and must not print as negative.
    post = mud2_posterior()
    found = structural.fisher_findings(_fresh(post), _mean(post))
    assert found, "the mud - mud2 direction is flat"
    for f in found:
        size = f.message.split("in this direction is ")[1].split(",")[0]
        assert size == "zero within rounding" or float(size) >= 0.0, f.message
