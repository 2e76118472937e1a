"""Simulation-based calibration of the state-only, comparison and sampled-judge posteriors,
200 replications each (slow suite; see test_sbc_evidence.py for the first two models and the
default run).

L = 99 thinned draws in 20 bins (10 expected per bin), uniformity at p > 0.01 per parameter
(bayesirl.validation.ranks; Talts et al. 2018). The sampled-judge problem
(bayesirl.validation.evidence.JudgeSBC) ranks w, log beta_c and log nu of the real
PosteriorModel with the comparison term's LogNormal priors and Davidson's tie model.
Expected cost, measured on a loaded 2-core machine: ~2.2 s CPU per sampled-judge replication
(~8 minutes for 200), ~12 minutes of CPU for the state-only problem, ~2 for the comparisons.
"""

from __future__ import annotations

import pytest

from bayesirl.validation import SBCSettings, run_sbc
from bayesirl.validation.evidence import ComparisonSBC, JudgeSBC, StateOnlySBC

pytestmark = pytest.mark.slow


@pytest.mark.parametrize("problem", [ComparisonSBC(warmup=300), JudgeSBC(warmup=300),
                                     StateOnlySBC(warmup=300)],
                         ids=["comparisons", "sampled-judge", "state-only"])
def test_ranks_are_uniform_200(problem):
    result = run_sbc(problem, 200, seed=21, settings=SBCSettings(n_draws=99, draws=300))
    assert not any(r.short for r in result.replications)
    failed = [(t.name, t.p_value, t.counts.tolist()) for t in result.tests() if not t.passed]
    print({t.name: round(t.p_value, 3) for t in result.tests()},
          f"{sum(r.divergences for r in result.replications)} divergences",
          f"{result.wall_time:.0f} s")
    assert failed == []
