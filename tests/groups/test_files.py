"""Demonstrator names in demonstration files, the [pooling] table, and ``bayesirl check``.

Parsers and validators: every error is an InputError naming the file and line (or table and
key) -- Hypothesis drives the [pooling] validator with arbitrary values.
"""

from __future__ import annotations

import json
from types import SimpleNamespace

import numpy as np
import pytest
from cli.helpers import TINY_CSV, TINY_TOML
from hypothesis import given, settings
from hypothesis import strategies as st

import bayesirl as bi
from bayesirl.commands.views import check_command
from bayesirl.io import read_demonstrations, read_problem
from bayesirl.io.demofiles import write_demonstrations
from bayesirl.io.fields import Table
from bayesirl.io.pooling import pooling_from

NAMED_CSV = ("episode,step,row,col,action,demonstrator\n"
             "a,0,0,0,right,ida\na,1,0,1,right,ida\na,2,0,2,down,ida\na,3,1,2,,ida\n"
             "b,0,0,0,down,jon\nb,1,1,0,up,jon\nb,2,0,0,right,jon\n"
             "c,0,0,0,right,ida\nc,1,0,1,right,ida\n")


@pytest.fixture
def problem(tmp_path):
    path = tmp_path / "tiny.toml"
    path.write_text(TINY_TOML)
    return read_problem(path)


def _write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_csv_demonstrator_column(tmp_path, problem):
    demos = read_demonstrations(_write(tmp_path, "w.csv", NAMED_CSV), problem)
    assert demos.demonstrators == ("ida", "jon", "ida")
    assert {k: v.tolist() for k, v in demos.groups().items()} == {"ida": [0, 2], "jon": [1]}


def test_without_the_column_nobody_is_named(tmp_path, problem):
    assert read_demonstrations(_write(tmp_path, "w.csv", TINY_CSV), problem).demonstrators \
        is None


@pytest.mark.parametrize("suffix", [".csv", ".jsonl"])
def test_names_round_trip_through_files(tmp_path, problem, suffix):
    demos = read_demonstrations(_write(tmp_path, "w.csv", NAMED_CSV), problem)
    path = write_demonstrations(tmp_path / f"out{suffix}", demos, problem)
    again = read_demonstrations(path, problem)
    assert again.demonstrators == demos.demonstrators
    assert all(np.array_equal(x[0], y[0]) and np.array_equal(x[1], y[1])
               for x, y in zip(again.episodes, demos.episodes, strict=True))


@pytest.mark.parametrize("text,message", [
    (NAMED_CSV.replace("a,1,0,1,right,ida", "a,1,0,1,right,jon"), "line 3: episode 'a' has"),
    (NAMED_CSV.replace("b,1,1,0,up,jon", "b,1,1,0,up,"), "line 7: empty demonstrator"),
])
def test_csv_refusals_name_the_line(tmp_path, problem, text, message):
    with pytest.raises(bi.InputError, match=message):
        read_demonstrations(_write(tmp_path, "w.csv", text), problem)


def _jsonl(*objs):
    return "\n".join(json.dumps(o) for o in objs) + "\n"


EP = {"cells": [[0, 0], [0, 1]], "actions": ["right"]}


@pytest.mark.parametrize("objs,message", [
    ([EP | {"demonstrator": "ida"}, EP], "line 2: no demonstrator"),
    ([EP, EP | {"demonstrator": "ida"}], "line 2: names a demonstrator"),
    ([EP | {"demonstrator": 3}], "line 1: demonstrator must be a non-empty name"),
    ([EP | {"demonstrator": "  "}], "line 1: demonstrator must be a non-empty name"),
    ([EP | {"who": "ida"}], "line 1: keys"),
])
def test_jsonl_refusals_name_the_line(tmp_path, problem, objs, message):
    with pytest.raises(bi.InputError, match=message):
        read_demonstrations(_write(tmp_path, "w.jsonl", _jsonl(*objs)), problem)


def test_pooling_table_in_a_problem_file(tmp_path):
    path = _write(tmp_path, "p.toml", TINY_TOML + '\n[pooling]\nkind = "partial"\n'
                  'spread_scale = [0.5, 2.0]\n')
    pooling = read_problem(path).pooling
    assert pooling.kind == "partial"
    assert np.array_equal(pooling.spread.scale, [0.5, 2.0])
    assert read_problem(_write(tmp_path, "q.toml", TINY_TOML)).pooling == bi.Pooling()
    own = read_problem(_write(tmp_path, "r.toml", TINY_TOML + '\n[pooling]\nkind = "partial"\n'
                              'rationality_spread_scale = 0.5\n')).pooling
    assert own.rationality_spread == bi.HalfNormal(0.5)
    assert bi.Pooling.from_spec(own.spec()) == own
    assert "rationality_spread" not in bi.Pooling("partial").spec()  # older files unchanged


FEATURES = ["mud", "water"]
values = st.one_of(st.none(), st.booleans(), st.integers(-3, 3), st.floats(allow_nan=True),
                   st.text(max_size=8), st.lists(st.floats(-3, 3), max_size=3),
                   st.sampled_from(["pooled", "separate", "partial"]))


@settings(max_examples=300, deadline=None)
@given(st.dictionaries(st.sampled_from(["kind", "spread_scale", "spread", "scale",
                                        "rationality_spread_scale", "rationality_spread"]),
                       values))
def test_pooling_validator_accepts_or_names_the_key(data):
    data = {k: v for k, v in data.items() if v is not None}
    try:
        pooling = pooling_from(Table(data, "p.toml", "pooling"), FEATURES)
    except bi.InputError as err:
        assert "p.toml: [pooling]" in str(err)
        return
    # accepted: only known keys, a known kind, a spread only for partial pooling
    assert set(data) <= {"kind", "spread_scale", "spread", "rationality_spread_scale",
                         "rationality_spread"}
    assert pooling.kind == data.get("kind", "pooled")
    if pooling.kind != "partial":
        assert not set(data) - {"kind"}
    own = pooling.rationality_spread
    assert (own is None) == ("rationality_spread" not in data
                             and "rationality_spread_scale" not in data)
    if isinstance(own, bi.HalfNormal):
        assert own.scale > 0


def test_check_lists_demonstrators_and_who_is_thin(tmp_path, capsys):
    problem = _write(tmp_path, "p.toml", TINY_TOML + '\n[pooling]\nkind = "partial"\n')
    demos = _write(tmp_path, "w.csv", NAMED_CSV)
    assert check_command(SimpleNamespace(problem=problem, demonstrations=demos)) == 0
    out = capsys.readouterr().out
    assert "demonstrators: 2 (pooling 'partial')" in out
    assert "ida      2 episodes       5 steps" in out
    # jon's one episode goes down and back up: it never reaches the mud cell, which the
    # episodes together visit; ida's do. (Too few steps is reported once, for everyone.)
    assert "jon: alone, too thin to determine every weight - unvisited (mud)" in out
    assert "ida: alone" not in out


def test_fit_refuses_partial_pooling_without_names():
    lik = bi.BoltzmannLikelihood(*_tiny_model())
    with pytest.raises(bi.InputError, match="name their demonstrator"):
        bi.sample(lik, pooling="partial", chains=1, draws=1, warmup=0, progress=False)


def _tiny_model():
    mdp = bi.TabularMDP(np.full((2, 2, 2), 0.5), np.arange(8.0).reshape(2, 2, 2) / 8, discount=0.5)
    return mdp, bi.Demonstrations.from_arrays([[0, 1]], [[1]])


def test_fit_with_partial_pooling_end_to_end(tmp_path, capsys):
    from bayesirl.cli import main

    problem = _write(tmp_path, "p.toml", TINY_TOML + '\n[pooling]\nkind = "partial"\n')
    demos = _write(tmp_path, "w.csv", NAMED_CSV)
    out = tmp_path / "run"
    assert main(["fit", str(problem), str(demos), "--out", str(out), "--chains", "1",
                 "--draws", "40", "--warmup", "40"]) == 0
    text = capsys.readouterr().out
    assert "describe the population mean" in text and "spread (sd across)" in text
    summary = json.loads((out / "summary.json").read_text())
    rec = summary["demonstrators"]
    assert rec["pooling"] == "partial" and list(rec["demonstrators"]) == ["ida", "jon"]
    assert rec["demonstrators"]["jon"]["steps"] == 3
    assert (out / "demonstrators.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    post = bi.Posterior.load(out / "posterior.nc")
    assert post.groups["demonstrators"] == ["ida", "jon"]
    assert main(["suggest", str(out)]) == 2  # bad input, not our bug
    assert "several demonstrators" in capsys.readouterr().err
    assert main(["suggest", str(out), "--demonstrator", "jon", "--outer", "8", "--quiet"]) == 0
    assert json.loads((out / "suggestions.json").read_text())["settings"]["demonstrator"] == "jon"
    # one list: more from jon beside a person not in the data yet
    assert main(["suggest", str(out), "--demonstrator", "jon", "--new-demonstrator",
                 "--outer", "8"]) == 0
    assert "by (new demonstrator)" in capsys.readouterr().out
    got = json.loads((out / "suggestions.json").read_text())
    assert got["settings"]["demonstrator"] == ["jon", "(new demonstrator)"]
    assert {r["demonstrator"] for r in got["suggestions"]} == {"jon", "(new demonstrator)"}
    assert main(["suggest", str(out), "--new-demonstrator", "--budget", "2"]) == 2
    page = (out / "report.html").read_text()
    assert 'id="demonstrators"' in page and "Population mean." in page


def test_fit_with_separate_rewards_writes_no_population_report(tmp_path, capsys):
    # Negative case of the report: separate rewards have no population, so no verdicts on a
    # mean of independent weights (whose prior is G times narrower than one weight's).
    from bayesirl.cli import main

    problem = _write(tmp_path, "p.toml", TINY_TOML + '\n[pooling]\nkind = "separate"\n')
    demos = _write(tmp_path, "w.csv", NAMED_CSV)
    out = tmp_path / "run"
    assert main(["fit", str(problem), str(demos), "--out", str(out), "--chains", "1",
                 "--draws", "30", "--warmup", "30"]) == 0
    assert not (out / "report.html").exists() and (out / "demonstrators.png").exists()
    summary = json.loads((out / "summary.json").read_text())
    assert summary["demonstrators"]["pooling"] == "separate" and "no report" in summary["note"]
    assert "and demonstrators.png" in capsys.readouterr().err
    assert main(["report", str(out)]) == 2
    assert "no population" in capsys.readouterr().err
