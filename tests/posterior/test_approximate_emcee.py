"""``approximate`` (Pathfinder + PSIS) against emcee on a skewed posterior (slow).

Outside reference: emcee on the same log-posterior (tests/posterior/test_emcee.py: the
sampled-rationality problem, beta visibly skewed). What is checked is the promise that
matters: whenever ``approximate`` calls itself trusted (k-hat at or below the threshold),
its means of (y, z, beta) agree with emcee's within combined Monte-Carlo error (its own
error ``sd sqrt(1/ESS + 1/n)`` as printed by ``sketch``, emcee's from the walker-averaged
series), family-wise level 1e-3 over every seed and quantity (Bonferroni). Runs that call
themselves untrusted make no claim and are only counted.
"""

from __future__ import annotations

import numpy as np
import pytest
from harness import bonferroni_z

import bayesirl as bi

from .ensemble import _mean_and_se
from .problems import PIN, PRIOR, RATIONALITY, three_feature_likelihood
from .test_emcee import _emcee_pinned

SEEDS = range(6)


@pytest.mark.slow
def test_a_trusted_approximation_agrees_with_emcee():
    walkers = _emcee_pinned(30)
    ref = [_mean_and_se(walkers[:, :, i]) for i in range(3)]
    z_crit = bonferroni_z(1e-3, 3 * len(SEEDS))
    rows, failed = [], []
    for seed in SEEDS:
        a = bi.approximate(three_feature_likelihood(), PRIOR, pin=PIN,
                           rationality=RATIONALITY, seed=seed)
        draws = np.column_stack([a.weights[:, 1:], a.rationality])
        zs = []
        for i, (mean, se) in enumerate(ref):
            x = draws[:, i]
            own = x.std(ddof=1) * np.sqrt(1.0 / a.ess + 1.0 / x.shape[0])
            zs.append((x.mean() - mean) / np.hypot(own, se))
        rows.append((seed, round(a.k_hat, 3), a.trusted, round(a.ess), np.round(zs, 2)))
        if a.trusted and max(abs(z) for z in zs) >= z_crit:
            failed.append(seed)
    print(rows)
    assert not failed, rows
