"""``rationality`` takes the same forms in ``BoltzmannLikelihood`` and ``sample``: a positive
number (fixed) or a ``LogNormal`` prior (sampled). Given to the likelihood, a prior is what
``sample`` samples when it is not told otherwise; the draws are then the same bits as
passing the prior to ``sample`` (the same model, seed and chain code)."""

from __future__ import annotations

import math

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.execution.backend import Serial
from posterior.problems import PIN, PRIOR, RATIONALITY, three_feature_likelihood

RUN = dict(chains=2, draws=30, warmup=30, seed=11, progress=False, backend=Serial())


def _with(rationality) -> bi.BoltzmannLikelihood:
    lik = three_feature_likelihood()
    return bi.BoltzmannLikelihood(lik.mdp, lik.demos, rationality=rationality,
                                  q_function=lik.q_function, tol=lik.tol)


def test_a_prior_on_the_likelihood_is_sampled_like_a_prior_given_to_sample():
    on_lik = bi.sample(_with(RATIONALITY), PRIOR, pin=PIN, **RUN)
    on_sample = bi.sample(_with(1.0), PRIOR, rationality=RATIONALITY, pin=PIN, **RUN)
    assert on_lik.rationality is not None
    np.testing.assert_array_equal(on_lik.weights, on_sample.weights)
    np.testing.assert_array_equal(on_lik.rationality, on_sample.rationality)


def test_a_number_on_the_likelihood_stays_fixed():
    # Negative control for the test above: a fixed rationality is not sampled, and the
    # weights' draws differ from the sampled-rationality run's.
    fixed = bi.sample(_with(math.exp(0.0)), PRIOR, pin=PIN, **RUN)
    sampled = bi.sample(_with(RATIONALITY), PRIOR, pin=PIN, **RUN)
    assert fixed.rationality is None
    assert not np.array_equal(fixed.weights, sampled.weights)


def test_a_prior_s_median_is_the_default_for_a_single_evaluation():
    w = np.array([0.8, -0.5, 0.3])
    prior = bi.LogNormal(0.4, 0.5)
    assert _with(prior).value(w) == _with(math.exp(0.4)).value(w)
    assert _with(prior).value(w) != _with(1.0).value(w)  # the default matters


@pytest.mark.parametrize("bad", ["1.0", -1.0, 0.0, math.inf, bi.LogNormal([0.0, 1.0], 1.0)])
def test_bad_rationality_forms_are_refused(bad):
    with pytest.raises(bi.InputError, match="rationality"):
        _with(bad)
