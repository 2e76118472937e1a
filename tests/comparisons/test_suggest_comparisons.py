"""``bayesirl suggest RUN --comparisons draws|FILE``: comparison questions ranked by expected
information gain.

Outside reference: the mutual information from the joint table of (draw, answer)
probabilities (Cover & Thomas ch. 2, ``comparison_gains_ref``), recomputed here from the
episodes and the thinned draws the command reports; a limit known without computation: two
episodes with the same path have equal returns under every draw, so asking about them gains
nothing (negative control: it must rank last with gain 0).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from cli.helpers import TINY_TOML
from partial.test_check_command import EPISODES
from partial.test_episode_files import CSV

import bayesirl as bi
from bayesirl.cli import main
from bayesirl.commands.comparison_queries import thinned
from bayesirl.commands.fit import _load
from bayesirl.design.comparisons import comparison_gains_ref
from bayesirl.evidence.comparisons import discounted_features
from bayesirl.files import write_json
from bayesirl.io import read_problem
from bayesirl.io.runfolder import RUN_FORMAT

MORE = ('{"episode": "c", "cells": [[0,0],[0,1],[0,2],[0,1]], '
        '"actions": ["right","right","left"]}\n'
        '{"episode": "a2", "cells": [[0,0],[0,1],[0,2],[1,2]], '
        '"actions": ["right","right","down"]}\n')


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    where = tmp_path_factory.mktemp("suggest")
    files = {"p.toml": TINY_TOML, "e.csv": CSV,
             "c.jsonl": EPISODES + '{"preferred": "a", "other": "b"}\n'}
    for name, text in files.items():
        (where / name).write_text(text)
    # the run folder fit writes, without its report (seconds, not tens of them)
    problem, lik, extra = _load(where / "p.toml", where / "e.csv", where / "c.jsonl")
    post = bi.sample(lik, prior=problem.prior, evidence=extra, chains=1, draws=20, warmup=20,
                     backend=bi.Serial(), progress=False)
    (where / "run").mkdir()
    post.save(where / "run" / "posterior.nc")
    write_json(where / "run" / "summary.json", {"format": RUN_FORMAT, "complete": True,
                                                "problem": str(where / "p.toml")})
    return where


def test_pairs_from_draws_are_ranked_by_their_gain(run, capsys):
    code = main(["suggest", str(run / "run"), "--comparisons", "draws", "--pairs", "4",
                 "--length", "4", "--seed", "1", "--outer", "30"])
    assert code == 0
    assert "ranked by expected information gain" in capsys.readouterr().out
    out = json.loads((run / "run" / "comparison-suggestions.json").read_text())
    assert out["settings"]["judge"] == "judge rationality from the run's fixed value"
    qs = out["questions"]
    assert len(qs) == 4 and [q["gain"] for q in qs] == sorted((q["gain"] for q in qs),
                                                              reverse=True)
    post = bi.Posterior.load(run / "run" / "posterior.nc")
    draws, _ = thinned(post.weights, 30)
    mdp = post.model.likelihood.mdp
    eps = {n: (np.array(e["states"]), np.array(e["actions"]))
           for n, e in out["episodes"].items()}
    d = np.array([discounted_features(mdp, *eps[q["first"]])
                  - discounted_features(mdp, *eps[q["second"]]) for q in qs])
    assert np.allclose([q["gain"] for q in qs], comparison_gains_ref(draws, d, 1.0),
                       rtol=0, atol=1e-12)


def test_given_candidates_and_an_uninformative_pair(run, capsys):
    (run / "cand.jsonl").write_text(EPISODES + MORE + '{"ask": ["a", "a2"]}\n'
                                    '{"ask": ["a", "b"]}\n{"ask": ["b", "c"]}\n')
    code = main(["suggest", str(run / "run"), "--comparisons", str(run / "cand.jsonl"),
                 "--quiet"])
    assert code == 0
    qs = json.loads((run / "run" / "comparison-suggestions.json").read_text())["questions"]
    assert [(q["first"], q["second"]) for q in qs][-1] == ("a", "a2")
    assert qs[-1]["gain"] == 0.0 and qs[1]["gain"] > 0.0
    # every pair when the file names none
    problem = read_problem(run / "p.toml")
    assert problem.mdp.n_features == 2
    (run / "all.jsonl").write_text(EPISODES + MORE)
    assert main(["suggest", str(run / "run"), "--comparisons", str(run / "all.jsonl"),
                 "--quiet"]) == 0
    qs = json.loads((run / "run" / "comparison-suggestions.json").read_text())["questions"]
    assert len(qs) == 6  # 4 episodes, 4 * 3 / 2 pairs
    capsys.readouterr()
    (run / "bad.jsonl").write_text(EPISODES + '{"ask": ["a", "zz"]}\n')
    assert main(["suggest", str(run / "run"), "--comparisons", str(run / "bad.jsonl")]) == 2
    assert "bad.jsonl line 3: episode 'zz' is not in the file" in capsys.readouterr().err
