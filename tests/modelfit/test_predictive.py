"""Posterior predictive checks on one seeded data set each way (the rates over many data
sets are in test_misfit_slow.py), the report section, and demonstrator groups."""

from __future__ import annotations

from functools import cache

import numpy as np
from groups.problems import three_demonstrators

import bayesirl as bi
from bayesirl.modelfit.predictive import absorbing_states, predictive_check
from bayesirl.report import predictive as section
from bayesirl.scenarios.park import PARK_WEIGHTS, park_mdp
from modelfit.park_data import simulate_from, without

SAMPLING = {"chains": 2, "draws": 200, "warmup": 200, "backend": bi.Processes(1), "progress": False}


@cache
def park_fits():
    mdp = park_mdp()
    demos = simulate_from(mdp, "soft", PARK_WEIGHTS, seed=7)
    full = bi.sample(bi.BoltzmannLikelihood(mdp, demos), seed=1, **SAMPLING)
    reduced = bi.sample(bi.BoltzmannLikelihood(without(mdp, "water"), demos), seed=1,
                        **SAMPLING)
    return full, reduced


def test_missing_feature_is_flagged_and_the_right_model_is_not():
    full, reduced = park_fits()
    bad = predictive_check(reduced, replicates=100)
    # Here the walks reach the fountain (40%..) far more often than the water-less model's
    # replicates: the outcome check catches it.
    assert bad.flagged
    # Negative control: the model that generated the data passes.
    good = predictive_check(full, replicates=100)
    assert good.flagged == []


def test_section_names_where_the_model_misses():
    _, reduced = park_fits()
    check = predictive_check(reduced, replicates=100)

    class Report:  # the renderer reads plain attributes
        predictive = check
        posterior = reduced

    html = section.render(Report)
    assert 'id="model-fit"' in html and "usually" in html and "<img" in html
    assert section.render(type("Empty", (), {})) == ""


def test_absorbing_states_of_the_park():
    absorbing = absorbing_states(park_mdp())
    assert absorbing.sum() == 1 and absorbing[-1]  # the fountain, bottom-right


def test_groups_use_each_demonstrators_reward():
    post = bi.sample(three_demonstrators(), pooling="partial", seed=2, **SAMPLING)
    check = predictive_check(post, replicates=40)
    assert check.replicates == 40 and set(check.p_values) >= {"choices", "feature:x"}
    assert np.all(check.visits >= 0)
