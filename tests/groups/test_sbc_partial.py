"""Simulation-based calibration of partial pooling (Talts et al. 2018), small default run.

40 replications of bayesirl.validation.partial.PartialSBC: 3 demonstrators with weights
w_d = mu + tau z_d drawn from the prior, 2 episodes x 6 steps each on a 5-state random
MDP, one feature, posterior by bayesirl.sample(pooling="partial") with NUTS. Ranked: mu,
the spread tau and demonstrator 0's weight. L = 39 thinned draws, 4 bins of 10 expected
replications; uniformity tested at p > 0.01 per parameter (bayesirl.validation.ranks).
Power, for scale (as in tests/validation/test_sbc_default.py): a bin probability off by
about 0.2 is detected. The slow suite (test_sbc_partial_slow.py) runs 200 replications.
Measured in the session that wrote it (load average ~6 on 2 cores): 166 s of CPU for the
40 replications in 2 worker processes, 324 s of wall time; so about 80 s of wall time on
two idle cores -- the dearest default test of the partial model.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from bayesirl.validation import SBCSettings, run_sbc
from bayesirl.validation.controls import shift_control
from bayesirl.validation.partial import PartialSBC
from bayesirl.validation.ranks import ALPHA

REPLICATIONS = 40
SEED = 16
SETTINGS = SBCSettings(n_draws=39, draws=100, doublings=2, restarts=0)
PROBLEM = PartialSBC(warmup=120)
SHIFT_SD = 1.0


@pytest.fixture(scope="module")
def calibration():
    return run_sbc(PROBLEM, REPLICATIONS, seed=SEED, settings=SETTINGS)


def test_ranks_are_uniform(calibration):
    assert not any(r.short for r in calibration.replications)
    tests = calibration.tests()
    assert [t.expected for t in tests] == [10.0] * 3
    failed = [(t.name, t.p_value, t.counts.tolist()) for t in tests if not t.passed]
    assert failed == []


def test_shifted_draws_are_rejected(calibration):
    # Negative control on the same replications: each posterior moved up by one sd puts
    # Phi(1 - 0.674) = 0.63 of the replications in the lowest quarter (noncentrality 32.7,
    # power of the 1% test with 3 df 0.99; the same derivation as the grid's default run).
    # The spread's posterior is skewed, so its shift is checked to reject, not its power.
    p = np.diff(stats.norm.cdf(SHIFT_SD + stats.norm.ppf([0, 0.25, 0.5, 0.75, 1.0])))
    lam = REPLICATIONS * 4 * np.sum((p - 0.25) ** 2)
    assert stats.ncx2.sf(stats.chi2.isf(ALPHA, 3), 3, lam) > 0.98
    control = shift_control("shift", calibration, SHIFT_SD)
    assert control.ok, control
