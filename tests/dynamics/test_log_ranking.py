"""Ranking "log more transitions at (s, a)": the Dirichlet shrink factor against simulation
(scipy.stats.dirichlet), and the ranking's response to how much a row is already known."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest
from scipy import stats

from bayesirl.design.transitions import rank_logging, render_text
from bayesirl.errors import InputError
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.model.transitions import TransitionLog
from bayesirl.posterior.dynamics import VarianceSplit

from .problems import demos_from, draw_truth, mdp_with, posterior_of


def test_expected_covariance_after_n_more_is_a0_over_a0_plus_n():
    # Law of total variance: E[Var(p | n more)] = Var(p) * a0 / (a0 + n) for a Dirichlet.
    # Reference: simulate p ~ Dirichlet(alpha) (scipy), k ~ Multinomial(n, p), and average
    # the updated Dirichlet's variance (scipy.stats.dirichlet(alpha + k).var()).
    alpha, n, m = np.array([2.0, 1.0, 0.5]), 10, 4000
    rng = np.random.default_rng(0)
    ps = stats.dirichlet(alpha).rvs(m, random_state=rng)
    after = np.array([stats.dirichlet(alpha + rng.multinomial(n, p)).var() for p in ps])
    expected = stats.dirichlet(alpha).var() * alpha.sum() / (alpha.sum() + n)
    # Each row's variance is bounded by 0.25; the mean's sd is at most 0.25/sqrt(m)/2 ~
    # 0.002; the spread measured here is far smaller. 5 sd of the measured spread:
    tol = 5 * after.std(axis=0) / np.sqrt(m)
    np.testing.assert_array_less(np.abs(after.mean(axis=0) - expected), tol)
    # Negative control: the naive factor 1 / (1 + n) is far outside.
    naive = stats.dirichlet(alpha).var() / (1 + n)
    assert np.all(np.abs(after.mean(axis=0) - naive) > tol)


def _stub(per_row_counts: dict):
    """A cut fit's minimal record around a fixed plug-in posterior (no sampling)."""
    p = draw_truth(np.random.default_rng(2))
    demos = demos_from(p, 10, seed=3)
    s, a, nxt, c = [], [], [], []
    for (st, ac), k in per_row_counts.items():
        outcome = int(np.flatnonzero(p[st, ac])[0])
        s.append(st), a.append(ac), nxt.append(outcome), c.append(k)
    log = TransitionLog(*(np.array(x, dtype=np.int64) for x in (s, a, nxt)),
                        np.array(c, dtype=np.float64))
    dyn = posterior_of(log)
    rng = np.random.default_rng(4)
    plug = SimpleNamespace(weights=rng.multivariate_normal([1.0, -0.5], np.diag([0.1, 0.02]),
                                                           size=(2, 500)))
    split = VarianceSplit(np.array([0.2, 0.03]), np.array([0.1, 0.02]),
                          np.array([0.1, 0.01]), np.zeros(2))
    cut = SimpleNamespace(plug_in=plug, dynamics=dyn, feature_names=("f0", "f1"),
                          split=lambda: split)
    return cut, BoltzmannLikelihood(mdp_with(dyn.mean().toarray().reshape(4, 2, 4)), demos)


def test_a_row_known_from_a_million_logs_ranks_below_the_same_row_unlogged():
    known, lik = _stub({(0, 0): 10**6})
    fresh, _ = _stub({(1, 1): 1})  # row (0, 0) now has only its prior
    part_known = next(r for r in rank_logging(known, lik, target="f0").rows
                      if (r.state, r.action) == (0, 0))
    part_fresh = next(r for r in rank_logging(fresh, lik, target="f0").rows
                      if (r.state, r.action) == (0, 0))
    # Dirichlet covariance scales as 1/(a0 + 1): 10^6 counts shrink the part by ~3e5.
    assert part_known.variance[0] < 1e-4 * part_fresh.variance[0]
    assert part_known.reduction < 1e-4 * part_fresh.reduction
    ranking = rank_logging(known, lik, target="f0")
    assert [r.reduction for r in ranking.rows] == sorted((r.reduction for r in ranking.rows),
                                                         reverse=True)
    assert "first-order" in render_text(ranking)


def test_bad_targets_are_refused():
    cut, lik = _stub({(0, 0): 1})
    with pytest.raises(InputError, match="target"):
        rank_logging(cut, lik, target="slope")
    with pytest.raises(InputError, match="extra"):
        rank_logging(cut, lik, target="f0", extra=0)


def test_rows_and_demonstrations_share_one_table_sorted_by_reduction():
    from bayesirl.design.suggest import Suggestion
    from bayesirl.design.transitions import render_beside

    cut, lik = _stub({(0, 0): 1})
    ranking = rank_logging(cut, lik, target="f0")
    sd = ranking.rows[0].current_sd
    big = Suggestion(2, 0.1, 0.01, float(np.sqrt(sd**2 - 1e3)) if sd**2 > 1e3 else 0.0,
                     0.0, "start", 2, 1, current_sd=sd)
    text = render_beside(ranking, [big])
    first = text.splitlines()[1]
    assert "a demonstration from state 2" in first  # it removes the whole variance
    tiny = big._replace(target_sd=sd)  # no expected change: ranks last
    assert "a demonstration" in render_beside(ranking, [tiny], top=100).splitlines()[-1]
