"""The further-evidence benchmark's problem, its table, and (slow suite) a tiny run; the
timings themselves are not tested.

Outside reference for the problem: the definition of a stochastic matrix (rows sum to 1,
checked with numpy), and the point of the benchmark: on its MDP a state-only step does not
reveal its action, so the state-only log-likelihood is not the recorded one plus a constant.
Negative control: on ``bench/problems.random_mdp`` (each action its own random successors)
it is, to rounding, so the two posteriors coincide there.
"""

from __future__ import annotations

import numpy as np
import pytest

from bayesirl.bench import SUITES
from bayesirl.bench.evidence import case, markdown, shared_mdp, terms
from bayesirl.bench.problems import random_mdp
from bayesirl.model import simulate


def _difference(mdp) -> float:
    """Change of (state-only minus recorded) log-likelihood between two weight vectors."""
    demos = simulate(mdp, np.ones(mdp.n_features), episodes=3, length=8, seed=1)
    t = terms(mdp, demos)
    out = []
    for w in (np.zeros(mdp.n_features), np.ones(mdp.n_features)):
        q = {"weights": w, "rationality": 1.0}
        out.append(t["state-only"].evaluate(q, False).logp - t["actions"].evaluate(q, False).logp)
    return abs(out[1] - out[0])


@pytest.mark.slow  # ~10 s: a check of the benchmark's problem, not of the tool
def test_state_only_steps_hide_their_action():
    mdp = shared_mdp(50)
    p = mdp.transitions.toarray().reshape(50, 4, 50)
    assert np.allclose(p.sum(axis=-1), 1.0, rtol=0, atol=1e-12)
    assert all(((p[s] > 0) == (p[s, 0] > 0)).all() for s in range(50))  # shared neighbours
    assert _difference(mdp) > 1e-3  # information lost: not a constant shift (measured 0.67)
    # negative control: distinct successors per action reveal it (at S = 200 the four
    # actions' 16 successors rarely collide; measured 7e-15, rounding of sums of ~50 terms)
    assert _difference(random_mdp(200, n_features=4, seed=20)) < 1e-10


def test_table_and_suite():
    side = {"s_per_gradient": 0.002, "ess_per_s": 2.5, "evals_per_ess": 43.0}
    row = {"states": 1000, "episodes": 20, "length": 50, "actions": side,
           "state-only": {**side, "s_per_gradient": 0.004}, "price": 2.0,
           "memory": [{"gap": 5, "gaps": 160, "pass_peak_bytes": 2e6, "pass_seconds": 0.01,
                       "evaluate_peak_bytes": 3e6, "evaluate_seconds": 0.02,
                       "policy_bytes": 32000}],
           "load_1min": [3.0, 4.0]}
    text = "\n".join(markdown({"rows": [row]}))
    assert "| 1000 | 20 x 50 | 0.002 | 0.004 | 2.00 | 2.5 | 2.5 | 43.0 | 43.0 | 3.0-4.0 |" in text
    assert "| 1000 | 5 | 160 | 2.00 | 0.01 | 3.00 | 0.02 | 0.032 |" in text
    assert "evidence" in SUITES


@pytest.mark.slow
def test_tiny_run():
    row = case(60, 1, 12, 12, 2, episodes=2, length=6, gaps=(1, 5))
    assert row["states"] == 60 and [m["gap"] for m in row["memory"]] == [1, 5]
    assert row["memory"][0]["gaps"] > row["memory"][1]["gaps"] > 0
    assert row["price"] > 0 and "| 60 | 2 x 6 |" in "\n".join(markdown({"rows": [row]}))
