"""Coverage of the pooled (cut) and plug-in 90% intervals when the dynamics are learned from
few logged transitions (issue 21). Numbers of the measured run: README, "Learned dynamics".

Run: ``python -m pytest tests/dynamics/test_coverage_slow.py -m slow`` (9 fits per
replication, ~35-55 s each on a loaded 2-core machine; ``BAYESIRL_COVERAGE_REPS`` sets the
number of replications, default 100). ``python -m dynamics.run_coverage OUT N`` (from
``tests/``) runs the same replications and keeps each result as it comes.
"""

from __future__ import annotations

import os
from functools import cache

import numpy as np
import pytest
from scipy import stats

from .coverage import LEVEL, replicate

REPS = int(os.environ.get("BAYESIRL_COVERAGE_REPS", "100"))


@cache
def hits() -> np.ndarray:
    """``(REPS, 4)``: pooled hits of the two weights, then plug-in hits."""
    return np.array([np.concatenate(replicate(r)) for r in range(REPS)])


@pytest.mark.slow
def test_pooled_intervals_cover_at_the_nominal_rate():
    pooled = hits()[:, :2]
    n = pooled.size  # 2 weights per replication, counted as independent trials
    # Binomial error: the exact two-sided 99% band of Binomial(n, 0.9).
    # Measured run: 168 of 200, exactly the band's lower end (168-190): a pass by a hair,
    # with the 95% interval of the rate, 78-89%, below 90% (README).
    lo, hi = stats.binom.ppf([0.005, 0.995], n, LEVEL)
    assert lo <= pooled.sum() <= hi, (pooled.sum(), n, lo, hi)


@pytest.mark.slow
@pytest.mark.xfail(strict=True, reason="measured run (README): the plug-in intervals did not "
                   "cover less often (5 intervals held only by the pooled, 4 only by the "
                   "plug-in); cause not yet found, the issue stays open")
def test_plug_in_intervals_cover_less_often():
    # McNemar's exact test on the discordant pairs (one-sided 1%): the plug-in misses where
    # the pooled interval holds more often than the reverse. In the measured run (README)
    # (100 replications) it failed: 5 intervals held only by the pooled, 4 only by the
    # plug-in, p = 0.5. See the README's numbers.
    pooled, plug = hits()[:, :2], hits()[:, 2:]
    only_pooled = int((pooled & ~plug).sum())
    only_plug = int((plug & ~pooled).sum())
    p = stats.binomtest(only_pooled, max(only_pooled + only_plug, 1), 0.5,
                        alternative="greater").pvalue
    assert p < 0.01, (only_pooled, only_plug, p)
