"""bayesirl.sample (NUTS) agrees with emcee on the same log-posterior.

Outside reference: emcee (Foreman-Mackey, Hogg, Lang & Goodman 2013, PASP 125, "emcee: the
MCMC hammer"), the affine-invariant ensemble sampler of Goodman & Weare (2010), from PyPI. It
only sees ``PosteriorModel.logdensity_and_grad(theta)[0]``, the log-density bayesirl.sample
samples, on a 6-state, 3-action MDP with 3 features: weight ``x`` pinned to 1, weights
``y, z`` free under N(0, 2^2), and the rationality sampled under LogNormal(0, 0.5), so
theta = (y, z, log beta). Means, sds and 5/50/95% quantiles of (y, z, beta) must agree
within combined Monte-Carlo error at family-wise level 1e-3 (Bonferroni; harness.py).

emcee's MCSE comes from ``ensemble.py`` (walker-averaged series; walkers are not independent
chains), calibrated against exact Gaussian moments in ``test_ensemble_mcse_*``. emcee's own
reliability rule, a chain longer than 50 integrated autocorrelation times (emcee docs,
"Autocorrelation analysis"; ``get_autocorr_time`` raises otherwise), is asserted.
"""

from __future__ import annotations

from functools import cache

import emcee
import numpy as np
import pytest
from harness import gaussian_quantiles
from scipy import stats

from .ensemble import ensemble_check, ensemble_moment_check
from .problems import nuts_pinned, pinned_model

WALKERS = 16  # >= 2 x dim, as emcee requires; more walkers only add cost per ESS here


def _seeded_sampler(n_dim, log_prob, seed, **kwargs) -> tuple[emcee.EnsembleSampler, np.ndarray]:
    rng = np.random.default_rng(seed)
    sampler = emcee.EnsembleSampler(WALKERS, n_dim, log_prob, **kwargs)
    # emcee draws from its own RandomState; seed it locally (never the global state).
    sampler.random_state = np.random.RandomState(int(rng.integers(2**32))).get_state()
    return sampler, rng.normal(0.0, 0.1, size=(WALKERS, n_dim))


@cache
def _emcee_pinned(seed: int, steps: int = 3000, discard: int = 500) -> np.ndarray:
    """(walkers, steps, 3) draws of (y, z, beta) from emcee on the PosteriorModel."""
    model = pinned_model()  # its own likelihood copy (warm starts are per chain)

    def log_prob(theta):
        return model.logdensity_and_grad(theta)[0]

    sampler, start = _seeded_sampler(3, log_prob, seed)
    sampler.run_mcmc(start, steps)
    # tau ~ 40 steps here: 2500 kept steps are > 50 tau (raises otherwise); the 500
    # discarded steps are > 10 tau of burn-in from the tight start around theta = 0.
    sampler.get_autocorr_time(discard=discard, tol=50)
    theta = np.swapaxes(sampler.get_chain(discard=discard), 0, 1)
    return np.concatenate([theta[..., :2], np.exp(theta[..., 2:])], axis=-1)


def _nuts(seed: int = 20, **kwargs) -> np.ndarray:
    post = nuts_pinned(seed, **kwargs)
    assert np.all(post.weights[..., 0] == 1.0)  # the pin is held
    return np.concatenate([post.weights[..., 1:], post.rationality[..., None]], axis=-1)


@pytest.mark.slow  # ~7 s: statistical suite (NUTS against emcee stays in the default run)
def test_posterior_is_not_gaussian():
    # Guard that the comparison is not a Gaussian one in disguise: the emcee draws of beta
    # are skewed; the sample skewness exceeds z * sqrt(6 / ESS), the sd of the sample
    # skewness under normality (one-sided, level 1e-3), with ESS = 16 * 2500 / tau and
    # tau <= 50 steps (asserted through get_autocorr_time) so ESS >= 800.
    beta = _emcee_pinned(30)[..., 2]
    x = beta.ravel()
    skew = np.mean((x - x.mean()) ** 3) / x.std() ** 3
    assert skew > stats.norm.isf(1e-3) * np.sqrt(6.0 / 800)


def test_nuts_agrees_with_emcee():
    check = ensemble_check(_nuts(), _emcee_pinned(30))
    assert not check.failed, "NUTS and emcee disagree:\n" + check.report()


def test_comparison_detects_a_posterior_20_percent_wider():
    # Negative control: the NUTS draws spread 20% about their means (what a wrong
    # rationality prior or a lost Jacobian could do) must be told apart. Combined MCSEs of
    # the sds are ~3% of the sd at these run lengths (see the report), so a 20% error gives
    # z ~ 6 > the critical ~4; this comparison resolves sd errors down to ~13% and mean
    # errors down to ~0.15 sd (4 combined MCSEs); the slow run halves both.
    nuts = _nuts()
    centre = nuts.mean(axis=(0, 1))
    wide = centre + 1.2 * (nuts - centre)
    check = ensemble_check(wide, _emcee_pinned(30))
    assert {"sd[0]", "sd[1]", "sd[2]"} <= set(check.failed), check.report()


# --- the ensemble MCSE against exact answers ------------------------------------------------

GAUSS_MEAN = np.array([1.0, -2.0])
GAUSS_COV = np.array([[1.0, 0.4], [0.4, 0.25]])  # correlation 0.8
GAUSS_SD = np.sqrt(np.diag(GAUSS_COV))
_PREC = np.linalg.inv(GAUSS_COV)


def _gauss_log_prob(x):
    d = x - GAUSS_MEAN
    return -0.5 * np.einsum("...i,ij,...j->...", d, _PREC, d)


def _emcee_gauss(seed: int, steps: int = 1500, discard: int = 300) -> np.ndarray:
    sampler, start = _seeded_sampler(2, _gauss_log_prob, seed, vectorize=True)
    sampler.run_mcmc(GAUSS_MEAN + 10 * start, steps)
    return np.swapaxes(sampler.get_chain(discard=discard), 0, 1)


def test_ensemble_mcse_passes_exact_gaussian_moments_and_rejects_wrong_ones():
    draws = _emcee_gauss(40)
    quantiles = gaussian_quantiles(GAUSS_MEAN, GAUSS_SD)
    check = ensemble_moment_check(draws, GAUSS_MEAN, GAUSS_SD, quantiles)
    assert not check.failed, check.report()
    # Negative control: a mean shifted by 0.25 sd; ESS ~ 16 * 1200 / 25 ~ 750, so the
    # expected z is ~ 0.25 * sqrt(750) ~ 7 against the critical ~3.9.
    shifted = ensemble_moment_check(draws, GAUSS_MEAN + 0.25 * GAUSS_SD, GAUSS_SD, quantiles)
    assert {"mean[0]", "mean[1]"} <= set(shifted.failed)


@pytest.mark.slow
def test_ensemble_mcse_is_calibrated():
    # Over 40 independent emcee runs on the Gaussian, the standardised errors of the means
    # have sum of squares ~ chi^2(40) when the MCSE is right (ESS-estimation noise makes the
    # z slightly heavier-tailed than normal). Two-sided 1e-3 for each of the two means.
    quantiles = gaussian_quantiles(GAUSS_MEAN, GAUSS_SD)
    z = np.array([ensemble_moment_check(_emcee_gauss(100 + k), GAUSS_MEAN, GAUSS_SD,
                                        quantiles).z for k in range(40)])
    names = ensemble_moment_check(_emcee_gauss(100), GAUSS_MEAN, GAUSS_SD, quantiles).names
    lo, hi = stats.chi2.ppf([2.5e-4, 1 - 2.5e-4], 40)
    for name in ("mean[0]", "mean[1]"):
        ss = float(np.sum(z[:, names.index(name)] ** 2))
        assert lo < ss < hi, (name, ss, lo, hi)


@pytest.mark.slow
def test_nuts_agrees_with_emcee_long():
    # Four times the default run lengths: combined MCSEs halve.
    check = ensemble_check(_nuts(21, draws=4000, warmup=1000),
                           _emcee_pinned(31, steps=12000, discard=1000))
    assert not check.failed, "NUTS and emcee disagree:\n" + check.report()
