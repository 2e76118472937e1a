"""The non-centred partial-pooling machinery on a Gaussian target with a known posterior.

Data: the eight schools of Rubin (1981), "Estimation in parallel randomized experiments",
J. Educational Statistics 6, as tabulated in Gelman et al., *Bayesian Data Analysis* (3rd
ed.), table 5.2 (values from memory of that table; any data would do, the reference below
is computed for the same numbers). Model: y_j ~ N(theta_j, sigma_j^2), theta_j = mu +
tau z_j, mu ~ N(0, 20^2), tau ~ HalfNormal(10) -- GroupModel with one GaussianTerm per
school, no MDP involved.

Reference: BDA section 5.4. Given tau, mu and the theta_j are Gaussian: marginally
y ~ N(0, diag(sigma^2 + tau^2) + 20^2 11^T), so p(tau | y) is p(tau) times that density
(scipy.stats.multivariate_normal), and E[mu | tau, y], E[theta_1 | tau, y] and their
variances are the normal-normal formulas (BDA eqs. 5.17, 5.20, with mu's prior added).
Moments follow by quadrature over tau (scipy.integrate.quad).

Divergences: Betancourt & Girolami (2015) show the centred form's funnel makes HMC
diverge; the non-centred one should not. Measured here, 4 chains x 5000 draws for each of
three seeds: at NUTS target acceptance 0.8 the non-centred form still had 5, 1 and 0
divergent transitions (rare, in the posterior's thin region at small tau), at 0.9 none;
so the check runs at 0.9 (as Stan users are advised to raise adapt_delta, common
practice). The negative control runs the same sampler and settings on the centred form
of the same posterior and must see divergences.
"""

from __future__ import annotations

import numpy as np
import pytest
from harness import moment_check
from scipy import integrate, stats

import bayesirl as bi
from bayesirl.evidence import Evidence
from bayesirl.posterior.groups import GroupModel, Pooling
from bayesirl.sampler import run_chain

from .gaussian import GaussianTerm

Y = np.array([28.0, 8.0, -3.0, 7.0, -1.0, 1.0, 18.0, 12.0])
SIGMA = np.array([15.0, 10.0, 16.0, 11.0, 9.0, 11.0, 10.0, 18.0])
MU_SD, TAU_SCALE = 20.0, 10.0
CHAINS, DRAWS, WARMUP, SEED = 4, 1000, 1000, 11
TARGET_ACCEPT = 0.9


def school_model() -> GroupModel:
    evidence = Evidence([GaussianTerm(j, y, s) for j, (y, s) in enumerate(zip(Y, SIGMA,
                                                                              strict=True))])
    return GroupModel(evidence, ["effect"], [f"school{j}" for j in range(len(Y))],
                      Pooling("partial", bi.HalfNormal(TAU_SCALE)), bi.Normal(0.0, MU_SD), 1.0)


def _given_tau(tau: float) -> tuple[float, float, float, float]:
    """(E, Var) of mu and of theta_1 given tau and y."""
    prec = 1.0 / MU_SD**2 + np.sum(1.0 / (SIGMA**2 + tau**2))
    v_mu = 1.0 / prec
    m_mu = v_mu * np.sum(Y / (SIGMA**2 + tau**2))
    p1 = 1.0 / SIGMA[0] ** 2 + 1.0 / tau**2
    shrink = (1.0 / tau**2) / p1
    m_t = (Y[0] / SIGMA[0] ** 2) / p1 + shrink * m_mu
    v_t = 1.0 / p1 + shrink**2 * v_mu
    return m_mu, v_mu, m_t, v_t


def _log_tau_density(tau: float) -> float:
    cov = np.diag(SIGMA**2 + tau**2) + MU_SD**2
    return stats.halfnorm.logpdf(tau, scale=TAU_SCALE) + stats.multivariate_normal.logpdf(
        Y, np.zeros(len(Y)), cov)


_LOG_SCALE = _log_tau_density(5.0)  # keeps the unnormalised density near 1 for quad


def _tau_density(tau: float) -> float:
    return float(np.exp(_log_tau_density(tau) - _LOG_SCALE))


def reference() -> tuple[np.ndarray, np.ndarray]:
    """Posterior means and sds of (mu, tau, theta_1) by quadrature over tau."""
    def moment(f):
        return integrate.quad(lambda t: f(t) * _tau_density(t), 1e-9, 12 * TAU_SCALE,
                              epsabs=0, epsrel=1e-10, limit=200)[0]
    z = moment(lambda t: 1.0)
    e_mu = moment(lambda t: _given_tau(t)[0]) / z
    e_mu2 = moment(lambda t: _given_tau(t)[1] + _given_tau(t)[0] ** 2) / z
    e_tau, e_tau2 = moment(lambda t: t) / z, moment(lambda t: t * t) / z
    e_t = moment(lambda t: _given_tau(t)[2]) / z
    e_t2 = moment(lambda t: _given_tau(t)[3] + _given_tau(t)[2] ** 2) / z
    mean = np.array([e_mu, e_tau, e_t])
    return mean, np.sqrt(np.array([e_mu2, e_tau2, e_t2]) - mean**2)


def _chains(density, dim, draw, chains=CHAINS, draws=DRAWS):
    seeds = np.random.SeedSequence(SEED).spawn(chains)
    out, divergent = [], 0
    for k, s in enumerate(seeds):
        x0 = np.random.default_rng(k).uniform(-2, 2, dim)
        r = run_chain(density, x0, draws, WARMUP // (DRAWS // draws), s,
                      target_accept=TARGET_ACCEPT)
        divergent += int(r.stats["divergent"].sum())
        out.append(np.array([draw(t) for t in r.draws]))
    return np.stack(out), divergent


@pytest.fixture(scope="module")
def non_centred():
    model = school_model()

    def draw(theta):
        q = model.draw(theta)
        return [q["population"][0], q["spread"][0], q["weights"][0, 0]]
    return _chains(model, model.dim, draw)


def test_reference_quadrature_is_a_density():
    # The quadrature's own check: p(tau | y) integrates to its normaliser on either split.
    whole = integrate.quad(_tau_density, 1e-9, 12 * TAU_SCALE, epsabs=0, epsrel=1e-10,
                           limit=200)[0]
    parts = sum(integrate.quad(_tau_density, a, b, epsabs=0, epsrel=1e-10, limit=200)[0]
                for a, b in ((1e-9, 5.0), (5.0, 12 * TAU_SCALE)))
    assert abs(whole - parts) < 1e-8 * whole


@pytest.mark.slow  # long NUTS runs on the funnel (~17 s): statistical suite
def test_moments_match_the_quadrature(non_centred):
    draws, _ = non_centred
    mean, sd = reference()
    check = moment_check(draws, mean, sd)
    assert check.failed == [], check.report()


@pytest.mark.slow  # long NUTS runs on the funnel (~17 s): statistical suite
def test_non_centred_form_does_not_diverge(non_centred):
    assert non_centred[1] == 0


def centred(x):
    """log p(mu, log tau, theta | y), centred: theta_j ~ N(mu, tau^2) directly."""
    mu, u, th = x[0], x[1], x[2:]
    tau = np.exp(u)
    lp = -0.5 * (mu / MU_SD) ** 2 - 0.5 * (tau / TAU_SCALE) ** 2 + u
    d = (th - mu) / tau
    lp += -0.5 * d @ d - len(th) * u - 0.5 * np.sum(((Y - th) / SIGMA) ** 2)
    g = np.empty_like(x)
    g[0] = -mu / MU_SD**2 + np.sum(d) / tau
    g[1] = -(tau / TAU_SCALE) ** 2 + 1.0 + d @ d - len(th)
    g[2:] = -d / tau + (Y - th) / SIGMA**2
    return float(lp), g


@pytest.mark.slow  # long NUTS runs on the funnel (~17 s): statistical suite
def test_negative_control_centred_form_diverges():
    # The funnel at small tau (Neal 2003, "Slice sampling", sec. 8's funnel; Betancourt &
    # Girolami 2015, fig. 5): the same sampler and seeds on the centred form, 2 chains of
    # 500 draws after 500 warmup.
    _, divergent = _chains(centred, 2 + len(Y), lambda x: x[:3], chains=2, draws=500)
    assert divergent > 0
