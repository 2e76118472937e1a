"""The logged-transitions file and the ``[dynamics]`` table: examples and properties.

Hypothesis (derandomized) writes valid files, which must read back to the same records, and
files with one damaged cell, which must raise one InputError naming the file and that line.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bayesirl.errors import InputError
from bayesirl.io import read_problem
from bayesirl.io.transitionfiles import dynamics_posterior, read_transitions

PROBLEM = '''[model]
discount = 0.9

[map]
features = ["mud"]
cells = """
S.m
..W
"""

[map.legend]
"." = {}
"S" = { start = true }
"m" = { mud = 1 }
"W" = { goal = true }
'''
ACTIONS = ("up", "right", "down", "left")
N_STATES = 6
PROPERTY = settings(max_examples=60, deadline=None, derandomize=True,
                    suppress_health_check=[HealthCheck.function_scoped_fixture])


@pytest.fixture(scope="module")
def problem(tmp_path_factory):
    folder = tmp_path_factory.mktemp("dyn")
    (folder / "p.toml").write_text(PROBLEM)
    return read_problem(folder / "p.toml")


def _write(tmp_path, text: str):
    path = tmp_path / "log.csv"
    path.write_text(text)
    return path


def test_a_complete_file_reads_with_names_indices_counts_and_comments(problem, tmp_path):
    path = _write(tmp_path, "# logged on the invented park\nstate,action,next_state,count\n"
                            "0,right,1,3\n\n0,1,0,\n4,up,1,2\n")
    log, lines = read_transitions(path, problem)
    assert log.states.tolist() == [0, 0, 4] and log.actions.tolist() == [1, 1, 0]
    assert log.next_states.tolist() == [1, 0, 1] and log.counts.tolist() == [3, 1, 2]
    assert lines.tolist() == [3, 5, 6]


@pytest.mark.parametrize("text, message", [
    ("", "no header"),
    ("state,action\n0,up\n", "missing column 'next_state'"),
    ("state,action,next_state,when\n", "unknown column 'when'"),
    ("state,action,next_state\n", "a header but no transitions"),
    ("state,action,next_state\n0,fly,1\n", "line 2: action 'fly'"),
    ("state,action,next_state\n0,up,6\n", "line 2: next_state '6'"),
    ("state,action,next_state\n-1,up,0\n", "line 2: state '-1'"),
    ("state,action,next_state,count\n0,up,0,0\n", "line 2: count '0'"),
    ("state,action,next_state,count\n0,up,0,1.5\n", "line 2: count '1.5'"),
    ("state,action,next_state\n0,up\n", "line 2: 2 fields"),
])
def test_bad_files_name_file_line_and_value(problem, tmp_path, text, message):
    path = _write(tmp_path, text)
    with pytest.raises(InputError, match=message) as err:
        read_transitions(path, problem)
    assert str(path) in str(err.value)


def _with_dynamics(tmp_path, table: str):
    (tmp_path / "p.toml").write_text(PROBLEM + "\n[dynamics]\n" + table)
    return read_problem(tmp_path / "p.toml")


def test_an_impossible_outcome_names_its_line(tmp_path):
    # From (0, 0) moving right reaches (0, 1) = state 1 or stays; state 5 is far away.
    (tmp_path / "log.csv").write_text("state,action,next_state\n0,right,1\n0,right,5\n")
    problem = _with_dynamics(tmp_path, 'transitions = "log.csv"\n')
    with pytest.raises(InputError, match=r"log.csv: line 3: next_state 5 is impossible"):
        dynamics_posterior(problem)


def test_dynamics_table_defaults_and_checks(tmp_path):
    (tmp_path / "log.csv").write_text("state,action,next_state\n0,right,1\n")
    d = _with_dynamics(tmp_path, 'transitions = "log.csv"\n').dynamics
    assert (d.concentration, d.support, d.draws, d.demonstrations) == (1.0, "model", 8, True)
    post = dynamics_posterior(_with_dynamics(tmp_path, 'transitions = "log.csv"\n'))
    assert post.n_logged == 1
    for table, key in (("concentration = 0\n", "concentration"), ("draws = 1\n", "draws"),
                       ('support = "pattern"\n', "pattern"), ("slip = 0.1\n", "slip")):
        with pytest.raises(InputError, match=key):
            _with_dynamics(tmp_path, table)


rows = st.lists(st.tuples(st.integers(0, N_STATES - 1), st.integers(0, 3),
                          st.integers(0, N_STATES - 1), st.one_of(st.none(),
                                                                  st.integers(1, 10**6))),
                min_size=1, max_size=12)


@PROPERTY
@given(records=rows, named=st.booleans())
def test_valid_files_read_back_exactly(problem, tmp_path, records, named):
    body = "".join(f"{s},{ACTIONS[a] if named else a},{n},{'' if c is None else c}\n"
                   for s, a, n, c in records)
    log, lines = read_transitions(_write(tmp_path, "state,action,next_state,count\n" + body),
                                  problem)
    assert log.states.tolist() == [r[0] for r in records]
    assert log.actions.tolist() == [r[1] for r in records]
    assert log.next_states.tolist() == [r[2] for r in records]
    assert log.counts.tolist() == [1 if r[3] is None else r[3] for r in records]
    assert lines.tolist() == list(range(2, len(records) + 2))


junk = st.sampled_from(["", "x", "-1", "1.0", "6", "1e3", " ", "²", "0x1", "nan", "up,1"])


@PROPERTY
@given(records=rows, where=st.integers(0, 100), column=st.integers(0, 3), bad=junk)
def test_one_damaged_cell_is_named_by_line(problem, tmp_path, records, where, column, bad):
    k = where % len(records)
    cells = [[str(s), ACTIONS[a], str(n), "1" if c is None else str(c)]
             for s, a, n, c in records]
    if column == 3 and (not bad.strip() or bad == "6"):
        bad = "0"  # a blank count is allowed (it means 1), and 6 is a fine count
    cells[k][column] = bad
    text = "state,action,next_state,count\n" + "".join(",".join(r) + "\n" for r in cells)
    with pytest.raises(InputError) as err:
        read_transitions(_write(tmp_path, text), problem)
    assert str(tmp_path / "log.csv") in str(err.value)
    assert f"line {k + 2}:" in str(err.value)


def test_observed_support_leaves_unlogged_rows_to_the_map(tmp_path):
    (tmp_path / "log.csv").write_text("state,action,next_state,count\n0,right,1,4\n")
    problem = _with_dynamics(tmp_path, 'transitions = "log.csv"\nsupport = "observed"\n')
    post = dynamics_posterior(problem)
    idx, alpha = post.row_alpha(0, 1)
    assert idx.tolist() == [1] and alpha.tolist() == [5.0]
    model = problem.mdp.transitions[0 * 4 + 2]  # (0, down): not logged, the map's outcomes
    assert post.row_alpha(0, 2)[0].tolist() == sorted(model.indices.tolist())
    assert np.isclose(post.mean()[0 * 4 + 1].sum(), 1.0)


def test_the_documented_example_file_reads(tmp_path):
    # docs/dynamics.md shows a transitions file for the machine-wear example: it must read.
    import re
    from pathlib import Path

    repo = Path(__file__).resolve().parents[2]
    doc = (repo / "docs" / "dynamics.md").read_text()
    block = re.findall(r"```\n(# invented maintenance log.*?)```", doc, flags=re.S)[0]
    (tmp_path / "log.csv").write_text(block)
    problem = read_problem(repo / "examples" / "machine-wear" / "machine-wear.toml")
    log, _ = read_transitions(tmp_path / "log.csv", problem)
    assert log.total == 9 and log.actions.tolist() == [0, 0, 0, 0]
