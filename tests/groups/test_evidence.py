"""The evidence model: sums of terms, their warm starts, and its refusals.

Outside reference: the log-likelihood of independent episodes is the sum of the episodes'
log-likelihoods (the demonstrator model's product form, docs/likelihood.md), so the
demonstrators' terms at one shared weight vector must add up to the one-term likelihood of
all episodes, to the solver's documented accuracy 2 * n_steps * tol per solve.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

import bayesirl as bi
from bayesirl.evidence import (
    BoltzmannTerm,
    Evidence,
    EvidenceTerm,
    demonstrator_evidence,
    pooled_evidence,
    weights_name,
)

from .gaussian import GaussianTerm
from .problems import fresh, three_demonstrators

W = np.array([0.6, -0.2])
BETA = 1.3


def test_terms_satisfy_the_protocol():
    assert isinstance(BoltzmannTerm(fresh(three_demonstrators())), EvidenceTerm)
    assert isinstance(GaussianTerm(0, 1.0, 1.0), EvidenceTerm)


def test_one_term_model_is_the_likelihood_bit_for_bit():
    lik_a, lik_b = fresh(three_demonstrators()), fresh(three_demonstrators())
    value = pooled_evidence(lik_a).evaluate({"weights": W, "rationality": BETA})
    direct = lik_b.evaluate(W, BETA)
    assert value.logp == direct.loglik
    assert np.array_equal(value.grads["weights"], direct.grad_weights)
    assert value.grads["rationality"] == direct.grad_log_rationality


def test_demonstrator_terms_add_up_to_the_pooled_likelihood():
    lik = fresh(three_demonstrators(1e-11))
    ev = demonstrator_evidence(lik)
    assert [t.key for t in ev.terms] == ["d0", "d1", "d2"]
    q = {weights_name(i): W for i in range(3)} | {"rationality": BETA}
    value = ev.evaluate(q)
    direct = fresh(lik).evaluate(W, BETA)
    n_steps = lik.demos.n_steps
    assert abs(value.logp - direct.loglik) < 4 * n_steps * lik.tol
    summed = sum(value.grads[weights_name(i)] for i in range(3))
    assert np.allclose(summed, direct.grad_weights, rtol=1e-8, atol=1e-9)
    assert value.grads["rationality"] == pytest.approx(direct.grad_log_rationality, rel=1e-8)
    # negative control: one demonstrator at other weights breaks the sum
    q[weights_name(1)] = W + 0.1
    assert abs(ev.evaluate(q).logp - direct.loglik) > 1e-3


def test_warm_start_arrays_are_kept_per_term():
    lik = fresh(three_demonstrators())
    ev = demonstrator_evidence(lik)
    q = {weights_name(i): W + 0.1 * i for i in range(3)} | {"rationality": BETA}
    ev.evaluate(q)
    arrays = ev.warm_start_arrays()
    assert {k.split(".")[0] for k in arrays} == {"d0", "d1", "d2"}
    other = demonstrator_evidence(fresh(lik))
    other.load_warm_start_arrays(arrays)
    for a, b in zip(ev.terms, other.terms, strict=True):
        assert np.array_equal(a.likelihood._cache["values"], b.likelihood._cache["values"])
    # in-memory snapshots restore the counts and states of every term
    snap = ev.warm_start()
    ev.evaluate(q)
    ev.restore_warm_start(snap)
    assert ev.n_evaluations == 3


def test_refusals():
    lik = fresh(three_demonstrators())
    with pytest.raises(bi.InputError, match="at least one"):
        Evidence([])
    with pytest.raises(bi.InputError, match="unique"):
        Evidence([GaussianTerm(0, 1.0, 1.0), GaussianTerm(0, 2.0, 1.0)])
    with pytest.raises(bi.InputError, match="single term"):
        Evidence([BoltzmannTerm(lik), GaussianTerm(0, 1.0, 1.0)])


names = st.text(st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=6)


@given(st.lists(st.one_of(names, st.none(), st.integers()), min_size=1, max_size=5))
def test_demonstrator_names_are_validated(labels):
    # Hypothesis: every label list is either accepted as stripped non-empty strings, one per
    # episode, or refused with an InputError naming the episode -- never anything else.
    episodes = [(np.array([0, 1]), np.array([0]))] * len(labels)
    ok = all(isinstance(x, str) and x.strip() for x in labels)
    if ok:
        demos = bi.Demonstrations(episodes, demonstrators=labels)
        assert demos.demonstrators == tuple(x.strip() for x in labels)
        assert sum(len(v) for v in demos.groups().values()) == len(labels)
    else:
        with pytest.raises(bi.InputError, match="episode"):
            bi.Demonstrations(episodes, demonstrators=labels)
    with pytest.raises(bi.InputError, match="names for"):
        bi.Demonstrations(episodes, demonstrators=["a"] * (len(labels) + 1))


def test_per_demonstrator_likelihoods_keep_every_setting():
    from bayesirl.evidence.groups import likelihood_settings, split_likelihood

    lik = bi.BoltzmannLikelihood(three_demonstrators().mdp, three_demonstrators().demos,
                                 rationality=1.7, q_function="optimal", tol=1e-9,
                                 gradient_rtol=1e-7)
    want = likelihood_settings(lik)
    assert {"rationality", "q_function", "tol", "gradient_rtol"} <= set(want)
    for part in split_likelihood(lik):
        assert likelihood_settings(part) == want
