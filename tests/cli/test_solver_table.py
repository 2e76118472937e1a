"""The problem file's ``[solver]`` table: read into the likelihood, every bad value refused."""

from __future__ import annotations

import pytest

from bayesirl.cli import main
from bayesirl.commands.fit import _load
from bayesirl.io.problem import read_problem
from bayesirl.io.settings import SOLVER_KEYS

from .helpers import TINY_TOML


def _problem(tmp_path, table: str):
    path = tmp_path / "p.toml"
    path.write_text(TINY_TOML.replace("[sampler]", f"[solver]\n{table}\n[sampler]", 1))
    return path


def test_defaults_without_a_table(tmp_path):
    path = tmp_path / "p.toml"
    path.write_text(TINY_TOML)
    assert read_problem(path).solver == SOLVER_KEYS


def test_values_reach_the_likelihood(tmp_path, monkeypatch, capsys):
    text = "tol = 0.0\ngradient_rtol = 1e-6\nmax_newton_steps = 80\nmax_linear_iterations = 500"
    problem = read_problem(_problem(tmp_path, text))
    assert problem.solver == {"tol": 0.0, "gradient_rtol": 1e-6, "max_newton_steps": 80,
                              "max_linear_iterations": 500}
    (tmp_path / "walks.csv").write_text("episode,step,row,col,action\na,0,0,0,right\n"
                                        "a,1,0,1,right\na,2,0,2,down\na,3,1,2,\n")
    _, lik, _ = _load(tmp_path / "p.toml", tmp_path / "walks.csv")
    assert (lik.tol, lik.gradient_rtol, lik.max_newton_steps, lik.max_linear_iterations) == (
        0.0, 1e-6, 80, 500)


@pytest.mark.parametrize("table, fragments", [
    ("tolerance = 1e-8", ["unknown key", "tolerance"]),
    ("tol = -1e-9", ["[solver] tol = -1e-09"]),
    ("tol = 0.5", ["[solver] tol = 0.5"]),
    ("tol = \"small\"", ["[solver] tol = 'small'", "a finite number"]),
    ("gradient_rtol = 0.0", ["[solver] gradient_rtol = 0.0"]),
    ("max_newton_steps = 0", ["[solver] max_newton_steps = 0", ">= 1"]),
    ("max_newton_steps = 2.5", ["[solver] max_newton_steps = 2.5", "an integer"]),
    ("max_linear_iterations = 1000000000000000000",
     ["[solver] max_linear_iterations", "between 1 and 1000000"]),
])
def test_bad_values_exit_2_naming_the_key(tmp_path, monkeypatch, capsys, table, fragments):
    monkeypatch.chdir(tmp_path)
    _problem(tmp_path, table)
    (tmp_path / "walks.csv").write_text("episode,step,row,col,action\na,0,0,0,right\n"
                                        "a,1,0,1,right\n")
    assert main(["check", "p.toml", "walks.csv"]) == 2
    err = capsys.readouterr().err
    assert "p.toml" in err and "Traceback" not in err
    for fragment in fragments:
        assert fragment in err, (fragment, err)
