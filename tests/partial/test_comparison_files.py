"""Property (Hypothesis): any comparison file is read, or refused by one InputError that names
the file and a line that exists; what is read matches the lines given."""

from __future__ import annotations

import json

import pytest
from cli.helpers import TINY_TOML
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bayesirl.errors import InputError
from bayesirl.io import read_problem
from bayesirl.io.comparisonfiles import read_comparisons

EPISODE_LINES = [
    {"episode": "a", "cells": [[0, 0], [0, 1], [0, 2]], "actions": ["right", "right"]},
    {"episode": "b", "cells": [[0, 0], [1, 0]], "actions": ["down"]},
    {"episode": "c", "states": [0, 1, None], "actions": ["right", None]},  # needs every state
    {"episode": "d", "cells": [[0, 0], [1, 1]], "actions": ["down"]},  # a blocked cell
    {"episode": 7, "states": [3, 0], "actions": [0]},
]
ids = st.sampled_from(["a", "b", "c", "d", "7", 7, "zz", None, True, 1.5])
answers = st.builds(lambda p, o, extra: {"preferred": p, "other": o, **extra}, ids, ids,
                    st.sampled_from([{}, {}, {"tie": True}, {"why": "x"}]))
no_preference = st.one_of(st.builds(lambda p, o: {"no_preference": [p, o]}, ids, ids),
                          st.sampled_from([{"no_preference": "a"}, {"no_preference": ["a"]},
                                           {"no_preference": ["a", "b"], "other": "a"}]))
lines = st.lists(st.one_of(st.sampled_from(EPISODE_LINES), answers, no_preference,
                           st.sampled_from(["", "{", "[]", "null", '{"episode": "a"}'])),
                 min_size=1, max_size=8)


@pytest.fixture(scope="module")
def problems(tmp_path_factory):
    """Without and with Davidson's tie parameter ([judge] tie)."""
    folder = tmp_path_factory.mktemp("p")
    (folder / "p.toml").write_text(TINY_TOML)
    (folder / "t.toml").write_text(TINY_TOML + "\n[judge]\ntie = 0.5\n")
    return read_problem(folder / "p.toml"), read_problem(folder / "t.toml")


@settings(max_examples=200, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(content=lines, with_tie=st.booleans())
def test_any_comparison_file_reads_or_names_its_line(tmp_path, problems, content, with_tie):
    problem = problems[with_tie]
    text = "\n".join(x if isinstance(x, str) else json.dumps(x) for x in content) + "\n"
    path = tmp_path / "c.jsonl"
    path.write_text(text)
    try:
        found = read_comparisons(path, problem)
    except InputError as err:
        msg = str(err)
        assert msg.startswith(str(path))
        if " line " in msg:
            assert 1 <= int(msg.split(" line ")[1].split(":")[0]) <= len(content)
        return
    given_pairs = [(str(x["preferred"]), str(x["other"])) if "preferred" in x
                   else tuple(str(v) for v in x["no_preference"]) for x in content
                   if isinstance(x, dict) and ("preferred" in x or "no_preference" in x)]
    assert found.pairs == given_pairs
    assert found.ties == [isinstance(x, dict) and "no_preference" in x for x in content
                          if isinstance(x, dict) and ("preferred" in x or "no_preference" in x)]
    assert with_tie or not any(found.ties)  # without [judge] tie, a tie is always refused
    assert all(a in found.episodes and b in found.episodes for a, b in found.pairs)


asks = st.one_of(st.builds(lambda p, o: {"ask": [p, o]}, ids, ids),
                 st.sampled_from([{"ask": "a"}, {"ask": ["a", "b"], "why": 1}]))
candidate_lines = st.lists(st.one_of(st.sampled_from(EPISODE_LINES), asks,
                                     st.sampled_from(["", "{", "null"])), min_size=1, max_size=8)


@settings(max_examples=150, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(content=candidate_lines)
def test_any_candidate_file_reads_or_names_its_line(tmp_path, problems, content):
    """``suggest --comparisons FILE``: read, or one InputError naming the file (and a line
    that exists); the pairs are the ask lines, or every pair of episodes without any."""
    from bayesirl.io.comparisonfiles import read_candidates

    text = "\n".join(x if isinstance(x, str) else json.dumps(x) for x in content) + "\n"
    path = tmp_path / "q.jsonl"
    path.write_text(text)
    try:
        episodes, pairs = read_candidates(path, problems[0])
    except InputError as err:
        msg = str(err)
        assert msg.startswith(str(path))
        if " line " in msg:
            assert 1 <= int(msg.split(" line ")[1].split(":")[0]) <= len(content)
        return
    asked = [tuple(str(v) for v in x["ask"]) for x in content if isinstance(x, dict)
             and "ask" in x]
    n = len(episodes)
    assert pairs == asked if asked else len(pairs) == n * (n - 1) // 2
