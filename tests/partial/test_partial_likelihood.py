"""The partial-episode term (unrecorded actions and states): value, gradient, factorisation.

Outside references: brute-force enumeration of every completion of the unrecorded actions
and states with a plain-numpy soft policy (``reference.py``); central finite differences;
the chain rule ``log pi(a|s) + log P(s'|s,a) = log P(s'|s) + log P(a|s,s')`` (so with every
action recorded, the state-only term plus the action-given-next-state term equals today's
Boltzmann likelihood plus the dynamics constant).
"""

from __future__ import annotations

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.errors import InputError
from bayesirl.evidence import EvidenceTerm
from bayesirl.evidence.partial import PartialEpisodes, PartialTerm, state_only

from .reference import brute_force_loglik, soft_policy, tiny_mdp_arrays

W, BETA = np.array([0.7, -0.4]), 1.3
# Episodes on 3 states, 2 actions: state-only steps, mixed steps, gaps of 1 and 2 hidden
# states, an open end after a recorded action, and a final state left out.
EPISODES = [
    ([0, 1, 2, 1, 0], [-1, -1, -1, -1]),
    ([0, -1, 2, -1, -1, 1], [1, -1, -1, 0, -1]),
    ([2, 1, -1, -1], [-1, 0, 1]),
    ([1, -1, 0], [-1, -1]),
    ([0, 2], [1, 0]),
]


def _model(horizon=None, seed=3, discount=0.8):
    p, phi = tiny_mdp_arrays(seed)
    return p, phi, bi.TabularMDP(p, phi, discount=discount, horizon=horizon)


def _possible(p, states, actions):
    """Whether an episode is possible (the enumeration's total is positive)."""
    pol = np.full(p.shape[:2], 0.5)
    return np.isfinite(brute_force_loglik(p, pol, states, actions))


def _episodes(p):
    eps = [e for e in EPISODES if _possible(p, *e)]
    assert len(eps) >= 4, "the seed leaves too few possible episodes to test"
    return eps


def _term(mdp, eps, **kw):
    return PartialTerm(mdp, PartialEpisodes([s for s, _ in eps], [a for _, a in eps]),
                       tol=0.0, gradient_rtol=1e-13, **kw)


@pytest.mark.parametrize("horizon", [None, 6])
def test_equals_brute_force_enumeration(horizon):
    p, phi, mdp = _model(horizon)
    eps = _episodes(p)
    term = _term(mdp, eps)
    assert isinstance(term, EvidenceTerm)
    pol = soft_policy(p, phi, W, BETA, 0.8, horizon)
    want = [brute_force_loglik(p, pol, s, a, horizon is not None) for s, a in eps]
    got = term.pointwise({"weights": W, "rationality": BETA}).episode
    # value iteration to a fixed point in floats: policies agree to ~1e-15 relative
    assert np.allclose(got, want, rtol=0, atol=1e-10)
    assert term.evaluate({"weights": W, "rationality": BETA}).logp == pytest.approx(
        sum(want), abs=1e-10)
    # negative control: one recorded action changed changes the value by far more than 1e-10
    changed = next((s, [1 - a[0]] + a[1:]) for s, a in eps
                   if a[0] >= 0 and _possible(p, s, [1 - a[0]] + a[1:]))
    other = _term(mdp, [changed]).pointwise({"weights": W, "rationality": BETA}).episode[0]
    assert abs(other - want[eps.index(next(e for e in eps if e[0] == changed[0]))]) > 1e-3


@pytest.mark.parametrize("horizon", [None, 6])
def test_gradient_matches_finite_differences(horizon):
    p, _, mdp = _model(horizon)
    term = _term(mdp, _episodes(p))
    value = term.evaluate({"weights": W, "rationality": BETA})

    def f(w, log_beta):
        return term.evaluate({"weights": w, "rationality": np.exp(log_beta)}, False).logp

    h = 1e-5  # central differences: error ~ h^2 f''' ~ 1e-10 at these scales
    fd = np.array([(f(W + h * e, np.log(BETA)) - f(W - h * e, np.log(BETA))) / (2 * h)
                   for e in np.eye(2)])
    fd_beta = (f(W, np.log(BETA) + h) - f(W, np.log(BETA) - h)) / (2 * h)
    assert np.allclose(value.grads["weights"], fd, rtol=1e-6, atol=1e-8)
    assert value.grads["rationality"] == pytest.approx(fd_beta, rel=1e-6, abs=1e-8)
    # negative control: the gradient of the fully recorded Boltzmann term is not this one
    assert not np.allclose(value.grads["weights"], 0.0, atol=1e-3)


def test_fully_recorded_episode_factorises():
    p, phi, mdp = _model(seed=5)
    demos = bi.simulate(mdp, W, episodes=4, length=6, seed=2, rationality=BETA)
    states = [s for s, _ in demos.episodes]
    actions = [a for _, a in demos.episodes]
    q = {"weights": W, "rationality": BETA}
    today = bi.BoltzmannLikelihood(mdp, demos, tol=0.0, gradient_rtol=1e-13).evaluate(W, BETA)
    full = PartialTerm(mdp, PartialEpisodes(states, actions), tol=0.0, gradient_rtol=1e-13)
    walks = PartialTerm(mdp, state_only(states), tol=0.0, gradient_rtol=1e-13)
    dyn = sum(np.log(p[s[:-1], a, s[1:]]).sum() for s, a in zip(states, actions, strict=True))
    pol = soft_policy(p, phi, W, BETA, 0.8)
    given_next = 0.0  # log P(a | s, s') = log pi(a|s) P(s'|s,a) / sum_b pi(b|s) P(s'|s,b)
    for s, a in zip(states, actions, strict=True):
        joint = pol[s[:-1]] * p[s[:-1], :, s[1:]]
        given_next += np.log(joint[np.arange(a.size), a] / joint.sum(axis=1)).sum()
    assert full.evaluate(q).logp == pytest.approx(today.loglik + dyn, abs=1e-10)
    assert walks.evaluate(q).logp + given_next == pytest.approx(today.loglik + dyn, abs=1e-10)
    g_full = full.evaluate(q).grads["weights"]
    assert np.allclose(g_full, today.grad_weights, rtol=1e-9, atol=1e-10)
    # negative control: without the action term the state-only term is not today's likelihood
    assert abs(walks.evaluate(q).logp - today.loglik - dyn) > 1e-3


def test_refuses_impossible_and_malformed_episodes():
    p, _, mdp = _model()
    a, s2 = (int(x[0]) for x in np.nonzero(p[0] == 0.0))
    with pytest.raises(InputError, match=f"cannot go from state 0 by action {a} to state {s2}"):
        _term(mdp, [([0, s2], [a])])
    assert _term(mdp, [([0, s2], [1 - a])]) if p[0, 1 - a, s2] > 0 else True
    blocked = np.flatnonzero(p[0].sum(axis=0) == 0.0)
    if blocked.size:
        with pytest.raises(InputError, match="cannot go from state 0 by any action"):
            _term(mdp, [([0, int(blocked[0])], [-1])])
    with pytest.raises(InputError, match="first state is not recorded"):
        PartialEpisodes([[-1, 1]], [[0]])
    with pytest.raises(InputError, match="valid values are 0..2"):
        _term(mdp, [([0, 7], [-1])])
    with pytest.raises(InputError, match="horizon 2"):
        _term(_model(horizon=2)[2], [([0, -1, -1, 1], [-1, -1, -1])])
