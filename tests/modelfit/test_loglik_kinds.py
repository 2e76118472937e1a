"""The log_likelihood group with every evidence kind: its variables round-trip through the
posterior file and ArviZ reads each one (``arviz.loo`` under 0.2x, ``arviz_stats.loo`` under
1.x); LOO over episodes or over comparison answers; leaving one observation out.
"""

from __future__ import annotations

from functools import cache
from types import SimpleNamespace

import numpy as np
import pytest
from scipy.special import logsumexp

import bayesirl as bi
from bayesirl import arviz_compat
from bayesirl.errors import InputError
from bayesirl.modelfit import compare, episode_loo, refit_episodes
from bayesirl.modelfit.compare import same_data
from bayesirl.modelfit.loo import leave_out
from bayesirl.posterior.groups import make_model
from bayesirl.posterior.loglik import draw_quantities, is_current
from modelfit.test_pointwise_evidence import every_kind

SAMPLING = {"chains": 2, "draws": 40, "warmup": 40, "backend": bi.Serial(),
            "progress": False, "seed": 4}


@cache
def fitted():
    lik, partial, comparisons = every_kind()
    return bi.sample(lik, evidence=[partial.subset([0, 1]), comparisons], **SAMPLING)


def test_every_kind_round_trips_and_arviz_reads_each_variable(tmp_path):
    post = fitted()
    ll = post.compute_log_likelihood(steps=True)
    assert ll["episodes"].shape == (2, 40, 4 + 2) and ll["comparisons"].shape == (2, 40, 4)
    assert ll["steps"].shape == (2, 40, 4 * 6 + 2 * 5)
    for c, d in [(0, 0), (1, 39)]:  # each draw's values add up to the evidence's density
        q = draw_quantities(post, c, d)
        total = ll["episodes"][c, d].sum() + ll["comparisons"][c, d].sum()
        assert total == pytest.approx(post.model.evidence.evaluate(q, False).logp, abs=1e-8)
    back = bi.Posterior.load(post.save(tmp_path / "p.nc"))
    for name in ("episodes", "comparisons", "steps"):
        np.testing.assert_array_equal(back.log_likelihood[name], ll[name])
    assert is_current(back.log_likelihood, back.model)
    data = arviz_compat.from_netcdf(tmp_path / "p.nc")
    group = arviz_compat.group(data, "log_likelihood")
    assert group["comparisons"].dims == ("chain", "draw", "comparison")
    for name, n in (("episodes", 6), ("comparisons", 4)):
        r = arviz_compat.loo(data, name)
        assert r.elpd_i.shape == (n,) and np.all(np.isfinite(r.elpd_i))
        # elpd_loo <= the log pointwise predictive density (LOO removes the fit to each one)
        lppd = np.sum(logsumexp(ll[name].reshape(80, n), axis=0) - np.log(80))
        assert r.elpd <= lppd
    by_answer = episode_loo(back, over="comparisons")
    assert by_answer.elpd_i.shape == (4,)


def test_older_values_without_the_further_evidence_are_recomputed():
    post = fitted()
    full = post.compute_log_likelihood()
    post.log_likelihood = {"episodes": full["episodes"][..., :4]}  # demonstrations only
    assert not is_current(post.log_likelihood, post.model)
    again = post.compute_log_likelihood()
    np.testing.assert_allclose(again["episodes"], full["episodes"], atol=2e-9)
    assert "comparisons" in again


def test_runs_with_other_further_evidence_are_refused():
    post = fitted()
    lik, partial, comparisons = every_kind()

    def run(*extra):  # what same_data reads of a run: its model (no sampling needed)
        return SimpleNamespace(model=make_model(lik, extra=extra))

    with pytest.raises(InputError, match="unrecorded parts differ"):
        same_data([post, run(partial.subset([0]), comparisons)], ["a", "b"])
    with pytest.raises(InputError, match="comparison answers against"):
        same_data([post, run(partial.subset([0, 1]), comparisons.subset([0, 1]))], ["a", "b"])
    with pytest.raises(InputError, match="further evidence"):
        same_data([post, run()], ["a", "b"])
    # Negative control: the same evidence, built again, is the same data.
    same_data([post, run(partial.subset([0, 1]), comparisons)], ["a", "b"])
    demos_only = bi.sample(lik, **SAMPLING)
    with pytest.raises(InputError, match="no comparisons"):
        episode_loo(demos_only, over="comparisons")
    assert compare([post, post], over="comparisons").over == "comparisons"


def test_leave_out_removes_one_observation_of_each_kind():
    model = fitted().model
    assert leave_out(model, 1, "episodes").demos == [0, 2, 3]
    one = leave_out(model, 5, "episodes")  # the second walk
    assert one.demos == [0, 1, 2, 3]
    walks = one.extra[0].episodes.episodes
    assert len(walks) == 1 and np.array_equal(walks[0][0], model.extra[0].episodes.episodes[0][0])
    answers = leave_out(model, 2, "comparisons").extra[1].differences
    np.testing.assert_array_equal(answers, np.delete(model.extra[1].differences, 2, axis=0))
    for index, over in ((6, "episodes"), (4, "comparisons"), (-1, "comparisons")):
        with pytest.raises(InputError, match="no "):
            leave_out(model, index, over)


def test_refit_of_a_walk_and_of_an_answer_averages_the_held_out_likelihood():
    post = fitted()
    got = refit_episodes(post, [5])
    kept = leave_out(post.model, 5, "episodes").extra
    refit = bi.sample(post.model.likelihood, evidence=kept, pin=None, **SAMPLING)
    held = post.model.extra[0].subset([1])  # the walk alone, evaluated on its own
    v = np.array([held.evaluate(draw_quantities(refit, c, d), False).logp
                  for c in range(2) for d in range(40)])
    # the held-out term's own solves against the full split's: solver tolerance (2e-10 per
    # step, 5 steps), far below the Monte-Carlo error this estimate carries
    assert got[0] == pytest.approx(logsumexp(v) - np.log(v.size), abs=2e-9)
    answer = refit_episodes(post, [0], over="comparisons")
    assert np.isfinite(answer[0]) and answer[0] < 0


@pytest.mark.slow  # six refits
def test_psis_matches_exact_refits_for_walks_and_answers():
    """PSIS-LOO estimates what the refits compute exactly (Vehtari, Gelman & Gabry 2017), for
    the episodes with unrecorded parts and for the comparison answers too."""
    from modelfit.test_loo import log_mean_exp_se

    lik, partial, comparisons = every_kind()
    run = {**SAMPLING, "chains": 4, "draws": 500, "warmup": 300}
    post = bi.sample(lik, evidence=[partial.subset([0, 1]), comparisons], **run)
    for over, picks in (("episodes", [4, 5]), ("comparisons", [0, 1, 2, 3])):
        loo = episode_loo(post, over=over)
        ll = post.log_likelihood[over]
        z, z_bad = [], []
        lppd = logsumexp(ll.reshape(-1, ll.shape[-1]), axis=0) - np.log(ll[..., 0].size)
        for i in picks:
            kept = leave_out(post.model, i, over)
            lik_i = bi.BoltzmannLikelihood(lik.mdp, lik.demos.subset(kept.demos))
            refit = bi.sample(lik_i, evidence=kept.extra, **run)
            split = [post.model.evidence.pointwise(draw_quantities(refit, c, d),
                                                   lik.demos.lengths)
                     for c in range(4) for d in range(500)]
            v = np.array([(s.episode if over == "episodes" else s.answers)[i] for s in split])
            exact = logsumexp(v) - np.log(v.size)
            # Same error model as tests/modelfit/test_loo.py: refit's delta-method se and
            # the harmonic-mean bound on PSIS's own error.
            se = np.hypot(log_mean_exp_se(v.reshape(4, 500)), log_mean_exp_se(-ll[..., i]))
            z.append((loo.elpd_i[i] - exact) / se)
            z_bad.append((lppd[i] - exact) / se)
        print(over, "z psis vs exact:", np.round(z, 2), "in-sample:", np.round(z_bad, 2),
              "k:", np.round(loo.pareto_k, 2))
        assert np.all(loo.pareto_k[picks] < 0.7)
        # 6 values in all, two-sided: |z| < 3.5 keeps the family-wise false alarm under 0.3%.
        assert np.all(np.abs(z) < 3.5), z
        # Negative control: the in-sample log predictive density (nothing left out) is off
        # by p_loo_i, beyond the Monte-Carlo error for at least one observation.
        assert np.max(np.abs(z_bad)) > 3.5, z_bad
