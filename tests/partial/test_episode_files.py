"""Episode files with blanks: reading, the errors they name, and Hypothesis properties.

Outside reference for the dynamics errors: the map's moves are deterministic (slip 0), so
which recorded steps and gaps are possible is known by hand from the 2 x 3 map in
``tests/cli/helpers.py`` (``S.m / .#W``).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from cli.helpers import TINY_TOML
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bayesirl.errors import InputError
from bayesirl.io import read_problem
from bayesirl.io.episodefiles import read_episodes

CSV = ("episode,step,row,col,action\n"
       "full,0,0,0,right\nfull,1,0,1,right\nfull,2,0,2,down\nfull,3,1,2,\n"
       "walk,0,0,0,\nwalk,1,1,0,\nwalk,2,0,0,\nwalk,3,0,1,\n"
       "gap,0,0,0,right\ngap,1,,,\ngap,2,0,2,down\ngap,3,1,2,\n")
JSONL = ('{"episode": "full", "cells": [[0,0],[0,1],[0,2],[1,2]], '
         '"actions": ["right","right","down"]}\n'
         '{"episode": "walk", "cells": [[0,0],[1,0],[0,0],[0,1]], "actions": [null,null,null]}\n'
         '{"episode": "gap", "cells": [[0,0],null,[0,2],[1,2]], '
         '"actions": ["right",null,"down"]}\n')


@pytest.fixture
def problem(tmp_path):
    (tmp_path / "p.toml").write_text(TINY_TOML)
    return read_problem(tmp_path / "p.toml")


def _write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_csv_and_jsonl_read_alike_and_split_by_completeness(tmp_path, problem):
    a = read_episodes(_write(tmp_path, "e.csv", CSV), problem)
    b = read_episodes(_write(tmp_path, "e.jsonl", JSONL), problem)
    for f in (a, b):
        assert f.names == ["full", "walk", "gap"]
        assert f.complete == ["full"] and f.incomplete == ["walk", "gap"]
        assert f.demonstrations.n_episodes == 1 and f.partial.n_episodes == 2
    for name in a.names:
        for x, y in zip(a.episodes[name], b.episodes[name], strict=True):
            assert np.array_equal(x, y)
    # right = 1 in the map's move order (up, right, down, left); -1 where nothing is recorded
    assert a.episodes["gap"][0].tolist() == [0, -1, 2, 5]
    assert a.episodes["gap"][1].tolist() == [1, -1, 2]


@pytest.mark.parametrize(("text", "match"), [
    # walk, step 1 -> 2: (1,0) to (0,2) is not one move
    ("episode,step,row,col,action\nw,0,0,0,\nw,1,1,0,\nw,2,0,2,\n",
     r"e.csv line 4: episode 'w' step 2: the dynamics cannot go from state 3 by any action "
     r"to state 2"),
    ("episode,step,row,col,action\nw,0,0,0,down\nw,1,0,1,\n",
     r"line 3: episode 'w' step 1: the dynamics cannot go from state 0 by action 2 to state 1"),
    # one hidden state cannot bridge (0,0) to (1,2): that takes three moves
    ("episode,step,row,col,action\ng,0,0,0,\ng,1,,,\ng,2,1,2,\n",
     r"line 4: episode 'g' steps 0..2: no path of 2 steps leads from state 0 to state 5"),
    ("episode,step,row,col,action\ng,0,,,right\ng,1,0,1,\n",
     r"line 2: episode 'g': the first state is not recorded"),
    ("episode,step,row,col,action\ng,0,0,0,\ng,1,0,1,\ng,2,9,9,\n",
     r"line 4: cell \(row=9, col=9\) is off the map"),
])
def test_errors_name_file_line_and_value(tmp_path, problem, text, match):
    with pytest.raises(InputError, match=match):
        read_episodes(_write(tmp_path, "e.csv", text), problem)


def test_gap_longer_than_the_horizon(tmp_path):
    (tmp_path / "h.toml").write_text(TINY_TOML.replace("discount = 0.9", "discount = 0.9\n"
                                                       "horizon = 2"))
    problem = read_problem(tmp_path / "h.toml")
    text = "episode,step,row,col,action\ng,0,0,0,\ng,1,,,\ng,2,,,\ng,3,0,2,\n"
    with pytest.raises(InputError, match=r"line 4: episode 'g' has 3 steps \(with 2 "
                                         r"unrecorded states\), more than the horizon 2"):
        read_episodes(_write(tmp_path, "e.csv", text), problem)
    ok = "episode,step,row,col,action\ng,0,0,0,\ng,1,,,\ng,2,0,2,\n"  # control: 2 steps fit
    assert read_episodes(_write(tmp_path, "e.csv", ok), problem).incomplete == ["g"]


cells = st.sampled_from(["0,0", "0,1", "0,2", "1,0", "1,2", ",", "1,1", "9,0", "a,b", "0,"])
acts = st.sampled_from(["up", "right", "down", "left", "", "", "1", "7", "jump"])


@settings(max_examples=150, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(st.tuples(st.sampled_from(["a", "b"]), cells, acts), min_size=1,
                     max_size=9))
def test_any_csv_reads_or_names_its_line(tmp_path, problem, rows):
    """Property: every file is read, or refused by one InputError naming a line that exists."""
    steps: dict[str, int] = {}
    lines = ["episode,step,row,col,action"]
    for ep, cell, act in rows:
        lines.append(f"{ep},{steps.setdefault(ep, 0)},{cell},{act}")
        steps[ep] += 1
    path = _write(tmp_path, "p.csv", "\n".join(lines) + "\n")
    try:
        got = read_episodes(path, problem)
    except InputError as err:
        msg = str(err)
        assert msg.startswith(str(path))
        if " line " in msg:
            assert 1 <= int(msg.split(" line ")[1].split(":")[0]) <= len(lines)
        return
    assert len(got.complete) + len(got.incomplete) == len(got.names)


@settings(max_examples=60, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(seed=st.integers(0, 10**6), blank=st.floats(0.0, 0.7))
def test_written_partial_episodes_read_back(tmp_path, problem, seed, blank):
    """Property: simulated walks with random blanks, written as JSON Lines, read back exactly
    (and every such file passes the dynamics checks: the walks really happened)."""
    import bayesirl as bi

    demos = bi.simulate(problem.mdp, np.array([-1.0, 1.0]), episodes=3, length=5, seed=seed)
    rng = np.random.default_rng(seed)
    text, want = "", {}
    for k, (s, a) in enumerate(demos.episodes):
        s = np.where(rng.random(s.size) < blank, -1, s)
        s[0] = demos.episodes[k][0][0]
        a = np.where(rng.random(a.size) < blank, -1, a)
        want[str(k)] = (s, a)
        text += json.dumps({"episode": k, "states": [None if x < 0 else int(x) for x in s],
                            "actions": [None if x < 0 else int(x) for x in a]}) + "\n"
    got = read_episodes(_write(tmp_path, "w.jsonl", text), problem)
    for name, (s, a) in want.items():
        assert got.episodes[name][0].tolist() == s.tolist()
        assert got.episodes[name][1].tolist() == a.tolist()
