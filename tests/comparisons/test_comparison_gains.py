"""Expected information gain of comparison queries, exact over the two answers.

Outside references: the mutual information computed from the joint table of (draw, answer)
probabilities (the definition, Cover & Thomas ch. 2), independently of the entropy-of-the-
mean shortcut; ``scipy.stats.entropy`` for a single-pair hand check; and two limits known
without computation: a pair with equal feature sums (nothing to learn: gain 0) and draws
that all agree (no uncertainty about the answer's probability: gain 0).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.special import expit
from scipy.stats import entropy

from bayesirl.design.comparisons import comparison_gains, comparison_gains_ref


def test_gains_equal_the_mutual_information_by_enumeration():
    rng = np.random.default_rng(3)
    draws = rng.normal(size=(7, 3))
    diffs = rng.normal(size=(5, 3)) * 2.0
    got = comparison_gains(draws, diffs, rationality=1.3)
    assert np.allclose(got.gain, comparison_gains_ref(draws, diffs, 1.3), rtol=0, atol=1e-13)
    # hand check of pair 0 with scipy's entropy
    p = expit(1.3 * draws @ diffs[0])
    want = entropy([p.mean(), 1 - p.mean()]) - np.mean([entropy([x, 1 - x]) for x in p])
    assert got.gain[0] == pytest.approx(want, abs=1e-13)
    assert np.all(got.stderr > 0) and np.all(got.gain <= np.log(2))


def test_uninformative_questions_gain_nothing_and_rank_last():
    rng = np.random.default_rng(4)
    draws = rng.normal(size=(400, 2))
    diffs = np.array([[0.0, 0.0], [1.0, -1.0], [0.0, 2.0]])
    got = comparison_gains(draws, diffs)
    assert got.gain[0] == 0.0 and got.p_first[0] == 0.5
    assert got.gain[1] > 10 * got.stderr[1]  # draws disagree about the answer: informative
    assert list(got.order())[-1] == 0
    same = comparison_gains(np.tile([0.5, -0.2], (50, 1)), diffs)  # every draw the same
    assert np.allclose(same.gain, 0.0, atol=1e-15)


def test_pairs_from_posterior_draws():
    from posterior.problems import small_mdp

    from bayesirl.design.comparisons import pairs_from_draws
    from bayesirl.evidence.comparisons import discounted_features

    mdp = small_mdp(0, 2)
    draws = np.random.default_rng(2).normal(size=(30, 2))
    eps, diffs = pairs_from_draws(mdp, draws, n_pairs=6, length=5, seed=3)
    assert len(eps) == 12 and diffs.shape == (6, 2)
    want = discounted_features(mdp, *eps[2]) - discounted_features(mdp, *eps[3])
    assert np.array_equal(diffs[1], want)
    again = pairs_from_draws(mdp, draws, n_pairs=6, length=5, seed=3)[1]
    assert np.array_equal(diffs, again)  # seeded
    assert not np.array_equal(diffs, pairs_from_draws(mdp, draws, 6, 5, seed=4)[1])
    gains = comparison_gains(draws, diffs)
    assert np.all(gains.gain >= 0) and gains.order().size == 6


def test_three_answers_and_per_draw_rationality_by_enumeration():
    """Davidson's three answers and one beta_c per draw: the mutual information from the
    joint table p(draw, answer) (Cover & Thomas ch. 2), each probability from its definition
    (Davidson 1970), with no shared code."""
    rng = np.random.default_rng(8)
    draws, diffs = rng.normal(size=(9, 2)), rng.normal(size=(4, 2)) * 2
    beta, nu = np.exp(rng.normal(size=9) * 0.5), np.exp(rng.normal(size=9) * 0.5)
    got = comparison_gains(draws, diffs, rationality=beta, tie=nu)
    for k in range(4):
        joint = []
        for i in range(9):
            z = beta[i] * draws[i] @ diffs[k]
            u = np.array([np.exp(z / 2), np.exp(-z / 2), nu[i]])
            joint.append(u / u.sum() / 9)
        joint = np.array(joint)
        marg = joint.sum(axis=0)
        mi = np.sum(joint * np.log(joint / (marg[None, :] / 9)))
        assert got.gain[k] == pytest.approx(mi, abs=1e-13)
    # a constant per-draw beta equals the scalar reference (the joint-table definition)
    same = comparison_gains(draws, diffs, rationality=np.full(9, 1.3))
    assert np.allclose(same.gain, comparison_gains_ref(draws, diffs, 1.3), rtol=0, atol=1e-13)
    # negative control: a tie option changes the gains (a third answer carries information)
    assert np.max(np.abs(got.gain - comparison_gains(draws, diffs, rationality=beta).gain)) > 1e-3
