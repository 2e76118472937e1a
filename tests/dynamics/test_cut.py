"""The cut posterior: the variance split, plug-in equivalence, seeds on every backend.

References: the law of total variance (any probability text) for the split; the plug-in
fit (``bayesirl.execution.sample`` under the posterior-mean dynamics) for the limit of very
many logged transitions, compared within Monte-Carlo error by ``tests/harness.py``.
"""

from __future__ import annotations

import numpy as np
import pytest
from harness import sample_check

from bayesirl.errors import InputError
from bayesirl.execution.backend import Processes, Serial
from bayesirl.execution.cut import draw_dynamics, run_seeds, sample_cut
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.model.transitions import join_logs, log_from_demonstrations
from bayesirl.posterior.dynamics import variance_split

from .problems import demos_from, draw_truth, log_from, mdp_with, posterior_of

SMALL = {"chains": 2, "draws": 100, "warmup": 100, "progress": False}


def _setup(per_row: int, seed: int = 1):
    rng = np.random.default_rng(seed)
    p = draw_truth(rng)
    demos = demos_from(p, 20, seed=seed + 1)
    log = join_logs(log_from(p, per_row, rng), log_from_demonstrations(demos))
    return BoltzmannLikelihood(mdp_with(p), demos), posterior_of(log)


def test_split_adds_up_and_matches_a_two_level_normal():
    # w | d ~ N(mu_d, 1), mu_d ~ N(0, tau^2): within ~ 1, between ~ tau^2 (law of total
    # variance). With ddof-0 variances and equal run sizes the identity is exact.
    rng = np.random.default_rng(0)
    tau, d, n = 0.7, 400, 2000
    mu = rng.normal(0.0, tau, size=(d, 1, 1, 1))
    w = mu + rng.normal(size=(d, 2, n // 2, 1))
    split = variance_split(w)
    np.testing.assert_allclose(split.within + split.between, split.total, rtol=1e-12)
    np.testing.assert_allclose(split.total, w.reshape(-1, 1).var(axis=0), rtol=1e-12)
    # between = var of 400 sample means: sd of a variance estimate of 400 normals with
    # variance tau^2 + 1/n is about tau^2 sqrt(2/399) = 0.035; 4 sd = 0.14.
    assert abs(split.between[0] - tau**2) < 0.14
    assert abs(split.within[0] - 1.0) < 0.01  # 8e5 draws: sd of the variance ~0.0016
    # Negative control: a split computed from one run per "draw" of the pooled draws
    # shuffled across runs has no between part (~1/n), far from tau^2.
    shuffled = rng.permutation(w.reshape(-1)).reshape(w.shape)
    assert variance_split(shuffled).between[0] < 0.01


def test_mc_floor_is_var_over_ess():
    w = np.random.default_rng(1).normal(size=(3, 2, 50, 2))
    ess = np.full((3, 2), 100.0)
    split = variance_split(w, ess)
    per = w.reshape(3, -1, 2).var(axis=1)
    np.testing.assert_allclose(split.noise, (per / 100.0).mean(axis=0))


def test_seeds_are_fixed_by_the_fit_seed():
    _, post = _setup(5)
    a, b, c = draw_dynamics(post, 3, seed=4), draw_dynamics(post, 3, seed=4), \
        draw_dynamics(post, 3, seed=5)
    assert all(np.array_equal(x.toarray(), y.toarray()) for x, y in zip(a, b, strict=True))
    assert not np.array_equal(a[0].toarray(), c[0].toarray())
    assert run_seeds(3, 4) == run_seeds(3, 4) and len(set(run_seeds(3, 4))) == 4


@pytest.mark.slow  # ~10 s: forks two workers
def test_same_seed_same_draws_serial_and_processes():
    lik, post = _setup(5)
    a = sample_cut(lik, dynamics=post, dynamics_draws=2, plug_in=False, seed=4,
                   backend=Serial(), **{**SMALL, "draws": 30, "warmup": 30})
    b = sample_cut(lik, dynamics=post, dynamics_draws=2, plug_in=False, seed=4,
                   backend=Processes(2), **{**SMALL, "draws": 30, "warmup": 30})
    assert np.array_equal(a.weights, b.weights)


def test_refuses_what_it_cannot_do_yet():
    lik, post = _setup(5)
    with pytest.raises(InputError, match="checkpoint"):
        sample_cut(lik, dynamics=post, checkpoint="x.npz")
    with pytest.raises(InputError, match=">= 2"):
        sample_cut(lik, dynamics=post, dynamics_draws=1)


def _equivalence(per_row: int, draws_n: int, settings: dict):
    lik, post = _setup(per_row)
    cut = sample_cut(lik, dynamics=post, dynamics_draws=draws_n, seed=2,
                     backend=Serial(), **settings)
    return cut


@pytest.mark.parametrize("run", ["small", pytest.param("large", marks=pytest.mark.slow)])
def test_very_many_transitions_give_the_plug_in_posterior(run):
    settings = SMALL if run == "small" else {**SMALL, "chains": 4, "draws": 600,
                                             "warmup": 400}
    cut = _equivalence(10**6, 2 if run == "small" else 8, settings)
    pooled = cut.weights.reshape(-1, settings["draws"], 2)  # runs' chains side by side
    # Means, sds and 5/50/95% quantiles within combined MCSE (harness, Bonferroni 1e-3).
    check = sample_check(pooled, cut.plug_in.weights)
    assert not check.failed, check.report()
    # Negative control: the pooled draws moved by half a posterior sd (the mean's MCSE is
    # at most sd/sqrt(ESS) ~ sd/10 for ESS >= 100, so z >= 5 > the critical ~3.9).
    moved = sample_check(pooled + 0.5 * pooled.std(axis=(0, 1)), cut.plug_in.weights)
    assert moved.failed, moved.report()
    # With 10^6 logged transitions a row's sd is ~5e-4: the dynamics add nothing beyond
    # Monte-Carlo noise, so the between-draw part stays within a few times its MC floor.
    split = cut.split()
    assert np.all(split.between < 5 * split.noise + 1e-12), (split.between, split.noise)
