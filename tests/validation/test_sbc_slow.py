"""Simulation-based calibration at full size (slow): the runs behind reports/validation.md.

Talts, Betancourt, Simpson, Vehtari & Gelman (2018). 200 replications each on the 16-state
calibration grid with three features, L = 99 thinned draws, 20 bins (10 expected per bin),
with seeds different from the report's so that the two are independent evidence:

* rationality known;
* rationality unknown (LogNormal(0, 0.5) prior), the ``goal`` weight pinned to 1 and not
  drawn.

Each parameter passes at p > 0.01 (bayesirl.validation.ranks.ALPHA); a correct posterior
fails one of the three with probability about 3%. Negative controls that run fast are in
test_sbc_default.py, test_runner.py and test_ranks.py; this file adds one at full size.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from bayesirl.validation import run_sbc
from bayesirl.validation.controls import shift_control
from bayesirl.validation.ranks import ALPHA
from bayesirl.validation.report import SETTINGS, standard_problems

REPLICATIONS = 200
SEEDS = {"fixed": 101, "unknown": 102}
SHIFT_SD = 0.5

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module", params=sorted(SEEDS))
def calibration(request):
    title, problem = standard_problems()[request.param]
    return request.param, run_sbc(problem, REPLICATIONS, seed=SEEDS[request.param],
                                  settings=SETTINGS)


def test_ranks_are_uniform_for_every_parameter(calibration):
    key, result = calibration
    assert not any(r.short for r in result.replications), "thinning premise failed"
    tests = result.tests()
    assert result.bins() == 20 and all(t.expected == 10.0 for t in tests)
    failed = [(t.name, t.p_value, t.counts.tolist()) for t in tests if not t.passed]
    assert failed == [], key


def test_only_the_known_rationality_underflow_needed_restarts(calibration):
    # Restarts exist for the bug in test_known_bugs.py, which needs a sampled rationality.
    key, result = calibration
    messages = {m for r in result.replications for m in r.restarts}
    if key == "fixed":
        assert messages == set()
    else:
        assert messages <= {"InputError: rationality: must be a positive finite number; got 0.0"}


def test_shifted_draws_are_rejected_at_full_size(calibration):
    # Negative control: half a posterior sd is enough at 200 replications in 20 bins. For a
    # near-normal posterior bin k gets p_k = Phi(0.5 + Phi^-1(k/20)) - Phi(0.5 +
    # Phi^-1((k-1)/20)): noncentrality 200 * 20 * sum (p - 1/20)^2 = 53.6, power of the 1%
    # test with 19 df 0.996 (ncx2 below).
    key, result = calibration
    p = np.diff(stats.norm.cdf(SHIFT_SD + stats.norm.ppf(np.linspace(0.0, 1.0, 21))))
    lam = REPLICATIONS * 20 * np.sum((p - 0.05) ** 2)
    assert stats.ncx2.sf(stats.chi2.isf(ALPHA, 19), 19, lam) > 0.99
    control = shift_control("shift", result, by=SHIFT_SD)
    assert control.ok, (key, control)
