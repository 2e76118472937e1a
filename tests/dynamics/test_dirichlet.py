"""The dynamics' Dirichlet posterior: draws against scipy.stats.dirichlet, supports, checks."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from harness import moment_check
from scipy import stats

from bayesirl.errors import InputError
from bayesirl.model.transitions import (
    DynamicsPosterior,
    TransitionLog,
    log_from_demonstrations,
    support_of,
)

from .problems import N_ACTIONS, N_STATES, demos_from, draw_truth, support

N_DRAWS = 4000


def _log(rows) -> TransitionLog:
    s, a, n, c = (np.asarray(x) for x in zip(*rows, strict=True))
    return TransitionLog(s.astype(np.int64), a.astype(np.int64), n.astype(np.int64),
                         c.astype(np.float64))


def _row_draws(post: DynamicsPosterior, s: int, a: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    r = s * N_ACTIONS + a
    lo, hi = post.alpha.indptr[r], post.alpha.indptr[r + 1]  # draws share alpha's layout
    return np.array([post.draw(rng).data[lo:hi] for _ in range(N_DRAWS)])


@pytest.mark.parametrize("concentration", [1.0, 0.05])  # 0.05: Gammas underflow in float64
def test_row_draws_match_scipy_dirichlet_moments(concentration):
    # Reference: scipy.stats.dirichlet(alpha).mean() and .var(), alpha = prior + counts.
    log = _log([(0, 0, 1, 7), (0, 0, 2, 2), (3, 1, 3, 1)])
    post = DynamicsPosterior(support(), log, n_actions=N_ACTIONS,
                             concentration=concentration)
    for (s, a), seed in (((0, 0), 1), ((3, 1), 2)):
        idx, alpha = post.row_alpha(s, a)
        ref = stats.dirichlet(alpha)
        draws = _row_draws(post, s, a, seed)
        # Independent draws: the harness's MCSE from ESS (about N_DRAWS), Bonferroni 1e-3.
        check = moment_check(draws, ref.mean(), np.sqrt(ref.var()))
        assert not check.failed, check.report()
        # Negative control: alpha shifted by 30% gives mean shifts of several MCSEs
        # (row (0, 0), concentration 1: mean of entry 0 moves from 0.083 to ~0.10, MCSE
        # ~0.0044 at 4000 draws, z ~ 4, beyond the critical 3.9 of 9 checks at 1e-3).
        wrong = stats.dirichlet(alpha * np.array([1.3] + [1.0] * (alpha.size - 1)))
        bad = moment_check(draws, wrong.mean(), np.sqrt(wrong.var()))
        if (s, a) == (0, 0) and concentration == 1.0:
            assert bad.failed, bad.report()


def test_mean_is_the_dirichlet_mean_and_rows_sum_to_one():
    log = _log([(1, 0, 2, 5)])
    post = DynamicsPosterior(support(), log, n_actions=N_ACTIONS, concentration=0.5)
    idx, alpha = post.row_alpha(1, 0)
    np.testing.assert_allclose(post.mean()[1 * N_ACTIONS, idx].toarray().ravel(),
                               stats.dirichlet(alpha).mean(), rtol=1e-12)
    draw = post.draw(np.random.default_rng(0))
    np.testing.assert_allclose(np.asarray(draw.sum(axis=1)).ravel(), 1.0, rtol=1e-12)
    assert (draw != 0).sum() == support().sum()  # every supported outcome keeps mass


def test_same_seed_same_draws_and_another_seed_differs():
    post = DynamicsPosterior(support(), _log([(0, 0, 0, 1)]), n_actions=N_ACTIONS)
    a, b, c = (post.draw(np.random.default_rng(k)).toarray() for k in (5, 5, 6))
    assert np.array_equal(a, b) and not np.array_equal(a, c)


def test_logged_outcome_outside_the_support_is_refused():
    with pytest.raises(InputError, match=r"\(s=0, a=0\) -> 3 was logged but is outside"):
        DynamicsPosterior(support(), _log([(0, 0, 3, 1)]), n_actions=N_ACTIONS)


@pytest.mark.parametrize("bad", [0.0, -1.0, float("nan"), float("inf")])
def test_concentration_must_be_positive(bad):
    with pytest.raises(InputError, match="concentration"):
        DynamicsPosterior(support(), _log([(0, 0, 0, 1)]), n_actions=N_ACTIONS,
                          concentration=bad)


def test_supports_model_observed_and_pattern():
    p = draw_truth(np.random.default_rng(0))
    matrix = sp.csr_matrix(p.reshape(N_STATES * N_ACTIONS, N_STATES))
    model = support_of("model", matrix, N_ACTIONS)
    assert np.array_equal(model.toarray(), support().reshape(-1, N_STATES))
    seen = support_of("observed", matrix, N_ACTIONS, _log([(0, 0, 1, 2)]))
    assert seen[0].toarray().ravel().tolist() == [False, True, False, False]
    assert np.array_equal(seen[1:].toarray(), model[1:].toarray())  # unlogged rows: model's
    pat = support().copy()
    pat[0, 0, 3] = True
    assert support_of("pattern", matrix, N_ACTIONS, pattern=pat)[0, 3]
    with pytest.raises(InputError, match="support"):
        support_of("everything", matrix, N_ACTIONS)


def test_transitions_inside_demonstrations_are_counted():
    p = draw_truth(np.random.default_rng(3))
    demos = demos_from(p, 3, seed=1)
    log = log_from_demonstrations(demos)
    steps = sum(min(a.size, s.size - 1) for s, a in demos.episodes)
    assert log.total == steps
    s0, a0 = demos.episodes[0]
    assert (log.states[0], log.actions[0], log.next_states[0]) == (s0[0], a0[0], s0[1])
