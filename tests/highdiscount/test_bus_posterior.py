"""NUTS on the bus-engine model at high discounts equals the exact posterior by quadrature.

References: the model of Rust (1987) (``bus.py``), simulated from its published estimates;
the exact posterior by grid quadrature (``quadrature.py``); Monte-Carlo errors from
``tests/harness.py``; R-hat <= 1.01 and no divergences (Vehtari et al. 2021; Betancourt 2017).
Default run: discount 0.9999 (the hardest) with shorter chains; slow suite: all three
discounts with the default sampler settings.
"""

from __future__ import annotations

import numpy as np
import pytest

from bayesirl import BoltzmannLikelihood, sample, simulate
from bayesirl.execution.backend import Processes
from tests.harness import mean_mcse

from . import bus
from .quadrature import grid_moments

PRIOR_SD = 5.0  # bayesirl's default prior on the weights: Normal(0, 5), written out here


def _check(discount, chains, draws, warmup, seed, grid_points, dense_mass=False):
    demos = simulate(bus.bus_mdp(discount), bus.TRUTH, episodes=100, length=100,
                     seed=20261203, start=0)
    lik = BoltzmannLikelihood(bus.bus_mdp(discount), demos)
    post = sample(lik, chains=chains, draws=draws, warmup=warmup, seed=seed, progress=False,
                  backend=Processes(min(chains, 2)), dense_mass=dense_mass)
    exact = BoltzmannLikelihood(bus.bus_mdp(discount), demos, tol=0.0)

    def log_post(theta):
        return exact.value(theta) - 0.5 * float(theta @ theta) / PRIOR_SD**2

    mean, sd, _, _ = grid_moments(log_post, bus.TRUTH, n=grid_points)
    w = post.weights  # (chains, draws, 2)
    diag = post.diagnostics
    assert np.all(diag.rhat <= 1.01), diag.rhat
    assert diag.divergences == 0
    for k in range(2):
        est, mcse = mean_mcse(w[:, :, k])
        # 4 MCSE: a two-sided false alarm of 6e-5 per mean (common practice for such checks).
        assert abs(est - mean[k]) <= 4 * mcse, (bus.NAMES[k], est, mean[k], mcse)
        got_sd = w[:, :, k].std(ddof=1)
        assert abs(got_sd - sd[k]) <= 0.10 * sd[k], (bus.NAMES[k], got_sd, sd[k])
        lo, hi = np.quantile(w[:, :, k], [0.05, 0.95])
        assert lo <= bus.TRUTH[k] <= hi, (bus.NAMES[k], lo, hi)
    return post


def test_nuts_equals_quadrature_at_0_9999():
    # Shorter chains than the defaults, so the dense mass matrix that `fit` chooses for this
    # ridge (theta1 and RC are strongly correlated a posteriori): with a diagonal one, 4 x 500 draws
    # leave a bulk-ESS near 450 and R-hat straddles 1.01 from seed to seed (seen 1.018).
    _check(0.9999, chains=4, draws=500, warmup=500, seed=3, grid_points=61, dense_mass=True)


@pytest.mark.slow
@pytest.mark.parametrize("discount", [0.99, 0.999, 0.9999])
def test_nuts_equals_quadrature_default_settings(discount):
    _check(discount, chains=4, draws=1000, warmup=1000, seed=11, grid_points=121)
