"""Simulation-based calibration of the state-only, comparison and sampled-judge posteriors,
200 replications each (slow suite; see test_sbc_evidence.py for the first two models and the
default run).

L = 99 thinned draws in 20 bins (10 expected per bin), uniformity at p > 0.01 per parameter
(bayesirl.validation.ranks; Talts et al. 2018). The sampled-judge problem
(bayesirl.validation.evidence.JudgeSBC) ranks w, log beta_c and log nu of the real
PosteriorModel with the comparison term's LogNormal priors and Davidson's tie model.
Run once (nice 19, 2 worker processes, a shared 2-core machine), all three passed, 0
divergences and no short replication: comparisons p = 0.91 (w[0]), 0.383 (w[1]), 1855 s wall;
sampled judge p = 0.697, 0.772, 0.237 (log beta_c), 0.839 (log nu), 1421 s; state-only
p = 0.735, 0.924, 183 s (the machine had gone quiet). The wall times mostly measure the load.
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
