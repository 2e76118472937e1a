"""Problem and demonstration files: round trips, and worlds against independent constructions.

Outside references: ``bayesirl/scenarios/park.py`` builds the park grid by its own loop (clipped
moves, slip spread over the other three moves), and gymnasium's own transition table
``env.unwrapped.P`` (through ``TabularMDP.from_gymnasium``, itself tested against it).
"""

from __future__ import annotations

import numpy as np
import pytest

import bayesirl
from bayesirl.io import read_demonstrations, read_problem, write_demonstrations, write_problem
from bayesirl.priors import Laplace, LogNormal, Normal
from bayesirl.scenarios import PARK_WEIGHTS, park_mdp
from bayesirl.scenarios.bundled import EXAMPLES, PARK_TOML
from bayesirl.scenarios.machine import machine_mdp

from .helpers import REPO


def assert_same_mdp(a, b) -> None:
    """Identical arrays and settings (exact equality, no tolerance)."""
    for name in ("data", "indices", "indptr"):
        np.testing.assert_array_equal(getattr(a.transitions, name), getattr(b.transitions, name))
    np.testing.assert_array_equal(a.features, b.features)
    assert (a.start is None) == (b.start is None)
    if a.start is not None:
        np.testing.assert_array_equal(a.start, b.start)
    assert (a.discount, a.horizon, a.feature_names, a.grid_shape) == (
        b.discount, b.horizon, b.feature_names, b.grid_shape)


def test_park_map_equals_the_scenario_built_independently(tmp_path):
    path = tmp_path / "park.toml"
    path.write_text(PARK_TOML)
    problem = read_problem(path)
    ref = park_mdp(discount=0.9)
    start = np.zeros(ref.n_states)
    start[0] = 1.0  # the map marks the top-left cell as the start
    assert_same_mdp(problem.mdp, bayesirl.TabularMDP(
        ref.transitions, ref.features, discount=0.9, start=start, feature_names=ref.feature_names,
        grid_shape=ref.grid_shape))
    assert problem.action_names == ("up", "right", "down", "left")


@pytest.mark.parametrize("case", ["park", "machine-horizon", "sampled-beta"])
def test_problem_written_from_python_reads_back_identically(case, tmp_path):
    if case == "park":
        mdp, kw = park_mdp(), {"prior": Normal(0.0, np.array([1.0, 2.0, 3.0, 4.0])),
                               "action_names": ("up", "right", "down", "left")}
    elif case == "machine-horizon":
        m = machine_mdp()
        mdp = bayesirl.TabularMDP(m.transitions, m.features, discount=1.0, horizon=12,
                                  start=m.start, feature_names=m.feature_names)
        kw = {"prior": Laplace(0.5, 2.0), "q_function": "optimal",
              "sampler": {"chains": 3, "draws": 50, "warmup": 20, "seed": 7}}
    else:
        mdp = park_mdp()
        kw = {"rationality": LogNormal(0.2, 0.7), "pin": {"water": 2.0}}
    path = write_problem(tmp_path / "p.toml", mdp, **kw)
    back = read_problem(path)
    assert_same_mdp(back.mdp, mdp)
    assert back.q_function == kw.get("q_function", "soft")
    if "prior" in kw:
        assert type(back.prior) is type(kw["prior"])
        for key, value in kw["prior"].__dict__.items():
            np.testing.assert_array_equal(getattr(back.prior, key), value)
    if "sampler" in kw:
        assert {k: back.sampler[k] for k in kw["sampler"]} == kw["sampler"]
    if case == "sampled-beta":
        assert back.rationality == LogNormal(0.2, 0.7) and back.pin == {"water": 2.0}


def test_eight_moves_blocked_cells_and_slip(tmp_path):
    path = tmp_path / "g.toml"
    path.write_text('[map]\nfeatures = ["x"]\nmoves = 8\nslip = 0.7\ncells = """\n..\n.#\n"""\n'
                    '[map.legend]\n"." = {}\n"#" = { blocked = true }\n')
    p = read_problem(path)
    names = p.action_names
    assert names[:4] == ("up", "right", "down", "left") and len(names) == 8
    dense = p.mdp.transitions.toarray().reshape(4, 8, 4)
    other = 0.7 / 7
    # From (0, 0) moving down-right (into the blocked cell (1, 1)) stays put unless it slips
    # right or down; moves off the map (up, left, and three diagonals) also stay put.
    a = names.index("down-right")
    np.testing.assert_allclose(dense[0, a], [0.3 + 5 * other, other, other, 0.0], atol=1e-15)
    np.testing.assert_array_equal(dense[3], np.tile([0, 0, 0, 1.0], (8, 1)))  # blocked: loops
    assert p.blocked == frozenset({3})


@pytest.mark.parametrize("suffix", [".csv", ".jsonl"])
@pytest.mark.parametrize("world", ["park", "machine"])
def test_demonstrations_round_trip(world, suffix, tmp_path):
    folder = tmp_path / world
    problem_path, _ = EXAMPLES[world].write(folder)
    problem = read_problem(problem_path)
    weights = PARK_WEIGHTS if world == "park" else np.array([-6.0, -4.0])
    demos = bayesirl.simulate(problem.mdp, weights, episodes=5, length=6, seed=3)
    # Drop the final state of one episode: T states for T actions is also allowed.
    s0, a0 = demos.episodes[0]
    demos = bayesirl.Demonstrations.from_arrays([s0[:-1]] + [s for s, _ in demos.episodes[1:]],
                                                [a for _, a in demos.episodes])
    back = read_demonstrations(write_demonstrations(folder / f"d{suffix}", demos, problem),
                               problem)
    assert back.n_episodes == demos.n_episodes
    for (s, a), (s2, a2) in zip(demos.episodes, back.episodes, strict=True):
        np.testing.assert_array_equal(s, s2)
        np.testing.assert_array_equal(a, a2)


def test_actions_by_index_and_states_by_index_on_a_map(tmp_path):
    path = tmp_path / "park.toml"
    path.write_text(PARK_TOML)
    problem = read_problem(path)
    csv = tmp_path / "d.csv"
    csv.write_text("episode,step,state,action\ne,0,0,1\ne,1,1,right\ne,2,2,\n")
    demos = read_demonstrations(csv, problem)
    np.testing.assert_array_equal(demos.episodes[0][0], [0, 1, 2])
    np.testing.assert_array_equal(demos.episodes[0][1], [1, 1])


def test_features_csv_world(tmp_path):
    p = np.zeros((3, 2, 3))
    p[:, 0, 0] = 1.0
    p[:, 1, 2] = 1.0
    np.savez(tmp_path / "w.npz", transitions=p)
    (tmp_path / "f.csv").write_text("speed,noise\n0,1\n0.5,-2\n1e-3,3\n")
    (tmp_path / "w.toml").write_text('[model]\nhorizon = 4\n[arrays]\nnpz = "w.npz"\n'
                                     'features_csv = "f.csv"\nactions = ["stop", "go"]\n')
    problem = read_problem(tmp_path / "w.toml")
    np.testing.assert_array_equal(problem.mdp.features, [[0, 1], [0.5, -2], [1e-3, 3]])
    assert problem.mdp.feature_names == ("speed", "noise")
    assert (problem.mdp.horizon, problem.mdp.discount) == (4, 1.0)


def test_gym_world_with_a_legend_matches_from_gymnasium(tmp_path):
    gym = pytest.importorskip("gymnasium")
    (tmp_path / "lake.toml").write_text(
        '[gym]\nid = "FrozenLake-v1"\nmake = { is_slippery = true }\n'
        'features = ["hole", "goal"]\n[gym.legend]\nS = {}\nF = {}\nH = { hole = 1 }\n'
        'G = { goal = 1 }\n')
    problem = read_problem(tmp_path / "lake.toml")
    env = gym.make("FrozenLake-v1", is_slippery=True)
    desc = env.unwrapped.desc.ravel()
    phi = np.stack([desc == b"H", desc == b"G"], axis=1).astype(float)
    ref = bayesirl.TabularMDP.from_gymnasium(env, phi, discount=0.95,
                                             feature_names=("hole", "goal"), grid_shape=(4, 4))
    assert_same_mdp(problem.mdp, ref)
    assert problem.action_names == ("left", "down", "right", "up")


@pytest.mark.parametrize("name", sorted(EXAMPLES))
def test_committed_example_files_are_what_the_command_writes(name, tmp_path):
    committed = REPO / "examples" / name
    EXAMPLES[name].write(tmp_path)
    for path in sorted(tmp_path.iterdir()):
        mine = committed / path.name
        assert mine.is_file(), f"examples/{name}/{path.name} is missing"
        if path.suffix == ".npz":
            a, b = np.load(path), np.load(mine)
            assert sorted(a.files) == sorted(b.files)
            for key in a.files:
                np.testing.assert_array_equal(a[key], b[key])
        else:
            assert path.read_text() == mine.read_text(), path.name


def test_windows_line_endings_and_a_byte_order_mark(tmp_path):
    EXAMPLES["machine"].write(tmp_path)
    problem = read_problem(tmp_path / "machine.toml")
    csv = tmp_path / "d.csv"
    csv.write_bytes(b"\xef\xbb\xbfepisode,step,state,action\r\n7,0,0,keep\r\n7,1,1,1\r\n"
                    b"7,2,0,\r\n")
    demos = read_demonstrations(csv, problem)
    np.testing.assert_array_equal(demos.episodes[0][0], [0, 1, 0])
    np.testing.assert_array_equal(demos.episodes[0][1], [0, 1])
