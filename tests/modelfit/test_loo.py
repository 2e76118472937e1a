"""PSIS-LOO per episode against exact leave-one-episode-out refits (Vehtari, Gelman & Gabry
2017: PSIS-LOO estimates what the refits compute exactly), and the comparison's standard
error against ArviZ's ``compare``."""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest
from posterior.problems import two_feature_likelihood
from scipy.special import logsumexp

import bayesirl as bi
from bayesirl import arviz_compat
from bayesirl.modelfit import episode_loo, refit_episodes
from bayesirl.modelfit.loo import _held_out_values

SAMPLING = {"chains": 4, "draws": 500, "warmup": 300, "backend": bi.Processes(1), "progress": False}


@cache
def fitted():
    return bi.sample(two_feature_likelihood(), seed=5, **SAMPLING)


def log_mean_exp_se(values: np.ndarray) -> float:
    """Monte-Carlo se of ``log mean exp(values)`` over (chains, draws): delta method,
    se(log m) = se(m) / m with se(m) = sd(p) / sqrt(ESS) (ESS from ArviZ)."""
    p = np.exp(values - values.max())
    return float(p.std(ddof=1) / np.sqrt(arviz_compat.ess(p, method="mean")) / p.mean())


@pytest.mark.slow  # six refits, ~60 s
def test_psis_matches_exact_refits_within_monte_carlo_error():
    post = fitted()
    loo = episode_loo(post)
    assert np.all(loo.pareto_k < 0.7)  # k small on this problem (the check)
    ll = post.log_likelihood["episodes"]
    lik = post.model.likelihood
    exact, se_exact = [], []
    for e in range(lik.demos.n_episodes):
        refit = bi.sample(bi.BoltzmannLikelihood(lik.mdp, lik.demos.subset(
            [k for k in range(lik.demos.n_episodes) if k != e])), seed=5, **SAMPLING)
        held = bi.BoltzmannLikelihood(lik.mdp, lik.demos.subset([e]))
        v = _held_out_values(refit, held, lik.demos, e).reshape(4, 500)
        exact.append(logsumexp(v) - np.log(v.size))
        se_exact.append(log_mean_exp_se(v))
    exact, se_exact = np.array(exact), np.array(se_exact)
    # PSIS's own Monte-Carlo error: at most that of plain importance sampling from the full
    # posterior to the leave-one-out one, bounded here by the delta-method se of
    # log mean exp(-ll) (the harmonic-mean form) -- a generous upper bound for k < 0.7.
    se_psis = np.array([log_mean_exp_se(-ll[..., e]) for e in range(ll.shape[-1])])
    z = (loo.elpd_i - exact) / np.sqrt(se_exact**2 + se_psis**2)
    # 6 episodes, two-sided: |z| < 3.5 keeps the family-wise false alarm under 0.3%.
    print("z psis vs exact:", np.round(z, 2), "k:", np.round(loo.pareto_k, 2))
    assert np.all(np.abs(z) < 3.5), (loo.elpd_i, exact, z)
    # Negative control: the in-sample log predictive density (no leaving out) differs from
    # the exact refits by p_loo_i per episode, far beyond the Monte-Carlo error.
    lppd = logsumexp(ll.reshape(-1, ll.shape[-1]), axis=0) - np.log(ll[..., 0].size)
    z_bad = (lppd - exact) / np.sqrt(se_exact**2 + se_psis**2)
    print("z in-sample vs exact:", np.round(z_bad, 2))
    assert np.max(np.abs(z_bad)) > 3.5, z_bad


def test_refit_episodes_reproduces_the_same_computation():
    post = fitted()
    got = refit_episodes(post, [0])
    lik = post.model.likelihood
    refit = bi.sample(bi.BoltzmannLikelihood(lik.mdp, lik.demos.subset(range(1, 6))),
                      seed=5, **SAMPLING)
    v = _held_out_values(refit, bi.BoltzmannLikelihood(lik.mdp, lik.demos.subset([0])),
                         lik.demos, 0)
    assert got[0] == logsumexp(v) - np.log(v.size)


def test_refit_replaces_the_unreliable_episodes(monkeypatch):
    import bayesirl.modelfit.loo as loo_module

    post = bi.sample(two_feature_likelihood(), seed=5, chains=2, draws=80, warmup=80,
                     backend=bi.Processes(1), progress=False)
    plain = episode_loo(post)
    monkeypatch.setattr(loo_module, "K_LIMIT", np.sort(plain.pareto_k)[-3])  # top two
    chosen = [int(e) for e in np.argsort(plain.pareto_k)[-2:]]
    refitted = episode_loo(post, refit=True)
    assert sorted(refitted.refitted) == sorted(chosen) and refitted.unreliable == []
    np.testing.assert_array_equal(refitted.elpd_i[chosen], refit_episodes(post, chosen))
    others = [e for e in range(6) if e not in chosen]
    np.testing.assert_array_equal(refitted.elpd_i[others], plain.elpd_i[others])
    assert refitted.elpd == pytest.approx(refitted.elpd_i.sum())
