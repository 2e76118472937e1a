"""The designer on a posterior with several demonstrators: guarded, or told whose data.

Reference: the definition of mutual information, ``I = H(E_theta pi(.|s)) - E_theta
H(pi(.|s))`` for one labelled action at ``s`` (Cover & Thomas, ch. 2), over the joint
posterior draws, with policies from an independent dense soft value iteration
(tests/design/test_gains.py). A query's outcome depends on the parameters only through the
named demonstrator's weights, so its information about all of them is this number for the
draws of that demonstrator's weights. Exact quantities to 1e-9, as in test_gains.
"""

from __future__ import annotations

import numpy as np
import pytest
from design.test_gains import _dense_policies, _mi

import bayesirl as bi
from bayesirl.design import suggest

from .test_posterior import posterior


def test_group_posterior_is_refused_without_a_demonstrator():
    with pytest.raises(bi.InputError, match="name whose"):
        suggest(posterior("partial"), "query-states")
    with pytest.raises(bi.InputError, match="not in this posterior"):
        suggest(posterior("partial"), "query-states", demonstrator="zed")


def test_demonstrator_is_refused_for_one_reward():
    from posterior.problems import PRIOR

    from .problems import fresh, three_demonstrators
    from .test_posterior import RUN

    pooled = bi.sample(fresh(three_demonstrators()), PRIOR, **RUN)
    with pytest.raises(bi.InputError, match="several demonstrators"):
        suggest(pooled, "query-states", demonstrator="ana")


@pytest.mark.parametrize("pooling", ["partial", "separate"])
def test_more_from_a_demonstrator_is_the_information_about_their_weights(pooling):
    p = posterior(pooling)
    mdp = p.model.likelihood.mdp
    assert p.model.fixed_rationality == 1.0  # the dense reference uses beta = 1
    k = p.groups["demonstrators"].index("cai")
    own = p.groups["demonstrator_weights"][..., k, :].reshape(-1, 2)
    got = {r.state: r.gain for r in suggest(p, "query-states", demonstrator="cai")}
    logpol, _ = _dense_policies(mdp, own)
    exact = np.array([_mi(logpol[:, s, :]) for s in range(mdp.n_states)])
    assert np.max(np.abs(np.array([got[s] for s in range(mdp.n_states)]) - exact)) < 1e-9
    # negative control: the headline (population) draws, which the unguarded designer
    # simulated from, give other gains
    head, _ = _dense_policies(mdp, p.weights.reshape(-1, 2))
    wrong = np.array([_mi(head[:, s, :]) for s in range(mdp.n_states)])
    assert np.max(np.abs(wrong - exact)) > 1e-3
