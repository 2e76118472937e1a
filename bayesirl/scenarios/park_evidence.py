"""The park with further evidence: a few fully recorded walks, many tracked walks (positions
only, some samples dropped), and answers comparing pairs of walks (invented data).

The tracked walks and the answers come from the same walkers (weights ``PARK_WEIGHTS``); the
walks shown to the judges are other walks across the park, and the judges answer Boltzmann-
rationally on discounted returns with rationality 1.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from bayesirl.evidence.comparisons import discounted_features
from bayesirl.files import write_text
from bayesirl.io import read_problem
from bayesirl.io.episodefiles import write_episodes
from bayesirl.model import simulate
from bayesirl.scenarios.park import PARK_WEIGHTS

FULL, TRACKED, SHOWN, ANSWERS, LENGTH = 8, 32, 16, 40, 15
DROP_EVERY = 5  # the tracker lost every 5th position (never the first)


def write_park_evidence(folder: Path, park_toml: str) -> tuple[Path, Path, Path]:
    """``park.toml``, ``walks.csv`` (recorded and tracked walks), ``answers.jsonl``."""
    problem_path = write_text(folder / "park.toml", park_toml)
    problem = read_problem(problem_path)
    mdp = problem.mdp
    walks = simulate(mdp, PARK_WEIGHTS, episodes=FULL + TRACKED, length=LENGTH, seed=2)
    episodes = {}
    for k, (s, a) in enumerate(walks.episodes):
        if k < FULL:
            episodes[f"walk-{k + 1}"] = (s, a)
            continue
        s = s.copy()
        s[DROP_EVERY::DROP_EVERY] = -1
        episodes[f"track-{k - FULL + 1}"] = (s, np.full(a.size, -1))
    demos_path = write_episodes(folder / "walks.csv", episodes, problem)
    rng = np.random.default_rng(5)
    shown = simulate(mdp, rng.normal(0.0, 1.0, size=mdp.n_features), episodes=SHOWN,
                     length=LENGTH, seed=6)
    lines = []
    for k, (s, a) in enumerate(shown.episodes):
        cells = [list(divmod(int(x), mdp.grid_shape[1])) for x in s]
        lines.append(json.dumps({"episode": f"shown-{k + 1}", "cells": cells,
                                 "actions": [problem.action_label(int(x)) for x in a]}))
    ret = np.array([discounted_features(mdp, s, a) @ PARK_WEIGHTS for s, a in shown.episodes])
    for _ in range(ANSWERS):
        i, j = rng.choice(SHOWN, size=2, replace=False)
        first = rng.random() < 1.0 / (1.0 + np.exp(-(ret[i] - ret[j])))
        win, lose = (i, j) if first else (j, i)
        lines.append(json.dumps({"preferred": f"shown-{win + 1}", "other": f"shown-{lose + 1}"}))
    answers = write_text(folder / "answers.jsonl", "\n".join(lines) + "\n")
    return problem_path, demos_path, answers
