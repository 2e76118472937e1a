"""Simulation-based calibration at discount 0.99 (slow suite).

Talts, Betancourt, Simpson, Vehtari & Gelman (2018): ranks of prior-drawn truths among L
posterior draws are uniform when the posterior is right. 200 replications on the 16-state
calibration grid with three features, known rationality, discount 0.99 (the package's own
calibration runs use 0.9), L = 99, 20 bins; each parameter passes at p > 0.01. The negative
control shifts the draws by half a posterior sd (power 0.996, derived in
tests/validation/test_sbc_slow.py).
"""

from __future__ import annotations

import pytest

from bayesirl.validation import GridSBC, run_sbc
from bayesirl.validation.controls import shift_control
from bayesirl.validation.report import SETTINGS

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def calibration():
    return run_sbc(GridSBC(n_features=3, rationality=1.0, discount=0.99), 200, seed=9901,
                   settings=SETTINGS)


def test_ranks_are_uniform_at_0_99(calibration):
    assert not any(r.short for r in calibration.replications), "thinning premise failed"
    failed = [(t.name, t.p_value, t.counts.tolist())
              for t in calibration.tests() if not t.passed]
    assert failed == []
    assert {m for r in calibration.replications for m in r.restarts} == set()


def test_shifted_draws_are_rejected_at_0_99(calibration):
    assert shift_control("shift", calibration, by=0.5).ok
