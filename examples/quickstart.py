"""Quick start on an invented scenario: a walker crossing a small park.

The park is a grid; each cell may be muddy, sloped or shaded, and the walker wants to reach the
water fountain (an absorbing cell). We simulate demonstrations from known weights with a
Boltzmann-rational walker, then sample the posterior over the weights with NUTS and print it
beside the maximum-likelihood point. All data here are invented for the demo.
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import minimize

import bayesirl
from bayesirl.scenarios import PARK_WEIGHTS, park_mdp


def main() -> None:
    mdp = park_mdp()
    truth = PARK_WEIGHTS
    demos = bayesirl.simulate(mdp, truth, episodes=40, length=15, seed=1, start=0)
    lik = bayesirl.BoltzmannLikelihood(mdp, demos)

    def objective(w):
        value, grad = lik.value_and_grad(w)
        return -value, -grad

    fit = minimize(objective, np.zeros(mdp.n_features), jac=True, method="BFGS")
    posterior = bayesirl.sample(lik, chains=4, draws=500, warmup=500, seed=0)
    print(f"{mdp}; {demos}")
    print(f"{'feature':<8} {'true':>6} {'max-likelihood':>15} {'posterior mean':>15}")
    means = posterior.weights.mean(axis=(0, 1))
    for name, t, w, m in zip(mdp.feature_names, truth, fit.x, means, strict=True):
        print(f"{name:<8} {t:6.2f} {w:15.2f} {m:15.2f}")
    print()
    print(posterior.summary())


if __name__ == "__main__":
    main()
