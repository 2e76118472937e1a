"""A several-demonstrator Posterior: its draws, files, diagnostics and summary record.

The numbers in the record are checked against numpy on the stored draws (the record must
report the draws, nothing else); files round-trip through plain arviz NetCDF.
"""

from __future__ import annotations

from functools import cache

import arviz as az
import numpy as np
import pytest
from posterior.problems import PRIOR

import bayesirl as bi
from bayesirl.execution import checkpoint
from bayesirl.execution.backend import Processes
from bayesirl.posterior import storage
from bayesirl.posterior.group_summary import (
    demonstrator_summary,
    heterogeneity,
    new_demonstrator,
    render,
    verdict_sentence,
)
from bayesirl.posterior.groups import GroupModel

from .problems import fresh, three_demonstrators

RUN = dict(chains=2, draws=60, warmup=60, seed=3, progress=False, backend=Processes(1))


@cache
def posterior(pooling: str) -> bi.Posterior:
    return bi.sample(fresh(three_demonstrators()), PRIOR, pooling=pooling, **RUN)


@pytest.mark.parametrize("pooling", ["partial", "separate"])
def test_draws_are_the_models_transform_of_theta(pooling):
    p = posterior(pooling)
    g = p.groups
    assert g["demonstrators"] == ["ana", "ben", "cai"] and g["pooling"] == pooling
    assert g["demonstrator_weights"].shape == (2, 60, 3, 2)
    if pooling == "partial":
        assert g["spread"].shape == (2, 60, 2) and np.all(g["spread"] > 0)
    else:  # no population: the headline is the plain mean of the three
        assert "spread" not in g
        assert np.allclose(p.weights, g["demonstrator_weights"].mean(axis=2))
    names = p.param_names
    post = p.to_arviz().posterior
    sizes = sum(post[v].size for v in post.data_vars) // (2 * 60)
    assert len(names) == len(p.diagnostics.rhat) == sizes


@pytest.mark.parametrize("pooling", ["partial", "separate"])
def test_file_round_trip(tmp_path, pooling):
    p = posterior(pooling)
    path = p.save(tmp_path / "post.nc")
    plain = az.from_netcdf(str(path))  # readable without bayesirl
    assert list(plain.posterior["demonstrator"].values) == ["ana", "ben", "cai"]
    q = bi.Posterior.load(path)
    assert isinstance(q.model, GroupModel) and q.model.pooling == p.model.pooling
    for key, value in p.groups.items():
        assert np.array_equal(np.asarray(q.groups[key]), np.asarray(value)), key
    assert q.model.likelihood.demos.demonstrators == p.model.likelihood.demos.demonstrators
    settings = {"draws": 1}
    assert (checkpoint.identity(q.model, settings, 0, 1)
            == checkpoint.identity(p.model, settings, 0, 1))
    assert "demo_demonstrators" in storage.problem_arrays(p.model)[0]


def test_summary_record_reports_the_draws():
    p = posterior("partial")
    rec = demonstrator_summary(p, level=0.8)
    x = p.groups["spread"][..., 1]
    assert rec["spread"]["y"]["mean"] == pytest.approx(x.mean(), rel=1e-12)
    assert rec["spread"]["y"]["lower"] == pytest.approx(np.percentile(x, 10), rel=1e-12)
    w = p.groups["demonstrator_weights"][..., 2, 0]
    assert rec["demonstrators"]["cai"]["weights"]["x"]["upper"] == pytest.approx(
        np.percentile(w, 90), rel=1e-12)
    assert sum(r["steps"] for r in rec["demonstrators"].values()) == 54
    assert rec["population"]["x"]["sd"] == pytest.approx(p.weights[..., 0].std(ddof=1))
    text = render(rec)
    assert "population mean" in text and "cai (18 steps)" in text
    assert "partial pooling of 3 demonstrators" in p.summary()
    assert demonstrator_summary(bi.sample(fresh(three_demonstrators()), PRIOR, **RUN)) is None


def test_heterogeneity_verdicts_follow_the_interval():
    # Synthetic spread draws (chains=1, draws=2000): all above, all below, straddling the
    # negligible value 0.1; the verdict reads the 90% equal-tailed interval only.
    rng = np.random.default_rng(0)
    spread = np.stack([rng.uniform(0.2, 0.6, 2000), rng.uniform(0.0, 0.05, 2000),
                       rng.uniform(0.0, 0.6, 2000), np.zeros(2000)], axis=-1)[None]
    v = heterogeneity(spread, ["a", "b", "c", "d"], pinned=("d",))
    assert v == {"a": "differ", "b": "agree", "c": "unclear", "d": "pinned"}
    assert verdict_sentence(v) == ("demonstrators clearly differ on a; they agree (within "
                                   "0.1) on b; the data cannot tell whether they differ on c")
    # the same draws judged against a larger negligible value: a is no longer "differ"
    assert heterogeneity(spread, ["a", "b", "c", "d"], negligible=0.3)["a"] == "unclear"


def test_new_demonstrator_has_the_population_law():
    # Law of total variance (iid synthetic posterior draws, so the MCSE is sd / sqrt(n)):
    # E[w_new] = E[mu], Var[w_new] = Var[mu] + E[tau^2]. Negative control: without the
    # spread term the variance is Var[mu] alone, off by E[tau^2] = 0.25 (z ~ 70).
    rng = np.random.default_rng(1)
    n = 20000
    mu, tau = rng.normal(0.5, 0.3, (1, n, 1)), np.full((1, n, 1), 0.5)
    new = new_demonstrator(mu, tau, seed=7)
    assert abs(new.mean() - 0.5) < 4 * np.sqrt(0.09 + 0.25) / np.sqrt(n)
    var_se = np.sqrt(2 / n) * (0.09 + 0.25)  # sd of a normal sample variance
    assert abs(new.var() - 0.34) < 4 * var_se
    assert abs(mu.var() - 0.34) > 4 * var_se


def test_record_has_the_verdict_and_the_new_demonstrator():
    rec = demonstrator_summary(posterior("partial"))
    assert set(rec["heterogeneity"]["verdicts"]) == {"x", "y"}
    assert rec["new_demonstrator"]["x"]["sd"] > rec["population"]["x"]["sd"]
    assert "new_demonstrator" not in demonstrator_summary(posterior("separate"))


def test_forest_figure_has_a_panel_per_feature():
    from bayesirl.report.forest import ALONE, forest_figure

    rec = demonstrator_summary(posterior("partial"))
    fig = forest_figure(rec)
    assert len(fig.axes) == 2
    labels = [t.get_text() for t in fig.axes[0].get_yticklabels()]
    assert labels == ["new demonstrator", "cai", "ben", "ana"]
    # shrinkage: each demonstrator's alone interval is drawn beside the pooled one, at the
    # record's numbers (the new demonstrator has none)
    grey = [ln for ln in fig.axes[0].lines if ln.get_color() == ALONE and len(ln.get_xdata()) == 2]
    assert sorted(tuple(ln.get_xdata()) for ln in grey) == sorted(
        (r["alone"]["x"]["lower"], r["alone"]["x"]["upper"]) for r in rec["demonstrators"].values())
    assert "alone" not in demonstrator_summary(posterior("separate"))["demonstrators"]["ana"]


def test_own_rationality_run_round_trips(tmp_path):
    from bayesirl.posterior.groups import Pooling

    pooling = Pooling("partial", rationality_spread=bi.HalfNormal(0.5))
    p = bi.sample(fresh(three_demonstrators()), PRIOR, pooling=pooling,
                  rationality=bi.LogNormal(0.0, 0.5), pin={"x": 1.0}, **RUN)
    own = p.groups["demonstrator_rationality"]
    assert own.shape == (2, 60, 3) and np.all(own > 0)
    assert len(p.param_names) == len(p.diagnostics.rhat)
    assert p.param_names[-3:] == ("rationality[ana]", "rationality[ben]", "rationality[cai]")
    q = bi.Posterior.load(p.save(tmp_path / "post.nc"))
    assert q.model.pooling == pooling
    assert np.array_equal(q.groups["demonstrator_rationality"], own)
    rec = demonstrator_summary(p, level=0.8, with_alone=False)
    assert rec["demonstrators"]["ben"]["rationality"]["upper"] == pytest.approx(
        np.percentile(own[..., 1], 90), rel=1e-12)
    assert "rationality of each demonstrator" in render(rec)
