"""The command line with a ``[dynamics]`` table: ``check`` validates the transition evidence;
``fit`` refuses rather than silently taking the transitions as known."""

from __future__ import annotations

import shutil
from pathlib import Path

from bayesirl.cli import main

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


def _copy(tmp_path) -> Path:
    shutil.copytree(EXAMPLES / "machine-wear", tmp_path / "machine-wear")
    shutil.copytree(EXAMPLES / "machine", tmp_path / "machine")
    return tmp_path / "machine-wear" / "machine-wear.toml"


def test_check_counts_the_logged_and_demonstrated_transitions(tmp_path, capsys):
    problem = _copy(tmp_path)
    demos = tmp_path / "machine" / "operators.jsonl"
    assert main(["check", str(problem), str(demos)]) == 0
    out = capsys.readouterr().out
    # 120 logged (wear_log.csv) + 40 machines x 120 months (each episode also records the
    # wear level after its last month, so every month is a transition) = 4920.
    assert "4920 transitions counted" in out, out
    assert main(["check", str(problem)]) == 0  # the log alone
    assert "120 transitions counted" in capsys.readouterr().out


def test_check_names_the_bad_line_and_exits_2(tmp_path, capsys):
    problem = _copy(tmp_path)
    log = tmp_path / "machine-wear" / "wear_log.csv"
    log.write_text(log.read_text() + "11,keep,15,1\n")  # a 4-level step is impossible
    n = len(log.read_text().splitlines())
    assert main(["check", str(problem)]) == 2
    err = capsys.readouterr().err
    assert f"wear_log.csv: line {n}: next_state 15 is impossible" in err, err


def test_fit_refuses_learned_dynamics_instead_of_ignoring_them(tmp_path, capsys):
    problem = _copy(tmp_path)
    demos = tmp_path / "machine" / "operators.jsonl"
    assert main(["fit", str(problem), str(demos), "--out", str(tmp_path / "run")]) == 2
    assert "does not learn the dynamics yet" in capsys.readouterr().err
    assert not (tmp_path / "run").exists()
