"""The park-evidence example's files: what they hold, read back through the readers.

The example's committed copies (examples/park-evidence) are compared with what the command
writes by tests/cli/test_files.py. Here: the tracked walks are the simulated walks with the
actions and every 5th position removed, so reading them back must give exactly that.
"""

from __future__ import annotations

import numpy as np

from bayesirl.io.comparisonfiles import read_comparisons
from bayesirl.io.episodefiles import read_episodes
from bayesirl.model import simulate
from bayesirl.scenarios.bundled import EXAMPLES
from bayesirl.scenarios.park import PARK_WEIGHTS
from bayesirl.scenarios.park_evidence import DROP_EVERY, FULL, TRACKED


def test_example_files_hold_what_they_say(tmp_path):
    from bayesirl.io import read_problem

    problem_path, walks, answers = EXAMPLES["park-evidence"].write(tmp_path)
    problem = read_problem(problem_path)
    found = read_episodes(walks, problem)
    assert len(found.complete) == FULL and len(found.incomplete) == TRACKED
    truth = simulate(problem.mdp, PARK_WEIGHTS, episodes=FULL + TRACKED, length=15, seed=2)
    s, a = found.episodes["track-1"]
    want = truth.episodes[FULL][0].copy()
    want[DROP_EVERY::DROP_EVERY] = -1
    assert np.array_equal(s, want) and np.all(a == -1)
    assert np.array_equal(found.episodes["walk-1"][1], truth.episodes[0][1])
    comp = read_comparisons(answers, problem)
    assert len(comp.pairs) == 40 and len(comp.episodes) == 16
