"""Pointwise log-likelihood: per step and per episode, stored as ArviZ's log_likelihood group.

Reference for the per-step values: an independent soft value iteration written here with
numpy (V = logsumexp_a(r + g P V), iterated to a fixed point; the maximum-causal-entropy
policy pi = exp(Q - V), Ziebart et al. 2010), not the package's Newton solver.
"""

from __future__ import annotations

import numpy as np
import pytest
from groups.problems import TRUE_WEIGHTS, labelled_demos
from posterior.problems import small_mdp
from scipy.special import logsumexp

import bayesirl as bi
from bayesirl import arviz_compat
from bayesirl.evidence import BoltzmannTerm, Evidence, demonstrator_evidence, weights_name


def soft_log_policy_by_value_iteration(mdp, w, beta):
    p = mdp.transitions.toarray().reshape(mdp.n_states, mdp.n_actions, mdp.n_states)
    r = beta * mdp.reward(w)
    v = np.zeros(mdp.n_states)
    for _ in range(2000):  # contraction g = 0.8: error 0.8^2000, far below 1e-12
        q = r + mdp.discount * p @ v
        v = logsumexp(q, axis=1)
    return q - v[:, None]


def test_steps_match_independent_value_iteration_and_sum_to_the_likelihood():
    mdp = small_mdp(0, 2)
    demos = bi.simulate(mdp, np.array([0.8, -0.5]), episodes=4, length=7, seed=3)
    lik = bi.BoltzmannLikelihood(mdp, demos)
    w, beta = np.array([0.3, 1.1]), 1.7
    steps = lik.step_log_likelihood(w, beta)
    ref = soft_log_policy_by_value_iteration(mdp, w, beta)[demos.steps.states,
                                                            demos.steps.actions]
    # Newton stops at span 1e-10 (tol): each log pi is off by at most ~2e-10.
    np.testing.assert_allclose(steps, ref, atol=1e-9)
    episodes = lik.episode_log_likelihood(w, beta)
    for e in range(demos.n_episodes):  # one episode's likelihood on its own
        alone = bi.BoltzmannLikelihood(mdp, demos.subset([e])).value(w, beta)
        assert episodes[e] == pytest.approx(alone, abs=1e-8)
    assert episodes.sum() == pytest.approx(lik.value(w, beta), abs=1e-8)


@pytest.mark.parametrize("q,horizon", [("optimal", None), ("soft", 5), ("optimal", 5)])
def test_steps_sum_to_the_likelihood_for_every_model(q, horizon):
    mdp = small_mdp(1, 2, horizon=horizon)
    demos = bi.simulate(mdp, np.array([0.5, 0.2]), episodes=3, length=5, seed=4)
    lik = bi.BoltzmannLikelihood(mdp, demos, q_function=q)
    w = np.array([-0.4, 0.9])
    assert lik.step_log_likelihood(w, 1.3).sum() == pytest.approx(lik.value(w, 1.3), abs=1e-8)


def interleaved_likelihood():
    """Demonstrators' episodes interleaved, so the episode mapping matters."""
    mdp = small_mdp(0, 2)
    demos = labelled_demos(mdp, TRUE_WEIGHTS, 2, 5, 10)
    order = [0, 2, 4, 1, 3, 5]
    return bi.BoltzmannLikelihood(mdp, demos.subset(order))


def test_demonstrator_terms_place_each_episode_where_it_belongs():
    lik = interleaved_likelihood()
    evidence = demonstrator_evidence(lik)
    q = {weights_name(i): np.array(w, dtype=float) for i, w in enumerate(TRUE_WEIGHTS.values())}
    q["rationality"] = 1.0
    episode, step, answers = evidence.pointwise(q, lik.demos.lengths)
    assert answers is None  # no comparisons
    who = list(lik.demos.groups())
    for e in range(lik.demos.n_episodes):
        d = who.index(lik.demos.demonstrators[e])
        alone = bi.BoltzmannLikelihood(lik.mdp, lik.demos.subset([e]))
        expected = alone.value(q[weights_name(d)], 1.0)
        assert episode[e] == pytest.approx(expected, abs=1e-8)
        lo = lik.demos.lengths[:e].sum()
        np.testing.assert_allclose(step[lo:lo + lik.demos.lengths[e]],
                                   alone.step_log_likelihood(q[weights_name(d)], 1.0), atol=1e-9)
    # Negative control: terms that do not say where their episodes sit get them wrong.
    wrong = Evidence([BoltzmannTerm(t.likelihood, key=t.key, weights=t.weights_name)
                      for t in evidence.terms])
    assert not np.allclose(wrong.pointwise(q, lik.demos.lengths)[0], episode)


@pytest.mark.parametrize("pooling", ["pooled", "partial"])
def test_log_likelihood_group_round_trips_and_arviz_reads_it(tmp_path, pooling):
    lik = interleaved_likelihood()
    post = bi.sample(lik, chains=2, draws=60, warmup=60, seed=2, progress=False,
                     backend=bi.Processes(1),
                     pooling=pooling)
    ll = post.compute_log_likelihood(steps=True)["episodes"]
    assert ll.shape == (2, 60, 6)
    back = bi.Posterior.load(post.save(tmp_path / "p.nc"))
    np.testing.assert_array_equal(back.log_likelihood["episodes"], ll)
    np.testing.assert_allclose(back.log_likelihood["steps"].sum(axis=-1), ll.sum(axis=-1),
                               rtol=1e-12)  # summation order only
    data = arviz_compat.from_netcdf(tmp_path / "p.nc")
    assert arviz_compat.group(data, "observed_data") is not None
    res = arviz_compat.loo(data, "episodes")
    assert res.elpd_i.shape == (6,) and res.pareto_k.shape == (6,)
    # elpd_loo <= the log pointwise predictive density (LOO removes the fit to each point)
    lppd = np.sum(logsumexp(ll.reshape(-1, 6), axis=0) - np.log(120))
    assert res.elpd <= lppd


def test_files_without_the_group_still_load(tmp_path):
    lik = interleaved_likelihood()
    post = bi.sample(lik, chains=1, draws=20, warmup=20, seed=2, progress=False,
                     backend=bi.Processes(1))
    back = bi.Posterior.load(post.save(tmp_path / "p.nc"))
    assert back.log_likelihood is None
