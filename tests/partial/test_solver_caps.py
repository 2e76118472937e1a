"""The problem file's ``[solver]`` iteration caps reach the partial-episode term, and its
stored record keeps them (a reloaded posterior solves with the same caps)."""

from __future__ import annotations

import numpy as np
import pytest
from cli.helpers import TINY_TOML

from bayesirl.commands.fit import _load
from bayesirl.errors import SolverError
from bayesirl.evidence.records import term_from_record, term_record

from .test_episode_files import CSV


def _partial(tmp_path, solver: str):
    (tmp_path / "p.toml").write_text(TINY_TOML + solver)
    (tmp_path / "e.csv").write_text(CSV)
    problem, _, extra = _load(tmp_path / "p.toml", tmp_path / "e.csv")
    return problem, extra[0]


def test_caps_reach_the_term_and_its_record(tmp_path):
    problem, term = _partial(tmp_path, "\n[solver]\nmax_newton_steps = 1\n"
                                       "max_linear_iterations = 7\n")
    assert term._cache["max_steps"] == 1 and term._cache["max_matvecs"] == 7
    arrays, meta = term_record(term)
    back = term_from_record(problem.mdp, arrays, meta)
    assert back.settings == term.settings
    # one Newton step cannot reach tol 1e-10 from a cold start at these weights: the cap
    # is obeyed (the solver raises rather than return an unconverged result)
    q = {"weights": np.array([1.5, -2.0]), "rationality": 1.0}
    with pytest.raises(SolverError):
        term.evaluate(q)
    # negative control: the default caps converge at the same point
    _, free = _partial(tmp_path, "")
    assert np.isfinite(free.evaluate(q).logp)
