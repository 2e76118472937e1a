"""``compare``: the paired difference and its standard error against ArviZ's own comparison
(``arviz.compare`` / ``arviz_stats.compare``, same PSIS-LOO values), the conclusion's
wording, and the refusal of runs on different data."""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest
from posterior.problems import small_mdp, two_feature_likelihood

import bayesirl as bi
from bayesirl import arviz_compat
from bayesirl.cli import main
from bayesirl.modelfit import compare
from bayesirl.modelfit.compare import Comparison, Row, conclusion
from bayesirl.modelfit.loo import EpisodeLoo

SAMPLING = {"chains": 2, "draws": 150, "warmup": 150, "backend": bi.Processes(1), "progress": False}


@cache
def runs():
    lik = two_feature_likelihood()
    soft = bi.sample(lik, seed=3, **SAMPLING)
    optimal = bi.sample(bi.BoltzmannLikelihood(lik.mdp, lik.demos, q_function="optimal"), seed=3,
                        **SAMPLING)
    return soft, optimal


def arviz_comparison(datas: dict):
    if arviz_compat.series() >= 1:
        import arviz_stats

        # 1.x rounds unless told not to, and reports differences as negative numbers.
        return arviz_stats.compare(datas, round_to="none")
    return arviz_compat._arviz0().compare(datas, ic="loo")


def test_difference_and_se_agree_with_arviz():
    soft, optimal = runs()
    ours = compare([soft, optimal], ["soft", "optimal"])
    theirs = arviz_comparison({"soft": soft.to_arviz(), "optimal": optimal.to_arviz()})
    for row in ours.rows:
        assert row.diff == pytest.approx(abs(theirs.loc[row.name, "elpd_diff"]), rel=1e-9,
                                         abs=1e-9)
        assert row.diff_se == pytest.approx(theirs.loc[row.name, "dse"], rel=1e-9, abs=1e-9)
    assert ours.rows[0].diff == 0.0 and ours.rows[1].diff > 0


def test_runs_on_other_data_are_refused():
    soft, _ = runs()
    lik = two_feature_likelihood()
    other = bi.simulate(lik.mdp, np.array([0.8, -0.5]), episodes=6, length=8, seed=2)
    elsewhere = bi.sample(bi.BoltzmannLikelihood(lik.mdp, other), seed=3, **SAMPLING)
    with pytest.raises(bi.InputError, match="other data"):
        compare([soft, elsewhere])
    # Negative control: the same data under another feature set is accepted.
    bigger = small_mdp(0, 3)
    feat = bi.TabularMDP(lik.mdp.transitions, np.concatenate(
        [lik.mdp.features, bigger.features[..., 2:]], axis=-1), discount=lik.mdp.discount,
        feature_names=["x", "y", "z"])
    extra = bi.sample(bi.BoltzmannLikelihood(feat, lik.demos), seed=3, **SAMPLING)
    assert len(compare([soft, extra]).rows) == 2


def _table(diff: float, se: float, n: int = 40) -> Comparison:
    loo = EpisodeLoo(-10.0, 1.0, 1.0, np.zeros(n), np.zeros(n))
    return Comparison([Row("a", "", loo, 0.0, 0.0), Row("b", "", loo, diff, se)], n)


def test_conclusion_says_no_clear_difference_within_two_se():
    assert conclusion(_table(3.9, 2.0)).startswith("No clear difference")
    # Negative control: beyond two standard errors the better run is named.
    assert conclusion(_table(4.1, 2.0)).startswith("a predicts left-out episodes better")
    assert "rough" in conclusion(_table(4.1, 2.0, n=10))


def test_command_needs_two_runs(tmp_path, capsys):
    assert main(["compare", str(tmp_path)]) == 2
    assert "at least two" in capsys.readouterr().err


def test_fixed_and_sampled_rationality_can_be_compared():
    soft, _ = runs()
    sampled = bi.sample(two_feature_likelihood(), seed=3, rationality=bi.LogNormal(0.0, 1.0),
                        pin={"x": 0.8}, **SAMPLING)
    table = compare([soft, sampled], ["fixed", "sampled"]).table()
    assert "rationality sampled" in table and "rationality 1" in table
