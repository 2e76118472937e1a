"""``report --tolerance/--states/--suggestions`` and ``suggest --target/--outer/--report``."""

from __future__ import annotations

import json

import pytest

from bayesirl.cli import main


def _fit(tiny) -> str:
    problem, demos = tiny
    run = problem.parent / "run"
    assert main(["--quiet", "fit", str(problem), str(demos), "--out", str(run)]) == 0
    return str(run)


def test_report_options_reach_the_page_and_summary(tiny, capsys):
    run = _fit(tiny)
    assert main(["report", run, "--level", "0.5", "--tolerance", "0.3", "--states", "0,2"]) == 0
    summary = json.loads((tiny[0].parent / "run" / "summary.json").read_text())
    report = summary["report"]
    assert report["level"] == 0.5 and report["tolerance"] == 0.3
    assert report["policy_risk"]["alpha"] == 0.5  # the bound follows --level
    assert {p["state"] for p in report["derived"]["action_probabilities"]} == {0, 2}
    assert summary["report_settings"] == {"level": 0.5, "tolerance": 0.3, "states": [0, 2]}
    html = (tiny[0].parent / "run" / "report.html").read_text()
    assert "the stated tolerance is 0.3 reward units" in html
    # States as cells of the map, actions by the map's move names (read from the problem).
    assert "state 2 = cell (row 0, col 2)" in html and "<th>up</th>" in html


@pytest.mark.parametrize(("argv", "message"), [
    (["--tolerance", "-1"], "tolerance: expected a positive number"),
    (["--tolerance", "nan"], "tolerance: expected a positive number"),
    (["--states", "0,99"], "--states: '99' is not a state"),
    (["--suggestions"], "suggestions.json: missing"),
])
def test_bad_report_options_exit_2(tiny, capsys, argv, message):
    run = _fit(tiny)
    assert main(["report", run, *argv]) == 2
    assert message in capsys.readouterr().err


def test_suggest_takes_every_target_and_adds_to_the_report(tiny, capsys):
    run = _fit(tiny)
    for target in ("water/mud", "policy-risk", "mud"):
        assert main(["suggest", run, "--target", target, "--outer", "16", "--budget", "2"]) == 0
        out = capsys.readouterr().out
        assert "target sd now" in out and "batch pick 2" in out and "Ranking" in out
        assert "cell (row" in out  # candidates in the map's own terms
    assert main(["--quiet", "suggest", run, "--outer", "16", "--report"]) == 0
    html = (tiny[0].parent / "run" / "report.html").read_text()
    assert 'id="suggestions"' in html
    # ... and a later re-render can keep them.
    assert main(["--quiet", "report", run, "--suggestions"]) == 0
    assert 'id="suggestions"' in (tiny[0].parent / "run" / "report.html").read_text()
    assert main(["--quiet", "report", run]) == 0
    assert 'id="suggestions"' not in (tiny[0].parent / "run" / "report.html").read_text()
