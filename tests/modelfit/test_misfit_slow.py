"""Misspecification is caught, and soft and optimal demonstrators are told apart (slow).

Data sets are simulated from the park scenario (bayesirl/scenarios/park.py, invented
numbers) by a demonstrator we know, so the right answer is known (simulation studies of
posterior predictive checks and of LOO comparison, as in Gelman, Meng & Stern 1996 and
Vehtari, Gelman & Gabry 2017). The thresholds are the issue's (>= 90% flagged when a valued
feature is missing, <= 10% when the model is right); the measured rates are printed and
stated in the README, whatever they are.
"""

from __future__ import annotations

import pytest

import bayesirl as bi
from bayesirl.modelfit import compare
from bayesirl.modelfit.predictive import predictive_check
from bayesirl.scenarios.park import PARK_WEIGHTS, park_mdp
from modelfit.park_data import simulate_from, without

# 100 data sets: a rate's binomial standard error is then at most 5 points (sqrt(.25/100));
# with 20 (the first study) it was up to 11. About 7 s per data set on one core.
DATA_SETS = 100
SAMPLING = {"chains": 2, "draws": 300, "warmup": 200, "backend": bi.Processes(1), "progress": False,
            "prior": bi.Normal(0.0, 5.0)}


@pytest.mark.slow
def test_missing_feature_is_flagged_and_compare_prefers_the_full_model():
    full_mdp = park_mdp()
    reduced_mdp = without(full_mdp, "water")
    flagged_full = flagged_reduced = prefers_full = clear_full = 0
    for k in range(DATA_SETS):
        demos = simulate_from(full_mdp, "soft", PARK_WEIGHTS, seed=100 + k)
        full = bi.sample(bi.BoltzmannLikelihood(full_mdp, demos), seed=k, **SAMPLING)
        reduced = bi.sample(bi.BoltzmannLikelihood(reduced_mdp, demos), seed=k, **SAMPLING)
        flagged_full += bool(predictive_check(full, seed=k).flagged)
        flagged_reduced += bool(predictive_check(reduced, seed=k).flagged)
        c = compare([full, reduced], ["full", "reduced"])
        prefers_full += c.rows[0].name == "full"
        clear_full += c.rows[0].name == "full" and c.rows[1].diff > 2 * c.rows[1].diff_se
    n = DATA_SETS
    print(f"\nmissing feature flagged {flagged_reduced}/{n}; well-specified flagged "
          f"{flagged_full}/{n}; compare prefers full {prefers_full}/{n} "
          f"(clearly, > 2 se: {clear_full}/{n})")
    assert flagged_reduced >= 0.9 * n
    assert flagged_full <= 0.1 * n
    assert clear_full >= 0.9 * n


@pytest.mark.slow
def test_soft_and_optimal_demonstrators_are_told_apart():
    mdp = park_mdp()
    outcome = {}
    for truth in ("soft", "optimal"):
        right = wrong = unclear = 0
        for k in range(DATA_SETS // 2):
            demos = simulate_from(mdp, truth, PARK_WEIGHTS, seed=300 + k)
            fits = [bi.sample(bi.BoltzmannLikelihood(mdp, demos, q_function=q), seed=k, **SAMPLING)
                    for q in ("soft", "optimal")]
            c = compare(fits, ["soft", "optimal"])
            if c.rows[1].diff <= 2 * c.rows[1].diff_se:
                unclear += 1
            elif c.rows[0].name == truth:
                right += 1
            else:
                wrong += 1
        outcome[truth] = (right, unclear, wrong)
    print(f"\nsoft vs optimal (right, no clear difference, wrong) per truth, "
          f"{DATA_SETS // 2} data sets each: {outcome}")
    # No threshold on the rate of right answers (the issue asks to measure it); a clear
    # preference for the wrong model is what must be rare: at most 10% of the data sets per
    # truth (the first study's bound, one of ten, kept as a rate).
    assert all(w <= 0.1 * (DATA_SETS // 2) for _, _, w in outcome.values())
