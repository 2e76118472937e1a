"""The bundled examples of ``bayesirl example``: problem files and simulated demonstrations.

Each example writes a problem file and a demonstration file into a folder. The demonstrations
are simulated from known weights with a fixed seed, so the files are the same on every machine
(the copies under ``examples/`` in the repository are these files). Invented data throughout.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import NamedTuple

import numpy as np

from bayesirl.files import atomic_target, write_text
from bayesirl.io import read_problem, write_demonstrations
from bayesirl.model import Demonstrations, simulate
from bayesirl.scenarios.machine import MACHINE_WEIGHTS, machine_arrays
from bayesirl.scenarios.park import PARK, PARK_WEIGHTS, SLIP
from bayesirl.scenarios.park_evidence import write_park_evidence
from bayesirl.scenarios.walkers import EPISODES_EACH, LENGTH, POOLING_TABLE, WALKER_WEIGHTS

# Small sampler settings keep a bundled example to seconds on two cores; the write-ups say so.
EXAMPLE_SAMPLER = "chains = 4\ndraws = 600\nwarmup = 400\nseed = 0\n"


# The prior, rationality and sampler tables both examples share.
_SETTINGS = f"""[prior]
kind = "normal"
scale = 5.0

[rationality]
value = 1.0

[sampler]
{EXAMPLE_SAMPLER}"""


def _park_map() -> str:
    rows = list(PARK)
    rows[0] = "S" + rows[0][1:]  # the walkers' start, a plain cell like "."
    return "\n".join(rows)


PARK_TOML = f'''# bayesirl problem: a walker crossing a small park (invented data for the example).
title = "park walks"

[model]
discount = 0.9
q_function = "soft"

[map]
features = ["mud", "slope", "shade", "water"]
moves = 4
slip = {SLIP}
cells = """
{_park_map()}
"""

[map.legend]
"." = {{}}
"S" = {{ start = true }}
"m" = {{ mud = 1 }}
"s" = {{ slope = 1 }}
"t" = {{ shade = 1 }}
"W" = {{ water = 1, goal = true }}

{_SETTINGS}'''

MACHINE_TOML = '''# bayesirl problem: when to replace a wearing machine (invented data).
title = "machine replacement"

[model]
# Monthly decisions: 0.999 a month is about 1.2% a year.
discount = 0.999
q_function = "soft"

[arrays]
npz = "machine.npz"
feature_names = ["wear", "replacement"]
actions = ["keep", "replace"]

# Costs here run to tens of units (a replacement), so the prior is wider than the default.
[prior]
kind = "normal"
scale = 25.0

[rationality]
value = 1.0

# Wear and replacement costs are strongly correlated a posteriori (the data fix mostly
# their ratio), which a dense mass matrix follows far better than a diagonal one.
[sampler]
chains = 4
draws = 600
warmup = 600
seed = 0
dense_mass = true
'''


class Example(NamedTuple):
    """A bundled example: what it shows and how to write its files."""

    name: str
    summary: str
    write: Callable[[Path], tuple[Path, ...]]  # problem, episodes[, comparisons]


def _write_park(folder: Path) -> tuple[Path, Path]:
    problem_path = write_text(folder / "park.toml", PARK_TOML)
    problem = read_problem(problem_path)
    demos = simulate(problem.mdp, PARK_WEIGHTS, episodes=40, length=15, seed=1)
    return problem_path, write_demonstrations(folder / "walks.csv", demos, problem,
                                              [f"walk-{k + 1}" for k in range(40)])


# The park after rain: every muddy cell is also wet, so the walkers' routes can only ever tell
# how much mud-and-wet together is avoided, never how the avoidance splits between the two.
WET_PARK_TOML = (PARK_TOML
                 .replace("# bayesirl problem: a walker crossing a small park",
                          "# bayesirl problem: a walker crossing a small park after rain")
                 .replace('title = "park walks"', 'title = "park walks after rain"')
                 .replace('features = ["mud", "slope", "shade", "water"]',
                          'features = ["mud", "slope", "shade", "water", "wet"]')
                 .replace('"m" = {{ mud = 1 }}'.replace("{{", "{").replace("}}", "}"),
                          '"m" = { mud = 1, wet = 1 }'))
# Weights of the invented walkers: mud + wet = -1 as in the park; the split is arbitrary and
# cannot be learned.
WET_PARK_WEIGHTS = np.array([-0.6, -0.5, 0.3, 2.0, -0.4])
WET_PARK_WALKS = 100


def _write_wet_park(folder: Path) -> tuple[Path, Path]:
    problem_path = write_text(folder / "park.toml", WET_PARK_TOML)
    problem = read_problem(problem_path)
    demos = simulate(problem.mdp, WET_PARK_WEIGHTS, episodes=WET_PARK_WALKS, length=15, seed=1)
    return problem_path, write_demonstrations(folder / "walks.csv", demos, problem,
                                              [f"walk-{k + 1}" for k in range(WET_PARK_WALKS)])


def _write_walkers(folder: Path) -> tuple[Path, Path]:
    text = PARK_TOML.replace("a walker crossing a small park", "four walkers crossing a "
                             "small park").replace('"park walks"', '"four walkers"')
    problem_path = write_text(folder / "walkers.toml", text + "\n" + POOLING_TABLE)
    problem = read_problem(problem_path)
    episodes, names, ids = [], [], []
    for k, (who, w) in enumerate(WALKER_WEIGHTS.items()):
        demos = simulate(problem.mdp, w, episodes=EPISODES_EACH, length=LENGTH, seed=10 + k)
        episodes += list(demos.episodes)
        names += [who] * EPISODES_EACH
        ids += [f"{who}-{j + 1}" for j in range(EPISODES_EACH)]
    demos = Demonstrations(episodes, demonstrators=names)
    return problem_path, write_demonstrations(folder / "walks.csv", demos, problem, ids)


def _write_machine(folder: Path) -> tuple[Path, Path]:
    p, phi = machine_arrays()
    start = np.zeros(p.shape[0])
    start[0] = 1.0
    folder.mkdir(parents=True, exist_ok=True)
    with atomic_target(folder / "machine.npz") as tmp, open(tmp, "wb") as fh:
        np.savez(fh, transitions=p, features=phi, start=start)
    problem_path = write_text(folder / "machine.toml", MACHINE_TOML)
    problem = read_problem(problem_path)
    # 40 machines observed monthly for ten years each.
    demos = simulate(problem.mdp, MACHINE_WEIGHTS, episodes=40, length=120, seed=3)
    return problem_path, write_demonstrations(folder / "operators.jsonl", demos, problem,
                                              [f"machine-{k + 1}" for k in range(40)])


EXAMPLES = {
    "park": Example("park", "a walker's routes across a park grid with mud, slopes, shade "
                            "and a water fountain (4 features, 42 cells)", _write_park),
    "wet-park": Example("wet-park", "the park after rain: every muddy cell is also wet, so "
                                    "only mud + wet can be learned (5 features, 100 walks)",
                        _write_wet_park),
    "machine": Example("machine", "when to replace a machine as it wears: keep or replace "
                                  "each month at 80 wear levels, discount 0.999 (a dynamic "
                                  "discrete choice)",
                       _write_machine),
    "park-evidence": Example("park-evidence", "the park from 8 recorded walks, 32 tracked "
                                              "walks (no actions, gaps) and 40 answers "
                                              "comparing walks",
                             lambda folder: write_park_evidence(folder, PARK_TOML)),
    "walkers": Example("walkers", "four walkers in the park who agree on mud and slope but "
                                  "differ on shade (partial pooling of demonstrators)",
                       _write_walkers),
}
