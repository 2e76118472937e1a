"""Forward-backward passes against their plain references, the sparse solver path, warm starts.

Outside references: ``gap_pass_ref`` and ``step_pass_ref`` (unscaled alpha-beta products on a
dense array; one step at a time), central finite differences on a problem large enough for
the sparse (GMRES) path, and the sum rule: posterior step counts of a piece sum to its length.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

import bayesirl as bi
from bayesirl.errors import InputError
from bayesirl.evidence.hidden import Gap, gap_pass, gap_pass_ref, step_pass, step_pass_ref
from bayesirl.evidence.partial import PartialEpisodes, PartialTerm

from .reference import soft_policy, tiny_mdp_arrays

W, BETA = np.array([0.7, -0.4]), 1.3


def test_passes_match_their_references():
    p, phi = tiny_mdp_arrays(0, n_states=4, n_actions=3)
    mdp = bi.TabularMDP(p, phi, discount=0.9)
    pol = soft_policy(p, phi, W, BETA, 0.9)
    for gap in (Gap(0, 2, 1, np.array([-1, 2, -1, -1]), 3), Gap(0, 0, 0, np.array([1, -1]), -1)):
        lp, parts = gap_pass(mdp.dynamics, gap, lambda t: pol)
        lp_ref, parts_ref = gap_pass_ref(p, gap, lambda t: pol)
        assert lp == pytest.approx(lp_ref, abs=1e-12)
        for (t, n), (t_ref, n_ref) in zip(parts, parts_ref, strict=True):
            assert t == t_ref and np.allclose(n, n_ref, rtol=0, atol=1e-13)
            assert n.sum() == pytest.approx(1.0, abs=1e-13)  # one step, one unit of mass
    demos = bi.simulate(mdp, W, episodes=3, length=5, seed=1, rationality=BETA)
    acts = [np.where(np.arange(a.size) % 2 == 0, -1, a) for _, a in demos.episodes]
    steps, _ = PartialEpisodes([s for s, _ in demos.episodes], acts).pieces(mdp)
    assert np.any(steps.action < 0) and np.any(steps.action >= 0)
    for got, ref in zip(step_pass(steps, pol, False), step_pass_ref(steps, pol, False),
                        strict=True):
        assert np.allclose(got, ref, rtol=0, atol=1e-14)


def _sparse_mdp(n_states=240, n_actions=3, seed=4):
    """Three successors per (s, a): above the dense cut-off, so GMRES solves run."""
    rng = np.random.default_rng(seed)
    rows = np.repeat(np.arange(n_states * n_actions), 3)
    cols = rng.integers(0, n_states, size=rows.size)
    vals = rng.dirichlet(np.ones(3), size=n_states * n_actions).ravel()
    m = sp.csr_matrix((vals, (rows, cols)), shape=(n_states * n_actions, n_states))
    m.sum_duplicates()
    return bi.TabularMDP(m, rng.normal(size=(n_states, 2)), discount=0.9)


def test_sparse_path_gradient_and_warm_starts():
    mdp = _sparse_mdp()
    assert mdp.dynamics.dense is None
    demos = bi.simulate(mdp, W, episodes=6, length=12, seed=5, rationality=BETA)
    states, actions = [], []
    for k, (s, a) in enumerate(demos.episodes):
        s, a = s.copy(), a.copy()
        a[k % 3::2] = -1  # every other action unrecorded
        s[4:6] = -1  # a gap of two states
        states.append(s)
        actions.append(a)
    term = PartialTerm(mdp, PartialEpisodes(states, actions), tol=0.0, gradient_rtol=1e-12)
    assert term.gaps
    q = {"weights": W, "rationality": BETA}
    grad = term.evaluate(q).grads["weights"]
    h = 1e-5
    fd = [(term.evaluate({"weights": W + h * e, "rationality": BETA}, False).logp
           - term.evaluate({"weights": W - h * e, "rationality": BETA}, False).logp) / (2 * h)
          for e in np.eye(2)]
    assert np.allclose(grad, fd, rtol=1e-6, atol=1e-7)
    # warm starts: saved and loaded into a fresh term, the next evaluation is bit-identical
    arrays = term.warm_start_arrays()
    other = PartialTerm(mdp, PartialEpisodes(states, actions), tol=0.0, gradient_rtol=1e-12)
    other.load_warm_start_arrays(arrays)
    near = {"weights": W + 0.01, "rationality": BETA}
    a, b = term.evaluate(near), other.evaluate(near)
    assert a.logp == b.logp and np.array_equal(a.grads["weights"], b.grads["weights"])


def test_refuses_an_impossible_gap():
    # a chain 0 -> 1 -> 2 -> 2: state 0 cannot be reached again, whatever happens in between
    p = np.zeros((3, 2, 3))
    p[0, :, 1] = p[1, :, 2] = p[2, :, 2] = 1.0
    mdp = bi.TabularMDP(p, np.eye(3)[:, :2], discount=0.5)
    with pytest.raises(InputError, match="episode 0 steps 0..2: no path of 2 steps leads "
                                         "from state 0 to state 0"):
        PartialTerm(mdp, PartialEpisodes([[0, None, 0]], [[None, None]]))
    PartialTerm(mdp, PartialEpisodes([[0, None, 2]], [[None, None]]))  # control: possible


def test_batched_gaps_equal_one_gap_at_a_time(monkeypatch):
    """The batched pass (equal-length gaps together, in chunks) against :func:`gap_pass`."""
    from bayesirl.evidence import hidden

    mdp = _sparse_mdp()
    pol = np.random.default_rng(1).dirichlet(np.ones(mdp.n_actions), size=mdp.n_states)
    demos = bi.simulate(mdp, W, episodes=9, length=10, seed=8)
    gaps = []
    for k, (s, a) in enumerate(demos.episodes):
        length = 2 + k % 3
        acts = np.where(np.arange(length) % 2 == 0, -1, a[:length])
        end = int(s[length]) if k % 4 else -1
        gaps.append(Gap(k, 0, int(s[0]), acts, end))
    monkeypatch.setattr(hidden, "BATCH_FLOATS", 2 * mdp.n_states * mdp.n_actions)  # chunks
    logp, total = hidden.gap_batch_pass(mdp.dynamics, gaps, pol)
    want_total = np.zeros_like(total)
    for i, gap in enumerate(gaps):
        lp, parts = gap_pass(mdp.dynamics, gap, lambda t: pol)
        assert logp[i] == pytest.approx(lp, abs=1e-12)
        for _, n in parts:
            want_total += n
    assert np.allclose(total, want_total, rtol=0, atol=1e-12)
    assert total.sum() == pytest.approx(sum(g.actions.size for g in gaps), abs=1e-10)
