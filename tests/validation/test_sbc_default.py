"""Simulation-based calibration of bayesirl's posterior in the default run (small but real).

Talts, Betancourt, Simpson, Vehtari & Gelman (2018): with truths drawn from the prior, data
simulated from them and the posterior sampled exactly, the ranks of the truths among L
independent posterior draws are uniform. 40 replications on the 16-state calibration grid
with two features and a known rationality; every stage is the real one (simulate,
BoltzmannLikelihood, bayesirl.sample with NUTS). Deliberately wrong posteriors from the same
machinery must be rejected.

Power, for scale: with 40 replications in 4 bins (10 expected per bin) the test at p = 0.01
detects a bin probability off by about 0.2 (e.g. 0.45 instead of 0.25); the slow suite and
``reports/validation.md`` run 200 replications in 20 bins.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from bayesirl.validation import GridSBC, SBCSettings, run_sbc
from bayesirl.validation.controls import shift_control
from bayesirl.validation.plots import rank_figure, save_png
from bayesirl.validation.ranks import ALPHA
from bayesirl.validation.report import render

REPLICATIONS = 40
SEED = 0
# L = 39: 40 rank values, 4 bins of 10 values, 10 expected replications per bin. 2 chains of
# 100 draws after 150 warmup iterations measured a smallest ESS of 50-250 over parameters,
# above the ~40 that thinning to 39 draws needs (stride ceil(200 / ESS) over 19 gaps < 100).
SETTINGS = SBCSettings(n_draws=39, draws=100, doublings=2, restarts=0)
PROBLEM = GridSBC(n_features=2, rationality=1.0, warmup=150)
SHIFT_SD = 1.0
# Analyst assumes rationality 2 where the demonstrator had 1: the posterior of beta * w is
# right, so the weights' posterior sits near w / 2 and the truths land in the outer bins.
WRONG_RATIONALITY = 2.0


@pytest.fixture(scope="module")
def calibration():
    return run_sbc(PROBLEM, REPLICATIONS, seed=SEED, settings=SETTINGS)


def test_ranks_are_uniform(calibration):
    # The premise: every replication was thinned to L draws spaced by the ESS.
    assert not any(r.short for r in calibration.replications)
    tests = calibration.tests()
    assert [t.expected for t in tests] == [10.0, 10.0]
    failed = [(t.name, t.p_value, t.counts.tolist()) for t in tests if not t.passed]
    assert failed == []


def test_shifted_draws_are_rejected(calibration):
    # Negative control on the same replications: move each posterior up by one sd. For a
    # near-normal posterior the lowest quarter of ranks then holds Phi(1 - 0.674) = 0.63 of
    # the replications instead of 0.25 (and the others 0.21, 0.11, 0.05): noncentrality
    # 40 * 4 * sum (p - 1/4)^2 = 32.7, power of the 1% test with 3 df 0.99 (ncx2 below).
    p = np.diff(stats.norm.cdf(SHIFT_SD + stats.norm.ppf([0, 0.25, 0.5, 0.75, 1.0])))
    lam = REPLICATIONS * 4 * np.sum((p - 0.25) ** 2)
    assert stats.ncx2.sf(stats.chi2.isf(ALPHA, 3), 3, lam) > 0.98
    control = shift_control("shift", calibration, SHIFT_SD)
    assert control.ok, control


def test_posterior_with_the_wrong_rationality_is_rejected():
    # Negative control through the real sampler: a posterior that is wrong for a reason a user
    # could meet (a mis-set known rationality).
    wrong = GridSBC(n_features=2, rationality=1.0, warmup=150,
                    sampler_rationality=WRONG_RATIONALITY)
    result = run_sbc(wrong, REPLICATIONS, seed=SEED, settings=SETTINGS)
    assert all(t.p_value < ALPHA for t in result.tests()), result.tests()


def test_report_and_histograms_are_written(calibration, tmp_path):
    png = save_png(rank_figure(calibration, title="default"), tmp_path / "validation_x.png")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    text = render({"x": ("default run", calibration, png)}, [], REPLICATIONS, 1.0)
    for t in calibration.tests():
        assert f"| default run | {t.name} | {t.statistic:.1f} | 3 | {t.p_value:.3f} |" in text
    assert "(validation_x.png)" in text
    assert [p.name for p in tmp_path.iterdir()] == ["validation_x.png"]  # no temp files left
