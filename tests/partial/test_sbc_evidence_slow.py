"""Simulation-based calibration of the state-only and comparison posteriors, 200
replications each (slow suite; see test_sbc_evidence.py for the model and the default run).

L = 99 thinned draws in 20 bins (10 expected per bin), uniformity at p > 0.01 per weight.
Not run in the session that wrote it (the machine was shared); expected cost from the default
run's timing: ~12 minutes of CPU for the state-only problem, ~2 for the comparisons.
"""

from __future__ import annotations

import pytest

from bayesirl.validation import SBCSettings, run_sbc
from bayesirl.validation.evidence import ComparisonSBC, StateOnlySBC

pytestmark = pytest.mark.slow


@pytest.mark.parametrize("problem", [StateOnlySBC(warmup=300), ComparisonSBC(warmup=300)],
                         ids=["state-only", "comparisons"])
def test_ranks_are_uniform_200(problem):
    result = run_sbc(problem, 200, seed=21, settings=SBCSettings(n_draws=99, draws=300))
    assert not any(r.short for r in result.replications)
    failed = [(t.name, t.p_value, t.counts.tolist()) for t in result.tests() if not t.passed]
    assert failed == []
