"""The several-demonstrator benchmark's problem and table (the timing itself is not a test)."""

from __future__ import annotations

from bayesirl.bench import SUITES
from bayesirl.bench.groups import EPISODES, LENGTH, markdown, problem


def test_problem_has_ten_episodes_per_demonstrator():
    mdp, demos = problem(200, 3)
    assert mdp.n_states == 200 and mdp.n_features == 4
    groups = demos.groups()
    assert list(groups) == ["d0", "d1", "d2"]
    assert all(len(e) == EPISODES for e in groups.values())
    assert demos.n_steps == 3 * EPISODES * LENGTH


def test_table_row_and_suite_listed():
    row = {"states": 1000, "demonstrators": 10, "dim": 48, "chains": 4, "draws": 500,
           "ess_per_s_mu": 1.5, "ess_per_s_tau": 0.5, "evals_per_ess": 30.0,
           "divergences": 0, "max_rhat": 1.004, "s_per_gradient": 0.02, "ratio": 8.2,
           "load_1min": [3.1, 4.0]}
    text = "\n".join(markdown({"rows": [row]}))
    assert ("| 1000 | 10 | 48 | 4 x 500 | 1.5 | 0.5 | 30.0 | 0 | 1.004 | 0.02 | 8.2 "
            "| 3.1-4.0 |") in text
    assert "groups" in SUITES
