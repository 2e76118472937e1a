"""The learned-dynamics benchmark's problem, table and a tiny run (the timing is no test)."""

from __future__ import annotations

from bayesirl.bench import SUITES
from bayesirl.bench.dynamics import LOGGED, markdown, problem, run


def test_problem_counts_logged_and_demonstrated_transitions():
    lik, post = problem(100)
    rows = lik.mdp.n_states * lik.mdp.n_actions
    assert post.n_logged == LOGGED * rows + lik.demos.n_steps
    assert "dynamics" in SUITES


import pytest  # noqa: E402


@pytest.mark.slow  # ~27 s on a loaded 2-core machine: 5 small fits
def test_quick_run_fills_a_table_row():
    results = run(quick=True, log=lambda *_: None)
    (row,) = results["rows"]
    assert row["dynamics_draws"] == 2 and row["wall_s"] > 0 and 0 <= row["max_share"] <= 1
    text = "\n".join(markdown(results))
    assert "| 100 | 2 | 2 x 40 |" in text
