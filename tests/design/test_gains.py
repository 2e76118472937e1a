"""Information gains: an obvious-by-construction toy and brute-force enumeration.

References: the definition of mutual information, ``I = E_theta KL(p(y|theta) || p(y))``
(Cover & Thomas, Elements of Information Theory, ch. 2), evaluated by enumerating every
outcome; per-draw policies come from an independent dense numpy soft value iteration, not
from the package's solver. Tolerances: exact quantities to 1e-9 (floating point over a few
hundred terms), Monte-Carlo ones to 4 reported standard errors (two-sided false-alarm
probability 6e-5 under normality, common practice).
"""

from __future__ import annotations

import itertools

import numpy as np
from scipy.special import logsumexp

from bayesirl.design import suggest

from .conftest import posterior_from_draws, some_demos, tiny_mdp, toy_mdp


def _dense_policies(mdp, draws, sweeps: int = 3000):
    """log pi ``(N, S, A)`` by plain soft value iteration, until a sweep changes < 1e-14."""
    p = mdp.transitions.toarray().reshape(mdp.n_states, mdp.n_actions, mdp.n_states)
    out = []
    for w in draws:
        r = mdp.features_sa @ w
        v = np.zeros(mdp.n_states)
        for _ in range(sweeps):
            q = r + mdp.discount * p @ v
            top = q.max(axis=1)
            new = top + np.log(np.exp(q - top[:, None]).sum(axis=1))
            done = np.abs(new - v).max() < 1e-14
            v = new
            if done:
                break
        q = r + mdp.discount * p @ v
        out.append(q - logsumexp(q, axis=1, keepdims=True))
    return np.asarray(out), p


def _mi(logp_outcomes):
    """Mutual information from ``log p_m(y)`` ``(N, Y)`` over all outcomes ``y``."""
    n = logp_outcomes.shape[0]
    p = np.exp(logp_outcomes)
    log_bar = logsumexp(logp_outcomes, axis=0) - np.log(n)
    return float((p * (logp_outcomes - log_bar)).sum() / n)


def test_toy_only_separating_state_ranks_first():
    mdp = toy_mdp()
    draws = np.array([[2.0, 0.0], [0.0, 2.0]] * 20)
    post = posterior_from_draws(mdp, some_demos(mdp, [1.0, 1.0]), draws)
    sig = 1.0 / (1.0 + np.exp(-2.0))  # pi(a0 | s=2) under (2, 0), by hand: Q = r + g V(2)
    h = -(sig * np.log(sig) + (1 - sig) * np.log(1 - sig))
    for kind in ("query-states", "start-states"):
        ranked = suggest(post, kind, n_outer=40, length=3)
        assert ranked[0].state == 2, kind
        others = [r.gain for r in ranked[1:]]
        # Elsewhere both hypotheses give the same policy: no information at all.
        assert max(abs(x) for x in others) < 1e-9, kind
    q = suggest(post, "query-states")[0]
    assert abs(q.gain - (np.log(2) - h)) < 1e-9


def test_query_gains_equal_enumeration_and_stderr_formula():
    mdp = tiny_mdp()
    rng = np.random.default_rng(5)
    draws = rng.normal(scale=1.5, size=(60, 2))
    post = posterior_from_draws(mdp, some_demos(mdp, [1.0, -1.0]), draws)
    logpol, _ = _dense_policies(mdp, draws)
    got = {r.state: r for r in suggest(post, "query-states")}
    for s in range(mdp.n_states):
        assert abs(got[s].gain - _mi(logpol[:, s, :])) < 1e-9
        # Influence function of H(pbar) - mean H written out directly (delta method).
        p = np.exp(logpol[:, s, :])
        pbar = p.mean(axis=0)
        psi = -(p * np.log(pbar)).sum(axis=1) + (p * logpol[:, s, :]).sum(axis=1)
        assert abs(got[s].stderr - psi.std() / np.sqrt(len(psi))) < 1e-9


def _trajectory_logp(logpol, p, start, length):
    """log p_m(tau) for every trajectory (a_0, s_1, ..., a_{L-1}, s_L) from ``start``."""
    n_s, n_a = logpol.shape[1], logpol.shape[2]
    cols = []
    for steps in itertools.product(range(n_a * n_s), repeat=length):
        s, lp = start, np.zeros(logpol.shape[0])
        for k in steps:
            a, s_next = divmod(k, n_s)
            if p[s, a, s_next] == 0:
                lp = None
                break
            lp = lp + logpol[:, s, a] + np.log(p[s, a, s_next])
            s = s_next
        if lp is not None:
            cols.append(lp)
    return np.stack(cols, axis=1)


def test_start_gains_agree_with_enumeration_within_stderr():
    mdp = tiny_mdp()
    rng = np.random.default_rng(6)
    draws = rng.normal(scale=1.5, size=(50, 2))
    post = posterior_from_draws(mdp, some_demos(mdp, [1.0, -1.0]), draws)
    logpol, p = _dense_policies(mdp, draws)
    ranked = suggest(post, "start-states", length=3, n_outer=400, seed=2)
    for r in ranked:
        exact = _mi(_trajectory_logp(logpol, p, r.state, 3))
        # The inner average runs over the same draws as the enumeration, so the estimate
        # is unbiased for ``exact`` and only the outer-sample error remains.
        assert abs(r.gain - exact) < 4 * r.stderr, (r, exact)
        assert r.stderr < 0.1 * exact  # the check has power: errors are small against gains


def test_greedy_second_query_is_conditional_gain():
    mdp = tiny_mdp()
    rng = np.random.default_rng(7)
    draws = rng.normal(scale=1.5, size=(40, 2))
    post = posterior_from_draws(mdp, some_demos(mdp, [1.0, -1.0]), draws)
    logpol, _ = _dense_policies(mdp, draws)
    ranked = suggest(post, "query-states", budget=2, n_outer=400, seed=1)
    first, second = ranked[0], ranked[1]
    assert (first.step, second.step) == (1, 2)
    joint = logpol[:, first.state, :, None] + logpol[:, second.state, None, :]
    exact = _mi(joint.reshape(len(draws), -1)) - _mi(logpol[:, first.state, :])
    assert abs(second.gain - exact) < 4 * second.stderr, (second, exact)
    # Asking again where the first answer was given is worth less than the first time.
    again = [r for r in ranked[1:] if r.state == first.state][0]
    assert again.gain < first.gain


def _weighted_sd(x, w):
    m = np.average(x, weights=w)
    return np.sqrt(np.average((x - m) ** 2, weights=w))


def test_target_sd_is_reweighted_posterior_sd_by_enumeration():
    mdp = tiny_mdp()
    rng = np.random.default_rng(8)
    draws = rng.normal(scale=1.5, size=(60, 2))
    post = posterior_from_draws(mdp, some_demos(mdp, [1.0, -1.0]), draws)
    logpol, _ = _dense_policies(mdp, draws)
    ratio = draws[:, 0] / draws[:, 1]
    for target, g in (("a", draws[:, 0]), ("a/b", ratio)):
        got = {r.state: r for r in suggest(post, "query-states", target=target)}
        for s in range(mdp.n_states):
            lik = np.exp(logpol[:, s, :])  # (N, A): p(answer | draw) = importance weights
            want = sum(lik[:, a].mean() * _weighted_sd(g, lik[:, a])
                       for a in range(mdp.n_actions))
            assert abs(got[s].target_sd - want) < 1e-9, (target, s)
            assert abs(got[s].target_reduction - (g.std(ddof=1) - want)) < 1e-9


def test_policy_risk_target_runs_and_reduces_on_average():
    mdp = tiny_mdp()
    rng = np.random.default_rng(9)
    draws = rng.normal(scale=1.5, size=(30, 2))
    post = posterior_from_draws(mdp, some_demos(mdp, [1.0, -1.0]), draws)
    ranked = suggest(post, "start-states", target="policy-risk", length=3, n_outer=64)
    assert all(np.isfinite(r.target_sd) and r.target_sd >= 0 for r in ranked)
    # Conditioning cannot raise the expected posterior variance (law of total variance);
    # for the sd this holds by Jensen's inequality up to the outer-sample error.
    assert max(r.target_sd for r in ranked) <= ranked[0].target_sd + ranked[0].target_reduction


def test_policy_risk_target_is_the_reports_number():
    # The designer's "policy-risk" target must be the per-draw loss the report's policy-risk
    # section shows (one shared computation, report.derived.policy_losses).
    from bayesirl.design.targets import target_values
    from bayesirl.report.derived import policy_risk

    mdp = tiny_mdp()
    draws = np.random.default_rng(5).normal(size=(30, 2))
    post = posterior_from_draws(mdp, some_demos(mdp, [1.0, -1.0]), draws)
    ours = target_values(post, draws, "policy-risk")
    np.testing.assert_allclose(ours, policy_risk(post)["values"], rtol=0, atol=1e-12)
    assert np.ptp(ours) > 0  # the draws disagree, so the check compares real numbers
