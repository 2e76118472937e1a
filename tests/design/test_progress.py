"""The designer's status line: shown on a terminal when asked, silent otherwise, same result."""

from __future__ import annotations

import io

import numpy as np

import bayesirl as bi
from bayesirl.execution.progress import StatusLine

from .conftest import posterior_from_draws, some_demos, toy_mdp


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def _posterior():
    mdp = toy_mdp()
    draws = np.random.default_rng(0).normal(size=(20, 2))
    return posterior_from_draws(mdp, some_demos(mdp, [1.0, 0.5]), draws)


def test_status_line_only_on_a_terminal():
    term, pipe = _Terminal(), io.StringIO()
    for stream in (term, pipe):
        line = StatusLine(stream=stream)
        line.update("a", force=True)
        line.update("b", force=True)
        line.close()
    assert term.getvalue().endswith("b\n") and "a" in term.getvalue()
    assert pipe.getvalue() == ""
    quiet = _Terminal()
    line = StatusLine(stream=quiet, enabled=False)
    line.update("a", force=True)
    line.close()
    assert quiet.getvalue() == ""


def test_suggest_progress_reports_solves_and_leaves_the_ranking_alone(monkeypatch):
    post = _posterior()
    plain = bi.suggest(post, "query-states", budget=2, seed=1)
    term = _Terminal()
    monkeypatch.setattr("sys.stderr", term)
    shown = bi.suggest(post, "query-states", budget=2, seed=1, progress=True)
    assert repr(shown) == repr(plain)  # repr: target_sd is NaN without a target
    text = term.getvalue()
    assert "pick 2/2" in text and "policy solves" in text and text.endswith("\n")
