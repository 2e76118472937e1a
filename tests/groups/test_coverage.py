"""The arithmetic and figure of the coverage study (the study itself: test_coverage_slow.py)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from bayesirl.validation.coverage import covered
from bayesirl.validation.coverage_plot import coverage_figure


def test_uniform_ranks_cover_exactly_at_the_level():
    # Talts et al. 2018: a calibrated rank is uniform on 0..L; [x_(5), x_(95)] of L = 99
    # sorted draws holds the truth for ranks 5..94, 90 of the 100 values.
    ranks = np.arange(100)
    assert covered(ranks, 99, 0.9).sum() == 90
    assert covered(ranks, 99, 0.8).sum() == 80
    # negative control: ranks piled at the ends (a posterior too narrow) are not covered
    assert covered(np.array([0, 1, 4, 95, 99]), 99, 0.9).sum() == 0


@given(st.integers(0, 99))
def test_covered_agrees_with_the_sorted_draws(rank):
    # a truth placed at rank r among 99 draws 0..98 (truth = r - 0.5) against the interval
    # [x_(5), x_(95)] computed directly (1-based order statistics)
    draws = np.arange(99.0)
    truth = rank - 0.5
    inside = draws[4] <= truth <= draws[94]
    assert covered(np.array([rank]), 99, 0.9)[0] == inside


def test_level_must_split_the_ranks_evenly():
    with pytest.raises(ValueError):
        covered(np.arange(100), 99, 0.95)  # 100 * 0.05 / 2 = 2.5 ranks per tail


def test_figure_draws_from_a_record():
    runs = [{"truth": [0.1, 0.1, t], "intervals": [[0, 1], [0.3, 0.4], [0, 2]]}
            for t in (0.2, 0.9)]
    models = {n: {"covered": 1, "of": 2, "rate": 0.5, "ci95": [0.01, 0.99]}
              for n in ("mu, partial", "mu, pooled", "spread, partial")}
    fig = coverage_figure({"replications": 2, "level": 0.9, "models": models,
                           "names": list(models), "runs": runs})
    assert len(fig.axes) == 2
