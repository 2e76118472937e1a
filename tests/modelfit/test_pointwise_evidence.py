"""Pointwise log-likelihood of the further evidence: episodes with unrecorded parts (per
episode, per step) and comparison answers; every split sums to its term's log density.

Outside references: brute-force enumeration of every completion of what was not recorded,
under a plain-numpy soft value iteration (``tests/partial/reference.py``, nothing from the
package's solvers); the logistic choice probability (Bradley & Terry 1952; Luce 1959) from
returns summed by hand and ``scipy.special.expit``.
"""

from __future__ import annotations

import numpy as np
import pytest
from partial.reference import brute_force_loglik, soft_policy, tiny_mdp_arrays
from posterior.problems import small_mdp
from scipy.special import expit

import bayesirl as bi
from bayesirl.evidence import BoltzmannTerm, Evidence
from bayesirl.evidence.comparisons import ComparisonTerm
from bayesirl.evidence.partial import PartialEpisodes, PartialTerm

W, BETA = np.array([0.7, -0.4]), 1.3
Q = {"weights": W, "rationality": BETA}


def tiny_partial(blank_final_state: bool = True):
    """Simulated (so possible) episodes on a 3-state MDP with forbidden moves, with actions
    and a final state left out but no gap of unrecorded states."""
    p, phi = tiny_mdp_arrays(3)
    mdp = bi.TabularMDP(p, phi, discount=0.8)
    demos = bi.simulate(mdp, W, episodes=3, length=5, seed=4, rationality=BETA)
    states = [s.copy() for s, _ in demos.episodes]
    actions = [a.copy() for _, a in demos.episodes]
    actions[0][:] = -1  # state-only
    actions[1][1::2] = -1  # every other action
    if blank_final_state:
        states[2][-1] = -1  # the state after the last action
    return p, phi, mdp, states, actions


def test_partial_steps_equal_brute_force_and_sum_to_the_term():
    p, phi, mdp, states, actions = tiny_partial()
    term = PartialTerm(mdp, PartialEpisodes(states, actions), tol=0.0, gradient_rtol=1e-13)
    split = term.pointwise(Q)
    assert split.episodes is None and split.answers is None  # episodes of the term's own
    pol = soft_policy(p, phi, W, BETA, 0.8)
    lengths = [a.size for a in actions]
    steps = np.split(split.step, np.cumsum(lengths)[:-1])
    for e, (s, a) in enumerate(zip(states, actions, strict=True)):
        # each step alone, enumerated (given the reward the steps are independent: Markov)
        want = [brute_force_loglik(p, pol, [s[t], s[t + 1]], [a[t]]) for t in range(a.size)]
        # value iteration to a fixed point in floats: agreement to ~1e-15 relative
        np.testing.assert_allclose(steps[e], want, rtol=0, atol=1e-10)
        assert split.episode[e] == pytest.approx(brute_force_loglik(p, pol, s, a), abs=1e-10)
    assert split.episode.sum() == pytest.approx(term.evaluate(Q, False).logp, abs=1e-10)
    np.testing.assert_allclose([x.sum() for x in steps], split.episode, rtol=0, atol=1e-12)
    # Negative control: one recorded action changed moves that step's value only.
    s1, a1 = states[1], actions[1]
    t = next(int(t) for t in np.flatnonzero(a1 >= 0) if p[s1[t], 1 - a1[t], s1[t + 1]] > 0)
    changed = [a.copy() for a in actions]
    changed[1][t] = 1 - changed[1][t]
    other = PartialTerm(mdp, PartialEpisodes(states, changed), tol=0.0).pointwise(Q).step
    moved = np.flatnonzero(np.abs(other - split.step) > 1e-9)
    assert moved.tolist() == [lengths[0] + t]


def test_a_gap_has_no_per_step_values():
    p, phi, mdp, states, actions = tiny_partial()
    states[0][2] = -1  # a hidden state: steps 1 and 2 are one observation
    term = PartialTerm(mdp, PartialEpisodes(states, actions), tol=0.0)
    split = term.pointwise(Q)
    assert split.step is None
    pol = soft_policy(p, phi, W, BETA, 0.8)
    assert split.episode[0] == pytest.approx(brute_force_loglik(p, pol, states[0], actions[0]),
                                             abs=1e-10)


def comparison_case():
    mdp = small_mdp(0, 2)
    demos = bi.simulate(mdp, W, episodes=3, length=6, seed=7)
    eps = {f"e{k}": ep for k, ep in enumerate(demos.episodes)}
    pairs = [("e0", "e1"), ("e2", "e0"), ("e1", "e2"), ("e0", "e2")]
    return mdp, eps, pairs


def test_answer_log_probabilities_equal_the_choice_probability_by_hand():
    mdp, eps, pairs = comparison_case()
    term = ComparisonTerm.from_episodes(mdp, eps, pairs, rationality=1.7)

    def ret(name):  # discounted return, summed by hand
        s, a = eps[name]
        return sum(mdp.discount ** t * mdp.features[s[t], a[t]] @ W for t in range(a.size))

    want = np.log([expit(1.7 * (ret(x) - ret(y))) for x, y in pairs])
    got = term.answer_log_probabilities(Q)
    np.testing.assert_allclose(got, want, rtol=1e-12)
    assert got.sum() == pytest.approx(term.evaluate(Q).logp, rel=1e-14)
    # The answers a person could give to each question (either episode) have probabilities
    # summing to one.
    reverse = ComparisonTerm.from_episodes(mdp, eps, [(y, x) for x, y in pairs], rationality=1.7)
    np.testing.assert_allclose(np.exp(got) + np.exp(reverse.answer_log_probabilities(Q)), 1.0,
                               rtol=1e-14)
    split = term.pointwise(Q)
    assert split.episodes.size == 0 and split.episode.size == 0 and split.step.size == 0
    np.testing.assert_array_equal(split.answers, got)
    # Negative control: another answer to question 0 changes value 0 only.
    flipped = ComparisonTerm.from_episodes(mdp, eps, [("e1", "e0"), *pairs[1:]], rationality=1.7)
    diff = flipped.answer_log_probabilities(Q) - got
    assert abs(diff[0]) > 1e-3 and np.all(diff[1:] == 0.0)


def every_kind():
    """Demonstrations, episodes with unrecorded parts and comparisons on one small MDP."""
    mdp, eps, pairs = comparison_case()
    demos = bi.simulate(mdp, W, episodes=4, length=6, seed=2)
    walks = bi.simulate(mdp, W, episodes=3, length=5, seed=9)
    states = [s.copy() for s, _ in walks.episodes]
    actions = [np.full(a.size, -1) for _, a in walks.episodes]
    states[2][2] = -1  # one gap
    partial = PartialTerm(mdp, PartialEpisodes(states, actions))
    comparisons = ComparisonTerm.from_episodes(mdp, eps, pairs, rationality=1.7)
    return bi.BoltzmannLikelihood(mdp, demos), partial, comparisons


def test_evidence_split_places_every_kind_and_sums_to_the_evidence():
    lik, partial, comparisons = every_kind()
    evidence = Evidence([BoltzmannTerm(lik, key="demos"), partial, comparisons])
    split = evidence.pointwise(Q, lik.demos.lengths)
    np.testing.assert_array_equal(split.episode[:4], lik.episode_log_likelihood(W, BETA))
    # A second solve starts warm: the same policy to the solver's tolerance (span 1e-10 of
    # the values, so each log pi within ~2e-10; 5 steps per walk: 1e-9, doubled).
    np.testing.assert_allclose(split.episode[4:], partial.pointwise(Q).episode, atol=2e-9)
    np.testing.assert_array_equal(split.answers, comparisons.answer_log_probabilities(Q))
    total = split.episode.sum() + split.answers.sum()
    assert total == pytest.approx(evidence.evaluate(Q, False).logp, abs=1e-9)
    assert split.step is None  # the gap
    # Without the gap every step has a value: the demonstrations' steps, then the walks'.
    gap_free = partial.subset([0, 1])
    steps = Evidence([BoltzmannTerm(lik, key="demos"), gap_free]).pointwise(
        Q, lik.demos.lengths).step
    np.testing.assert_array_equal(steps[:lik.demos.n_steps], lik.step_log_likelihood(W, BETA))
    np.testing.assert_allclose(steps[lik.demos.n_steps:], gap_free.pointwise(Q).step, atol=2e-9)
