"""The designer's "a new demonstrator" beside "more from demonstrator d", in one list.

Reference: the definition of mutual information (Cover & Thomas, ch. 2) between the outcome
and the posterior draw, computed by brute force: every outcome enumerated, policies from an
independent dense soft value iteration (tests/design/test_gains.py), the newcomer's
likelihood under draw ``m`` the mean over the same ``K`` fresh ``z`` the designer draws
(``SeedSequence(seed, spawn_key=(4,))``, bayesirl.design.groups), jackknifed over the two
halves of the ``K`` (Quenouille's bias correction, as the designer does). One answer at a
state is exact over actions (1e-9, as in test_gains). A whole demonstration is a nested
Monte-Carlo estimate whose outer samples are independent draws of (draw, outcome), so it is
unbiased for the enumerated value and its error is the reported outer-sample standard error.
"""

from __future__ import annotations

import itertools
from functools import cache

import numpy as np
import pytest
from design.test_gains import _dense_policies, _mi
from scipy.special import logsumexp

import bayesirl as bi
from bayesirl.design import suggest
from bayesirl.design.groups import NEW

from .test_posterior import posterior

DRAWS, K, SEED = 24, 4, 5
# Six start states tested together: |z| < 3.5 keeps the family's false-alarm rate under
# 6 * 4.7e-4 = 0.3% (normal tails).
Z = 3.5


def _pseudo_weights(p) -> np.ndarray:
    """The newcomer's draws ``(N, K, F)`` as the designer makes them."""
    idx = np.linspace(0, p.n_draws * p.n_chains - 1, DRAWS).round().astype(int)
    mu = p.weights.reshape(-1, 2)[idx]
    tau = p.groups["spread"].reshape(-1, 2)[idx]
    rng = np.random.default_rng(np.random.SeedSequence(SEED, spawn_key=(4,)))
    return mu[:, None, :] + tau[:, None, :] * rng.standard_normal((DRAWS, K, 2))


def _walk_logp(logpol, p, s0: int) -> np.ndarray:
    """log p(a0, s1, a1 | s0) ``(n, Y)`` for every outcome of a 2-step walk from ``s0``."""
    n_s, n_a = p.shape[0], p.shape[1]
    cols = []
    for a0, s1, a1 in itertools.product(range(n_a), range(n_s), range(n_a)):
        cols.append(logpol[:, s0, a0] + np.log(p[s0, a0, s1]) + logpol[:, s1, a1])
    return np.stack(cols, axis=1)


@cache
def _policies(p):
    """Dense soft value iteration at every pseudo-draw (computed once per posterior)."""
    return _dense_policies(p.model.likelihood.mdp, _pseudo_weights(p).reshape(-1, 2))


def _mixture_mi(lp: np.ndarray, ks: slice) -> float:
    """Information with the draw's likelihood the mean over its newcomers ``ks``."""
    lp = lp.reshape(DRAWS, K, -1)[:, ks]
    return _mi(logsumexp(lp, axis=1) - np.log(lp.shape[1]))


def _exact(p, s0: int | None, grouped: bool = True) -> np.ndarray:
    """Brute-force information of one answer (``s0`` None: every state) or one 2-step walk,
    jackknifed over the halves of the K newcomers: ``2 I_K - (I_first + I_second) / 2``.
    ``grouped=False``: the negative control, I(y; w) over the N K pseudo-draws."""
    mdp = p.model.likelihood.mdp
    logpol, trans = _policies(p)
    out = []
    for s in range(mdp.n_states) if s0 is None else [s0]:
        lp = logpol[:, s, :] if s0 is None else _walk_logp(logpol, trans, s)
        if not grouped:
            out.append(_mi(lp))
            continue
        h = K // 2
        halves = _mixture_mi(lp, slice(0, h)) + _mixture_mi(lp, slice(h, K))
        out.append(2 * _mixture_mi(lp, slice(0, K)) - 0.5 * halves)
    return np.array(out)


def test_new_demonstrator_query_is_the_information_with_z_integrated_out():
    p = posterior("partial")
    got = suggest(p, "query-states", demonstrator=NEW, max_draws=DRAWS, new_draws=K,
                  seed=SEED)
    assert {r.demonstrator for r in got} == {NEW}
    gains = np.array([r.gain for r in sorted(got, key=lambda r: r.state)])
    assert np.max(np.abs(gains - _exact(p, None))) < 1e-9
    # negative control: counting the newcomer's own z as information, I(y; w) over the N K
    # pseudo-draws, is a larger number
    wrong = _exact(p, None, grouped=False)
    assert np.min(wrong - gains) > 1e-3


def test_new_demonstrator_walk_matches_enumeration():
    p = posterior("partial")
    got = suggest(p, "start-states", demonstrator=NEW, max_draws=DRAWS, new_draws=K,
                  seed=SEED, length=2, n_outer=400)
    rows = sorted(got, key=lambda r: r.state)
    est = np.array([r.gain_estimate for r in rows])
    se = np.array([r.stderr for r in rows])
    exact = np.array([_exact(p, s)[0] for s in range(6)])
    assert np.all(np.abs(est - exact) < Z * se), (est, exact, se)
    # negative control: I(y; w) (the newcomer's z counted) is outside the same bounds
    wrong = np.array([_exact(p, s, grouped=False)[0] for s in range(6)])
    assert np.any(np.abs(est - wrong) > Z * se)


def test_one_list_ranks_present_and_new_demonstrators_on_the_same_scale():
    p = posterior("partial")
    both = suggest(p, "query-states", demonstrator=["cai", NEW], max_draws=DRAWS,
                   new_draws=K, seed=SEED)
    assert len(both) == 12 and [r.step for r in both].count(1) == 1
    assert all(a.gain >= b.gain for a, b in zip(both, both[1:], strict=False))
    alone = suggest(p, "query-states", demonstrator="cai", max_draws=DRAWS, seed=SEED)
    cai = {r.state: r.gain for r in both if r.demonstrator == "cai"}
    assert all(abs(cai[r.state] - r.gain) < 1e-12 for r in alone)
    new = {r.state: r.gain for r in both if r.demonstrator == NEW}
    assert max(abs(new[s] - g) for s, g in enumerate(_exact(p, None))) < 1e-9


def test_new_demonstrator_refusals():
    with pytest.raises(bi.InputError, match="partial pooling"):
        suggest(posterior("separate"), "query-states", demonstrator=NEW)
    with pytest.raises(bi.InputError, match="budget 1"):
        suggest(posterior("partial"), "query-states", demonstrator=NEW, budget=2)
    with pytest.raises(bi.InputError, match="even integer"):
        suggest(posterior("partial"), "query-states", demonstrator=NEW, new_draws=3)
    with pytest.raises(bi.InputError, match="twice"):
        suggest(posterior("partial"), "query-states", demonstrator=["ana", "ana"])


def _fake(spread_of_rationality):
    """A posterior-shaped record with per-demonstrator rationality (invented numbers)."""
    from types import SimpleNamespace

    rng = np.random.default_rng(0)
    groups = {"demonstrators": ["ana", "ben"], "pooling": "partial",
              "demonstrator_weights": rng.normal(size=(2, 5, 2, 2)),
              "spread": np.full((2, 5, 2), 0.5),
              "demonstrator_rationality": np.exp(rng.normal(size=(2, 5, 2)))}
    model = SimpleNamespace(_rat=SimpleNamespace(fixed=spread_of_rationality))
    return SimpleNamespace(groups=groups, model=model), rng.normal(size=(10, 2)), np.ones(10)


def test_each_person_is_simulated_with_their_own_rationality():
    from bayesirl.design.groups import people

    post, mu, beta = _fake(0.0)
    ana, new = people(post, ["ana", NEW], mu, beta, None, SEED, 4)
    assert np.array_equal(ana.rationalities, post.groups["demonstrator_rationality"][..., 0]
                          .ravel())
    # a fixed spread of 0 gives the newcomer the population's rationality
    assert new.per_draw == 4 and np.array_equal(new.rationalities, np.repeat(beta, 4))
    z = np.random.default_rng(np.random.SeedSequence(SEED, spawn_key=(4,))).standard_normal(
        (10, 4, 2))
    assert np.allclose(new.weights.reshape(10, 4, 2), mu[:, None] + 0.5 * z, atol=1e-12)
    post, mu, beta = _fake(0.7)
    new = people(post, NEW, mu, beta, None, SEED, 4)[0]
    assert np.std(np.log(new.rationalities)) > 0.3  # 40 draws of sd 0.7
    post, mu, beta = _fake(None)  # the spread sampled: its draws are not kept
    with pytest.raises(bi.InputError, match="fix the spread"):
        people(post, NEW, mu, beta, None, SEED, 4)
