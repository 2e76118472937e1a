"""Verdict words follow the interval, never the prior.

The definitions being checked are ours (``bayesirl.report.verdicts.WORDS``); what the tests
hold them to is the plain logical rule of the issue: an interval that contains zero is never
"determined", whatever the prior and the contraction. The property is checked over many
seeded random posteriors (Gaussian draws with random means, scales and correlations, some with
an exactly collinear pair), through the same functions the report uses, with a negative
control that the same code does say "determined" when the interval is narrow and away from
zero (so the property test could fail).
"""

from __future__ import annotations

import re
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.execution.backend import Processes
from bayesirl.report import ambiguity, combinations, verdicts
from bayesirl.report.weights import groups, mark_groups, weights_table
from bayesirl.scenarios import PARK_WEIGHTS, park_mdp

from .problems import mud2_report

N_POSTERIORS = 300


def _fake_posterior(draws: np.ndarray, prior_sd: float):
    """The attributes weights_table and the combination code read, around given draws."""
    f = draws.shape[1]
    return SimpleNamespace(weights=draws[None], feature_names=[f"w{k}" for k in range(f)],
                           model=SimpleNamespace(pin={}, prior=bi.Normal(0.0, prior_sd)))


def _random_draws(rng: np.random.Generator) -> np.ndarray:
    f = int(rng.integers(2, 6))
    mean = rng.normal(0.0, rng.choice([0.1, 1.0, 5.0]), size=f)
    scale = np.exp(rng.normal(np.log(0.5), 1.5, size=f))
    a = rng.normal(size=(f, f))
    corr = np.corrcoef(a @ a.T + 0.05 * np.eye(f))
    x = rng.multivariate_normal(mean, corr * np.outer(scale, scale), size=400)
    if rng.random() < 0.3:  # an entangled pair: w0 + w1 narrow, w0 - w1 as wide as a prior
        total, diff = x[:, 0] + x[:, 1], rng.normal(0.0, 5.0, size=400)
        x[:, 0], x[:, 1] = 0.5 * (total + diff), 0.5 * (total - diff)
    return x


def _contains_zero(interval) -> bool:
    return interval[0] <= 0.0 <= interval[1]


def test_no_interval_containing_zero_reads_as_determined():
    rng = np.random.default_rng(20261203)
    seen = {"determined": 0, "open": 0}
    for _ in range(N_POSTERIORS):
        draws = _random_draws(rng)
        post = _fake_posterior(draws, float(rng.choice([0.5, 5.0, 50.0])))
        level = float(rng.choice([0.5, 0.8, 0.9, 0.95]))
        tol = None if rng.random() < 0.5 else float(np.exp(rng.normal(-1.0, 1.5)))
        table = weights_table(post, level, tolerance=tol)
        dirs = combinations.directions(draws, post.feature_names, np.full(draws.shape[1],
                                       25.0), level, tol)
        found = groups(post, dirs, [], level, tolerance=tol)
        mark_groups(table, found)
        rows = table + dirs + [c for g in found for c in g["identified"]]
        for row in rows:
            if _contains_zero(row["interval"]):
                assert row["verdict"] != verdicts.DETERMINED, row
                seen["open"] += 1
            elif row["verdict"] == verdicts.DETERMINED:
                seen["determined"] += 1
    # Non-vacuous: both kinds occur many times among the random posteriors.
    assert seen["determined"] > 50 and seen["open"] > 50, seen


def test_negative_control_a_narrow_interval_away_from_zero_is_determined():
    rng = np.random.default_rng(1)
    draws = rng.normal([3.0, -2.0], [0.1, 0.1], size=(2000, 2))
    table = weights_table(_fake_posterior(draws, 5.0), 0.9)
    assert [r["verdict"] for r in table] == [verdicts.DETERMINED] * 2
    # ... and the same spread straddling zero is not, with or without a tolerance.
    table = weights_table(_fake_posterior(draws - [3.0, -2.0], 5.0), 0.9)
    assert [r["verdict"] for r in table] == [verdicts.SIGN_OPEN] * 2
    table = weights_table(_fake_posterior(draws - [3.0, -2.0], 5.0), 0.9, tolerance=0.5)
    assert [r["verdict"] for r in table] == [verdicts.NEGLIGIBLE] * 2


@pytest.mark.parametrize(("lo", "hi", "tol", "word"), [
    (1.0, 2.0, None, verdicts.DETERMINED),   # ends a factor of 2 apart: the boundary
    (1.0, 2.01, None, verdicts.SIGN_KNOWN),
    (-4.0, -2.0, None, verdicts.DETERMINED),
    (-0.1, 5.0, None, verdicts.SIGN_OPEN),
    (0.0, 5.0, None, verdicts.SIGN_OPEN),    # touching zero does not exclude it
    (0.1, 5.0, 3.0, verdicts.DETERMINED),    # half-width 2.45 <= tolerance 3
    (0.1, 5.0, 2.0, verdicts.SIGN_KNOWN),
    (-0.2, 0.3, 0.3, verdicts.NEGLIGIBLE),
    (-0.2, 0.4, 0.3, verdicts.SIGN_OPEN),
])
def test_value_verdict_table(lo, hi, tol, word):
    assert verdicts.value_verdict(lo, hi, tol) == word


@pytest.mark.parametrize("bad", [0, -1.0, float("nan"), float("inf"), "x"])
def test_tolerance_is_validated(bad):
    with pytest.raises(bi.InputError, match="tolerance"):
        verdicts.check_tolerance(bad)


def test_wide_prior_and_few_data_determine_nothing():
    # Two walks of 15 steps (30 steps for 4 features) under the default Normal(0, 5) prior:
    # every interval is several units wide, so nothing may read as determined, although the
    # contraction against the prior sd of 5 is large (the old verdicts said "pinned down").
    mdp = park_mdp()
    # The bundled example's walks (all from the top-left corner), first two only.
    demos = bi.simulate(mdp, PARK_WEIGHTS, episodes=40, length=15, seed=1, start=0)
    few = bi.Demonstrations(demos.episodes[:2])
    post = bi.sample(bi.BoltzmannLikelihood(mdp, few), chains=2, draws=500, warmup=300,
                     seed=0, progress=False, backend=Processes(1))
    report = ambiguity(post)
    assert all(r["verdict"] != verdicts.DETERMINED for r in report.weights), report.weights
    assert "the demonstrations determine" not in report.verdict
    assert "No weight is determined by these data on its own." in report.verdict
    # Not vacuous: the contraction alone would have called most of them settled.
    assert sum(r["contraction"] > 0.9 for r in report.weights) >= 2


def test_collinear_pair_sentence_names_the_sum_and_its_interval():
    # mud2 duplicates mud: only w_mud + w_mud2 enters the likelihood (see test_directions).
    report = mud2_report()
    group = [g for g in report.groups if set(g["features"]) == {"mud", "mud2"}]
    assert len(group) == 1, report.groups
    (combo,) = group[0]["identified"]
    assert combo["combination"] == {"mud": 1.0, "mud2": 1.0}
    # The printed interval is the central interval of w_mud + w_mud2 over the draws.
    s = report.posterior.weights[..., 0].ravel() + report.posterior.weights[..., 1].ravel()
    lo, hi = np.quantile(s, [0.05, 0.95])
    text = f"mud + mud2 = {np.median(s):.3g} [{lo:.3g}, {hi:.3g}]"
    assert text in group[0]["text"] and text in report.verdict
    assert "mud and mud2 separately: not identified by these data" in report.verdict
    verdict_of = {r["feature"]: r["verdict"] for r in report.weights}
    assert verdict_of["mud"] == verdict_of["mud2"] == verdicts.COMBINATION_ONLY
    # Neither is in a ratio: their split is the prior's.
    for r in report.derived["ratios"]:
        assert {"mud", "mud2"}.isdisjoint({r["numerator"], r["denominator"]}), r


def test_every_verdict_word_is_defined_in_the_readme():
    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    readme = " ".join(readme.split())  # the README wraps its lines
    for word, definition in verdicts.WORDS.items():
        assert re.search(rf"\*{re.escape(word)}\*: {re.escape(definition)}", readme), word

