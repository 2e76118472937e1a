"""The problem file's ``[report]`` table: the level and tolerance the report's verdicts use,
overridden by ``--level`` / ``--tolerance`` on ``fit`` and ``report``."""

from __future__ import annotations

import json
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import bayesirl as bi
from bayesirl.cli import main
from bayesirl.io.fields import Table
from bayesirl.io.settings import report_from
from cli.helpers import TINY_CSV, TINY_TOML


def _files(tmp_path, extra: str = ""):
    problem = tmp_path / "p.toml"
    problem.write_text(TINY_TOML + extra)
    demos = tmp_path / "walks.csv"
    demos.write_text(TINY_CSV)
    return str(problem), str(demos), str(tmp_path / "run")


def _settings(run: str) -> dict:
    summary = json.loads((__import__("pathlib").Path(run) / "summary.json").read_text())
    return summary["report_settings"], summary["report"]


def test_the_problem_files_report_table_sets_level_and_tolerance(tmp_path):
    problem, demos, run = _files(tmp_path, "\n[report]\nlevel = 0.5\ntolerance = 0.3\n")
    assert main(["--quiet", "fit", problem, demos, "--out", run]) == 0
    chosen, report = _settings(run)
    assert chosen == {"level": 0.5, "tolerance": 0.3}
    assert report["level"] == 0.5 and report["tolerance"] == 0.3
    assert "the stated tolerance is 0.3 reward units" in (tmp_path / "run" / "report.html"
                                                           ).read_text()
    # A re-render keeps the file's settings unless the command line says otherwise.
    assert main(["--quiet", "report", run, "--level", "0.8"]) == 0
    chosen, _ = _settings(run)
    assert chosen["level"] == 0.8 and chosen["tolerance"] == 0.3
    assert main(["--quiet", "report", run, "--tolerance", "2"]) == 0
    chosen, _ = _settings(run)
    assert chosen["level"] == 0.5 and chosen["tolerance"] == 2.0


def test_without_the_table_the_defaults_hold(tmp_path):
    # negative control: no [report] table -> 90% and no tolerance
    problem, demos, run = _files(tmp_path)
    assert main(["--quiet", "fit", problem, demos, "--out", run, "--tolerance", "0.4"]) == 0
    chosen, _ = _settings(run)
    assert chosen == {"level": 0.9, "tolerance": 0.4}
    assert main(["--quiet", "report", run]) == 0
    assert _settings(run)[0] == {"level": 0.9, "tolerance": None, "states": []}


@pytest.mark.parametrize(("table", "message"), [
    ("level = 1.5", "[report] level = 1.5: expected a number in (0, 1)"),
    ("tolerance = -1", "[report] tolerance = -1: expected a number in (0, inf]"),
    ("tolerence = 1", "tolerence"),
])
def test_bad_report_tables_exit_2(tmp_path, capsys, table, message):
    problem, demos, run = _files(tmp_path, f"\n[report]\n{table}\n")
    assert main(["--quiet", "check", problem, demos]) == 2
    assert message in capsys.readouterr().err


values = st.one_of(st.none(), st.booleans(), st.integers(-3, 3), st.floats(allow_nan=True),
                   st.text(max_size=6), st.floats(0.01, 0.99))


@settings(max_examples=300, deadline=None)
@given(st.dictionaries(st.sampled_from(["level", "tolerance", "alpha"]), values))
def test_report_validator_accepts_or_names_the_key(data):
    data = {k: v for k, v in data.items() if v is not None}
    try:
        out = report_from(Table(data, "p.toml", "report"))
    except bi.InputError as err:
        assert "p.toml: [report]" in str(err)
        return
    assert set(data) <= {"level", "tolerance"}
    assert 0 < out["level"] < 1 and math.isfinite(out["level"])
    assert out.get("tolerance", 1.0) > 0
