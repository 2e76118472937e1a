"""Multinomial NUTS: exactness, Gaussian recovery with adaptation, bookkeeping, divergences."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from harness import check_moments, moment_check, run_sampler
from scipy import stats

from bayesirl.errors import InputError
from bayesirl.sampler import nuts

from .targets import GAUSSIANS

CORRELATED = GAUSSIANS["correlated-2d"]


def _steps_from_exact_draws(target, n, n_steps, step_size, inv_mass, seed):
    """Apply ``n_steps`` NUTS transitions to each of ``n`` exact, independent draws."""
    starts = target.exact_draws(n, seed)
    rng = np.random.default_rng(seed + 1)
    out = np.empty_like(starts)
    for i, start in enumerate(starts):
        state = nuts.init(start, target.logdensity_and_grad)
        for _ in range(n_steps):
            state, _ = nuts.step(rng, state, target.logdensity_and_grad, step_size, inv_mass)
        out[i] = state.position
    return out


@pytest.mark.parametrize(
    ("step_size", "inv_mass"),
    [(0.6, np.ones(2)), (0.4, np.array([[1.0, 0.5], [0.5, 2.0]]))],
    ids=["diag", "dense"],
)
def test_transition_leaves_target_invariant(step_size, inv_mass):
    # A valid MCMC kernel maps exact draws to exact draws (the definition of an invariant
    # kernel, e.g. Geyer 2011, Handbook of MCMC, ch. 1), with no warmup or
    # autocorrelation involved; a mildly large step makes the energy weights matter.
    out = _steps_from_exact_draws(CORRELATED, 2000, 2, step_size, inv_mass, seed=20)
    check_moments(out, CORRELATED.mean, CORRELATED.cov_or_sd, CORRELATED.quantiles())


def test_invariance_check_detects_wrong_momentum(monkeypatch):
    # Negative control: momenta drawn with twice the right sd break detailed balance, and
    # the same check must then fail (it did by z > 6 when written).
    original = nuts.sample_momentum
    monkeypatch.setattr(nuts, "sample_momentum", lambda rng, m: 2.0 * original(rng, m))
    out = _steps_from_exact_draws(CORRELATED, 2000, 2, 0.6, np.ones(2), seed=20)
    check = moment_check(out, CORRELATED.mean, CORRELATED.cov_or_sd, CORRELATED.quantiles())
    assert "sd[0]" in check.failed and "sd[1]" in check.failed


# (target, dense, chains, draws, warmup): the badly scaled target spends most of its cost
# in the first warmup window, where the identity metric forces the maximum tree depth.
_DEFAULT_RUNS = [
    ("isotropic-3d", False, 2, 1000, 500),
    ("isotropic-3d", True, 2, 1000, 500),
    ("badly-scaled-5d", False, 1, 1000, 300),
    ("badly-scaled-5d", True, 1, 1000, 300),
    ("correlated-2d", False, 2, 1000, 500),
    ("correlated-2d", True, 2, 1000, 500),
]


@pytest.mark.parametrize(("name", "dense", "chains", "draws", "warmup"), _DEFAULT_RUNS)
def test_recovers_gaussian(name, dense, chains, draws, warmup):
    # Known Gaussian moments and quantiles within family-wise MC error (tests/harness.py,
    # MCSE from ESS as in Vehtari et al. 2021); a well-adapted run has no divergences.
    target = GAUSSIANS[name]
    samples, results = run_sampler(
        target.logdensity_and_grad, target.starts(chains, 1), draws, warmup, seed=2,
        chains=chains, dense_mass=dense,
    )
    check_moments(samples, target.mean, target.cov_or_sd, target.quantiles())
    assert not any(r.stats["divergent"].any() for r in results)


@pytest.mark.slow
@pytest.mark.parametrize("dense", [False, True])
@pytest.mark.parametrize("name", sorted(GAUSSIANS))
def test_recovers_gaussian_long(name, dense):
    target = GAUSSIANS[name]
    samples, _ = run_sampler(
        target.logdensity_and_grad, target.starts(4, 3), 5000, 1000, seed=4, chains=4,
        dense_mass=dense,
    )
    check_moments(samples, target.mean, target.cov_or_sd, target.quantiles())


class _Counted:
    def __init__(self, fn):
        self.fn, self.calls = fn, 0

    def __call__(self, x):
        self.calls += 1
        return self.fn(x)


@pytest.mark.parametrize("max_depth", [1, 3, 10])
def test_n_steps_counts_gradient_evaluations(max_depth):
    f = _Counted(CORRELATED.logdensity_and_grad)
    state = nuts.init(np.zeros(2), f)
    rng = np.random.default_rng(5)
    depths = []
    for _ in range(50):
        before = f.calls
        state, info = nuts.step(rng, state, f, 0.05, np.ones(2), max_depth=max_depth)
        assert info.n_steps == f.calls - before
        depths.append(info.tree_depth)
        # A trajectory of depth k has 2**k - 1 new points, plus at most one rejected
        # subtree of up to 2**k points.
        assert 2**info.tree_depth - 1 <= info.n_steps <= 2 ** (info.tree_depth + 1) - 1
    # Half an orbit at eps = 0.05 takes 17 (narrow direction) to 125 (wide) steps, so a
    # trajectory turns at depth 2 to 7: the default limit is never reached, and a 2-point
    # trajectory (depth 1) never turns.
    assert max(depths) == max_depth if max_depth < 10 else max(depths) < max_depth
    assert min(depths) >= min(max_depth, 2)


def test_unstable_step_is_divergent():
    # On N(0, 1) from x = 1, one leapfrog step of eps = 30 lands at |x| > 45 unless the
    # momentum exceeds 13 sd, so the energy error passes 1000 at the first step and the
    # transition must stay put. (A merely unstable eps, 2 < eps < ~20, need not diverge:
    # the alternating momenta trigger the U-turn criterion first.)
    f = _Counted(lambda x: (-0.5 * float(x @ x), -x))
    state = nuts.init(np.array([1.0]), f)
    rng = np.random.default_rng(6)
    for _ in range(20):
        new, info = nuts.step(rng, state, f, 30.0, np.ones(1))
        assert info.divergent and info.n_steps == 1 and info.tree_depth == 0
        assert np.array_equal(new.position, state.position)


@pytest.mark.parametrize("bad", [-np.inf, np.nan])
def test_wall_of_invalid_points_gives_divergences_not_crashes(bad):
    # N(0, 1) restricted to x < 0.5 by a wall where the log density is -inf or NaN (and
    # the gradient NaN). The sampler must report divergences, stay inside and not warn.
    def walled(x):
        if x[0] >= 0.5:
            return bad, np.array([np.nan])
        return -0.5 * float(x @ x), -x

    state = nuts.init(np.array([0.0]), walled)
    rng = np.random.default_rng(7)
    infos, draws = [], []
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        for _ in range(300):
            state, info = nuts.step(rng, state, walled, 0.3, np.ones(1))
            infos.append(info)
            draws.append(state.position[0])
    assert sum(i.divergent for i in infos) > 30  # P(pass wall) ~ 0.3 per transition
    assert max(draws) < 0.5
    assert all(np.isfinite(i.energy) and 0.0 <= i.acceptance <= 1.0 for i in infos)


@pytest.mark.slow
def test_walled_target_is_still_sampled_correctly():
    # Rejecting invalid points keeps the kernel exact: the draws follow the truncated
    # normal N(0, 1) | x < 0.5 (moments and quantiles from scipy.stats.truncnorm).
    def walled(x):
        if x[0] >= 0.5:
            return -np.inf, np.zeros(1)
        return -0.5 * float(x @ x), -x

    samples, results = run_sampler(walled, np.array([-0.5]), 5000, 1000, seed=8, chains=4)
    truth = stats.truncnorm(-np.inf, 0.5)
    quantiles = {p: np.array([truth.ppf(p)]) for p in (0.05, 0.5, 0.95)}
    check_moments(samples, [truth.mean()], [truth.std()], quantiles)
    assert sum(r.stats["divergent"].sum() for r in results) > 0


def test_init_rejects_invalid_start():
    with pytest.raises(InputError, match="not finite"):
        nuts.init(np.zeros(2), lambda x: (-np.inf, np.zeros(2)))
    with pytest.raises(InputError, match="1-D"):
        nuts.init(np.zeros((2, 2)), CORRELATED.logdensity_and_grad)


def test_same_rng_state_gives_same_transition():
    state = nuts.init(np.zeros(2), CORRELATED.logdensity_and_grad)
    a = nuts.step(np.random.default_rng(9), state, CORRELATED.logdensity_and_grad, 0.3,
                  np.ones(2))
    b = nuts.step(np.random.default_rng(9), state, CORRELATED.logdensity_and_grad, 0.3,
                  np.ones(2))
    c = nuts.step(np.random.default_rng(10), state, CORRELATED.logdensity_and_grad, 0.3,
                  np.ones(2))
    assert np.array_equal(a[0].position, b[0].position) and a[1] == b[1]
    assert not np.array_equal(a[0].position, c[0].position)


@pytest.mark.slow
def test_errors_are_calibrated_over_repeated_runs():
    # 100 independent adapted runs on the correlated target: each run's standardised
    # errors z = (estimate - truth) / mcse must exceed 1.96 in about 5% of runs (binomial
    # test) and average to 0 within 4 / sqrt(100) (a bias of a fraction of one MCSE per
    # run, invisible in one run, shows up here). Bonferroni over 2 tests x 4 quantities.
    z = []
    for seed in range(100):
        samples, _ = run_sampler(CORRELATED.logdensity_and_grad, CORRELATED.starts(1, seed),
                                 500, 200, seed=1000 + seed, chains=1)
        check = moment_check(samples, CORRELATED.mean, CORRELATED.cov_or_sd)
        z.append(check.z[:4])  # mean and sd of both coordinates
    z = np.array(z)
    level = 1e-3 / 8
    for column in z.T:
        exceed = int(np.sum(np.abs(column) > 1.96))
        assert stats.binomtest(exceed, len(column), 0.05).pvalue > level
        assert abs(column.mean()) < stats.norm.isf(level / 2) / np.sqrt(len(column))
