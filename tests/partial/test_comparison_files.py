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
lines = st.lists(st.one_of(st.sampled_from(EPISODE_LINES), answers,
                           st.sampled_from(["", "{", "[]", "null", '{"episode": "a"}'])),
                 min_size=1, max_size=8)


@pytest.fixture(scope="module")
def problem(tmp_path_factory):
    folder = tmp_path_factory.mktemp("p")
    (folder / "p.toml").write_text(TINY_TOML)
    return read_problem(folder / "p.toml")


@settings(max_examples=200, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(content=lines)
def test_any_comparison_file_reads_or_names_its_line(tmp_path, problem, content):
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
    given_pairs = [(str(x["preferred"]), str(x["other"])) for x in content
                   if isinstance(x, dict) and "preferred" in x]
    assert found.pairs == given_pairs
    assert all(a in found.episodes and b in found.episodes for a, b in found.pairs)
