"""Coverage of the pooled (cut) and plug-in 90% intervals when the dynamics are learned from
few logged transitions (issue 21). Numbers of the measured run: README, "Learned dynamics".

Run: ``python -m pytest tests/dynamics/test_coverage_slow.py -m slow`` (about 9 fits per
replication; ``BAYESIRL_COVERAGE_REPS`` sets the number of replications, default 100).
"""

from __future__ import annotations

import os

import numpy as np
import pytest
from scipy import stats

from .coverage import LEVEL, replicate

REPS = int(os.environ.get("BAYESIRL_COVERAGE_REPS", "100"))


@pytest.mark.slow
def test_pooled_intervals_cover_at_the_nominal_rate_and_plug_in_ones_less():
    hits = np.array([np.concatenate(replicate(r)) for r in range(REPS)])  # (REPS, 4)
    pooled, plug = hits[:, :2], hits[:, 2:]
    n = pooled.size  # 2 weights per replication (treated as independent: conservative
    # enough here, since the two weights' intervals are not strongly coupled)
    # Binomial error (exact two-sided 99% band of Binomial(n, 0.9)): the pooled hit count
    # must fall inside it.
    lo, hi = stats.binom.ppf([0.005, 0.995], n, LEVEL)
    assert lo <= pooled.sum() <= hi, (pooled.sum(), n, lo, hi)
    # The plug-in covers less often than the pooled intervals on the same replications
    # (McNemar's exact test on the discordant pairs, one-sided 1%).
    only_pooled = int((pooled & ~plug).sum())
    only_plug = int((plug & ~pooled).sum())
    p = stats.binomtest(only_pooled, only_pooled + only_plug, 0.5,
                        alternative="greater").pvalue
    assert p < 0.01, (only_pooled, only_plug, p)
