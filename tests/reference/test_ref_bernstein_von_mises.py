"""Quick check: the flat-prior posterior is asymptotically normal around the MLE.

Outside references: the Bernstein-von Mises theorem (van der Vaart 1998, "Asymptotic
Statistics", Thm 10.1): posterior ~ N(w_hat, -1/l''(w_hat)) with errors -> 0; and its first
correction, the Laplace expansion of posterior moments (Lindley 1980, "Approximate Bayesian
methods", Trabajos de Estadistica; Tierney & Kadane 1986, JASA): in x = (w - w_hat) / sigma,
sigma^2 = -1/l'', with k3 = l''' sigma^3, k4 = l'''' sigma^4 (of order N^-1/2 and N^-1),

    E[x]   = k3 / 2              + O(N^-3/2)     (Lindley's mean correction, flat prior)
    Var[x] = 1 + k4 / 2 + k3^2   + O(N^-2)       (fourth-order expansion, derived here and
                                                  checked on a Gamma density below)

One weight, so the posterior moments can be computed deterministically by quadrature of OUR
log-likelihood; the derivatives come from finite differences of OUR gradient. The check is
that the deviations from normality are exactly the predicted first corrections, which also
ties the likelihood's curvature and skewness to its gradient.
"""

from __future__ import annotations

import numpy as np

from bayesirl import BoltzmannLikelihood, TabularMDP, simulate

N_STATES, N_ACTIONS, DISCOUNT = 8, 3, 0.9
N_EPISODES, LENGTH = 20, 20  # N = 400 demonstrated steps


def _expansion(k3, k4):
    return k3 / 2, 1 + k4 / 2 + k3**2


def test_expansion_formula_on_gamma_density():
    # log p(t) = n (log t - t): mode 1, exact mean (n+1)/n and variance (n+1)/n^2.
    n = 400.0
    sigma = np.sqrt(1 / n)  # l'' = -n at the mode
    k3, k4 = 2 * n * sigma**3, -6 * n * sigma**4
    mean_x, var_x = _expansion(k3, k4)
    exact_mean, exact_var = (1 / n) / sigma, (n + 1) / n**2 / sigma**2
    assert abs(mean_x - exact_mean) < 1e-15  # exact here: all higher odd terms cancel
    assert abs(var_x - exact_var) < 1e-15  # exact here (n^-2 terms vanish for the Gamma)


def test_posterior_is_normal_up_to_predicted_first_corrections():
    rng = np.random.default_rng(0)
    trans = rng.dirichlet(np.full(N_STATES, 0.5), size=(N_STATES, N_ACTIONS))
    phi = rng.normal(size=(N_STATES, N_ACTIONS, 1))
    mdp = TabularMDP(trans, phi, discount=DISCOUNT)
    demos = simulate(mdp, np.array([0.7]), episodes=N_EPISODES, length=LENGTH, seed=3)
    lik = BoltzmannLikelihood(mdp, demos)

    def grad(w):
        return lik.value_and_grad(np.array([w]))[1][0]

    w_hat = 0.0
    for _ in range(8):  # Newton on our gradient
        w_hat -= grad(w_hat) / ((grad(w_hat + 1e-4) - grad(w_hat - 1e-4)) / 2e-4)
    assert abs(grad(w_hat)) < 1e-9

    # Derivatives from 5-point differences of the gradient with h = sigma/4. Truncation is
    # c h^2 l^(k+2) relative to l^(k) with c <= 1/4, i.e. <= 1/(64 N); gradient noise (~1e-10,
    # solver and adjoint tolerances) divided by h^3 ~ 1e-6 stays below 1e-3 relative.
    sigma = np.sqrt(-1 / ((grad(w_hat + 1e-4) - grad(w_hat - 1e-4)) / 2e-4))
    h = sigma / 4
    g = {k: grad(w_hat + k * h) for k in (-2, -1, 0, 1, 2)}
    l2 = (-g[2] + 8 * g[1] - 8 * g[-1] + g[-2]) / (12 * h)
    l3 = (g[1] - 2 * g[0] + g[-1]) / h**2
    l4 = (g[2] - 2 * g[1] + 2 * g[-1] - g[-2]) / (2 * h**3)
    sigma = np.sqrt(-1 / l2)
    k3, k4 = l3 * sigma**3, l4 * sigma**4

    # Posterior moments by the trapezoid rule on x in [-8, 8], spacing 0.2: for a smooth,
    # Gaussian-like integrand the error is ~exp(-2 pi^2 / 0.2^2) plus the tail mass beyond
    # 8 sigma (~1e-14); the log-likelihood's own error (2 N DEFAULT_TOL ~ 1e-7) moves the
    # moments by ~1e-7. Quadrature error is therefore negligible against the checks below.
    x = np.linspace(-8.0, 8.0, 81)
    logp = np.array([lik.log_likelihood(np.array([w_hat + sigma * xi])) for xi in x])
    p = np.exp(logp - logp.max())
    z = np.trapezoid(p, x)
    mean_x = np.trapezoid(x * p, x) / z
    var_x = np.trapezoid((x - mean_x) ** 2 * p, x) / z

    pred_mean, pred_var = _expansion(k3, k4)
    # Bernstein-von Mises at N = 400: the posterior is close to N(w_hat, sigma^2) ...
    assert abs(mean_x) < 0.1 and abs(var_x - 1) < 0.02
    # ... but not identical (else the next checks would be vacuous) ...
    assert abs(mean_x) > 1e-2 and abs(var_x - 1) > 1e-3
    # ... and the deviations are the predicted first corrections. The neglected terms are
    # O(1/N) relative to these corrections (1/400 = 0.25% per unit constant), the derivative
    # errors < 0.1%: a 1% tolerance allows constants up to ~4.
    assert abs(mean_x - pred_mean) <= 0.01 * abs(pred_mean)
    assert abs(var_x - pred_var) <= 0.01 * abs(pred_var - 1)
