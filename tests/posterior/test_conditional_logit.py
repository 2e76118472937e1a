"""The one-step posterior against statsmodels' conditional logit (Bernstein-von Mises).

Outside references: McFadden (1974), "Conditional logit analysis of qualitative choice
behavior", as implemented by statsmodels (Seabold & Perktold 2010)
``statsmodels.discrete.conditional_models.ConditionalLogit``; the Bernstein-von Mises
theorem (van der Vaart 1998, "Asymptotic Statistics", Thm 10.1); Gauss-Hermite quadrature
(numpy.polynomial.hermite_e.hermegauss).

With horizon 1 (or discount 0) the Boltzmann policy is a softmax of ``beta phi(s, a) . w``
over the A actions of state s, so one demonstrated step per state is one conditional-logit
choice set and the logit coefficients are ``beta w`` (beta = 1 here). With n = 200 choice
sets and a weak N(0, 10^2) prior the posterior is close to N(params, cov_params):

1. the brief's check: posterior mean and sd within 10% of statsmodels' params and bse;
2. the sharp check: the exact finite-n posterior moments, by Gauss-Hermite quadrature of
   statsmodels' own ``loglike`` times the prior, match the NUTS draws within Monte-Carlo
   error alone (harness.check_moments, family-wise 1e-3). So |draws - params| is bounded by
   z * MCSE + |exact - params|, and
3. that deterministic gap is the O(1/n) Bernstein-von Mises correction: with every choice
   set counted 4 times (log-likelihood x 4) it shrinks 4-fold.
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest
from harness import check_moments
from numpy.polynomial.hermite_e import hermegauss
from statsmodels.discrete.conditional_models import ConditionalLogit

import bayesirl as bi
from bayesirl.execution.backend import Processes

N_STATES, N_ACTIONS = 200, 4
PRIOR_SCALE = 10.0
TRUE_W = np.array([1.0, -0.6, 0.4])


def _choice_problem(n_features: int, case: str, seed: int = 21):
    rng = np.random.default_rng(seed)
    phi = rng.normal(size=(N_STATES, N_ACTIONS, n_features))
    util = phi @ TRUE_W[:n_features]
    prob = np.exp(util - util.max(axis=1, keepdims=True))
    prob /= prob.sum(axis=1, keepdims=True)
    chosen = np.minimum((prob.cumsum(axis=1) < rng.random(N_STATES)[:, None]).sum(axis=1),
                        N_ACTIONS - 1)
    # Dynamics must not matter in the one-step model: random deterministic successors.
    trans = np.zeros((N_STATES, N_ACTIONS, N_STATES))
    nxt = rng.integers(N_STATES, size=(N_STATES, N_ACTIONS))
    trans[np.arange(N_STATES)[:, None], np.arange(N_ACTIONS)[None, :], nxt] = 1.0
    if case == "horizon1":
        mdp = bi.TabularMDP(trans, phi, discount=0.9, horizon=1)
    else:
        mdp = bi.TabularMDP(trans, phi, discount=0.0)
    demos = bi.Demonstrations.from_arrays([[s] for s in range(N_STATES)],
                                          [[a] for a in chosen])
    endog = np.zeros(N_STATES * N_ACTIONS)
    endog[np.arange(N_STATES) * N_ACTIONS + chosen] = 1.0
    logit = ConditionalLogit(endog, phi.reshape(-1, n_features),
                             groups=np.repeat(np.arange(N_STATES), N_ACTIONS))
    return bi.BoltzmannLikelihood(mdp, demos, rationality=1.0), logit


def exact_moments(logit, fit, nodes: int, copies: int = 1):
    """Posterior mean and sd of ``copies * loglike + log N(0, 10^2)`` by Gauss-Hermite.

    Nodes are placed in the whitened coordinates ``theta = params + L u / sqrt(copies)``
    (``L L^T = cov_params``), where the integrand is the N(0, I) weight times a smooth,
    slowly varying ratio; the rule with ``m`` nodes per axis integrates polynomials of
    degree 2m - 1 in u exactly.
    """
    dim = len(fit.params)
    u, weights = hermegauss(nodes)
    grid = np.stack(np.meshgrid(*[u] * dim, indexing="ij"), axis=-1).reshape(-1, dim)
    wgt = np.prod(np.stack(np.meshgrid(*[weights] * dim, indexing="ij"), -1).reshape(-1, dim),
                  axis=1)
    chol = np.linalg.cholesky(np.asarray(fit.cov_params())) / np.sqrt(copies)
    theta = np.asarray(fit.params) + grid @ chol.T
    logpost = np.array([copies * logit.loglike(t) for t in theta])
    logpost -= 0.5 * np.sum(theta**2, axis=1) / PRIOR_SCALE**2
    log_ratio = logpost + 0.5 * np.sum(grid**2, axis=1)  # divide by the N(0, I) weight
    p = wgt * np.exp(log_ratio - log_ratio.max())
    p /= p.sum()
    mean = p @ theta
    return mean, np.sqrt(p @ (theta - mean) ** 2)


@cache
def _setting(n_features: int, case: str):
    lik, logit = _choice_problem(n_features, case)
    # statsmodels' Newton fit (tolerance 1e-8 on the parameter change, analytic score).
    fit = logit.fit(method="newton", disp=False)
    return lik, logit, fit


def _run(n_features, case, draws, warmup, seed):
    lik, logit, fit = _setting(n_features, case)
    post = bi.sample(lik, bi.Normal(0.0, PRIOR_SCALE), chains=4, draws=draws, warmup=warmup,
                     seed=seed, progress=False, backend=Processes(1))
    params, bse = np.asarray(fit.params), np.asarray(fit.bse)
    weights = post.weights

    # 1. The brief's 10%: mean within 10% of |params|, sd within 10% of bse.
    mean, sd = weights.mean(axis=(0, 1)), weights.std(axis=(0, 1), ddof=1)
    assert np.all(np.abs(mean - params) <= 0.1 * np.abs(params)), (mean, params)
    assert np.all(np.abs(sd - bse) <= 0.1 * bse), (sd, bse)

    # 2. Exact posterior moments by quadrature. Its own error, bounded by the change from
    # 8 to 12 nodes per axis (the error falls fast with m), must be < 1e-5 sd, i.e. < 1e-3 of the
    # MCSE (~ sd / 50 here), so it is negligible in check_moments.
    q_mean, q_sd = exact_moments(logit, fit, 12)
    c_mean, c_sd = exact_moments(logit, fit, 8)
    assert np.all(np.abs(q_mean - c_mean) < 1e-5 * bse)
    assert np.all(np.abs(q_sd - c_sd) < 1e-5 * bse)
    check = check_moments(weights, q_mean, q_sd)
    z_crit, mcse = check.z_crit, check.mcse
    # Spelled out: draws - params within MC error plus the deterministic O(1/n) gap.
    for i in range(n_features):
        gap_mean, gap_sd = abs(q_mean[i] - params[i]), abs(q_sd[i] - bse[i])
        assert abs(mean[i] - params[i]) <= z_crit * mcse[check.names.index(f"mean[{i}]")] \
            + gap_mean
        assert abs(check.estimate[check.names.index(f"sd[{i}]")] - bse[i]) <= \
            z_crit * mcse[check.names.index(f"sd[{i}]")] + gap_sd
    return params, bse, q_mean, q_sd


def test_posterior_matches_conditional_logit_horizon_one():
    params, bse, q_mean, q_sd = _run(2, "horizon1", draws=1000, warmup=500, seed=3)
    _, logit, fit = _setting(2, "horizon1")
    # 3. The gap is the O(1/n) correction: 4 copies of every choice set -> a quarter of it.
    # gap(n) = a / n + b / n^2 + ..., so the ratio is 1/4 - 3 b / (16 a n) + ...; a 10%
    # band (0.225 - 0.275) allows |b / a| up to ~27 at n = 200.
    q4_mean, q4_sd = exact_moments(logit, fit, 12, copies=4)
    ratio_mean = np.abs(q4_mean - params) / np.abs(q_mean - params)
    # the sd gap relative to the sd (bse / 2 with 4 copies)
    ratio_sd = np.abs(q4_sd / (bse / 2) - 1) / np.abs(q_sd / bse - 1)
    assert np.all((0.225 < ratio_mean) & (ratio_mean < 0.275)), ratio_mean
    assert np.all((0.225 < ratio_sd) & (ratio_sd < 0.275)), ratio_sd
    # and it is not negligible against the MC error (else point 2 would not need it)
    assert np.all(np.abs(q_mean - params) > 0.03 * bse)


@pytest.mark.slow
def test_posterior_matches_conditional_logit_discount_zero_three_features():
    _run(3, "discount0", draws=3000, warmup=1000, seed=4)
