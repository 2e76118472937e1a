"""Simulation-based calibration (Talts et al. 2018) of the state-only and comparison
posteriors, small default run.

40 replications each of bayesirl.validation.evidence.StateOnlySBC (4 walks x 8 steps with no
action recorded, 5-state random MDP, two features) and ComparisonSBC (30 answers over a pool
of 12 episodes), w ~ N(0, 1), posterior by the real NUTS chain. L = 39 thinned draws, 4 bins
of 10 expected replications, uniformity at p > 0.01 per weight (bayesirl.validation.ranks).
Power, for scale (as in tests/validation/test_sbc_default.py): a bin probability off by
about 0.2 is detected. The slow suite (test_sbc_evidence_slow.py) runs 200 replications.
Measured in the session that wrote it (load average ~10 on 2 cores): 3.4 s per state-only
replication and 0.4 s per comparison replication in one process.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from bayesirl.validation import SBCSettings, run_sbc
from bayesirl.validation.controls import shift_control
from bayesirl.validation.evidence import ComparisonSBC, StateOnlySBC
from bayesirl.validation.ranks import ALPHA

REPLICATIONS = 40
SETTINGS = SBCSettings(n_draws=39, draws=100, doublings=2, restarts=0)
SHIFT_SD = 1.0


@pytest.fixture(scope="module", params=["state-only", "comparisons"])
def calibration(request):
    problem = StateOnlySBC() if request.param == "state-only" else ComparisonSBC()
    return run_sbc(problem, REPLICATIONS, seed=20, settings=SETTINGS, processes=2)


def test_ranks_are_uniform(calibration):
    assert not any(r.short for r in calibration.replications)
    tests = calibration.tests()
    assert [t.expected for t in tests] == [10.0] * 2
    failed = [(t.name, t.p_value, t.counts.tolist()) for t in tests if not t.passed]
    assert failed == []


def test_shifted_draws_are_rejected(calibration):
    # Negative control on the same replications: each posterior moved up by one sd puts
    # Phi(1 - 0.674) = 0.63 of the replications in the lowest quarter; noncentrality 32.7,
    # power of the 1% chi-square test with 3 df above 0.98 (derivation as in
    # tests/validation/test_sbc_default.py).
    p = np.diff(stats.norm.cdf(SHIFT_SD + stats.norm.ppf([0, 0.25, 0.5, 0.75, 1.0])))
    lam = REPLICATIONS * 4 * np.sum((p - 0.25) ** 2)
    assert stats.ncx2.sf(stats.chi2.isf(ALPHA, 3), 3, lam) > 0.98
    control = shift_control("shift", calibration, SHIFT_SD)
    assert control.ok, control
