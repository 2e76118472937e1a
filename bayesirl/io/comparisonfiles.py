"""Comparison files (JSON Lines): the episodes shown, then which of two was preferred.

Each line is either an episode, written as in an episode file (``{"episode": id, "states" or
"cells": [...], "actions": [...]}``), or an answer ``{"preferred": id, "other": id}`` naming
two episodes of the same file. Episodes may appear in any order before or after the answers
that name them. The episodes shown to a judge are not demonstrations: they enter only through
the answers (:class:`~bayesirl.evidence.ComparisonTerm`).

Ties and "no preference" answers are refused: the choice model has no outcome for them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.comparisons import ComparisonTerm, discounted_features
from bayesirl.io.episodefiles import episode_line, json_lines
from bayesirl.io.fields import path_argument, read_text

ANSWER_KEYS = {"preferred", "other"}


@dataclass
class ComparisonFile:
    """Episodes by id, answers as (preferred, other) ids, and each answer's line."""

    episodes: dict
    pairs: list[tuple[str, str]]
    lines: list[int]

    def term(self, mdp, rationality: float | str = 1.0) -> ComparisonTerm:
        """The evidence term of these answers."""
        return ComparisonTerm.from_episodes(mdp, self.episodes, self.pairs,
                                            rationality=rationality)


def read_comparisons(path, problem) -> ComparisonFile:
    """Read and check a comparison file against ``problem`` (errors name file and line)."""
    path = path_argument(path)
    if path.suffix.lower() not in (".jsonl", ".ndjson"):
        raise InputError(f"{path}: comparison files are JSON Lines (.jsonl or .ndjson)")
    text = read_text(path, "comparison file")
    episodes, where, pairs, lines = {}, {}, [], []
    for line, obj in json_lines(path, text):
        if isinstance(obj, dict) and ("preferred" in obj or "other" in obj or "tie" in obj):
            pairs.append(_answer(path, line, obj))
            lines.append(line)
            continue
        ep = episode_line(path, line, obj, problem, set(episodes), len(episodes))
        states, actions = np.asarray(ep.states, np.int64), np.asarray(ep.actions, np.int64)
        try:
            discounted_features(problem.mdp, states, actions)
        except InputError as err:
            raise InputError(f"{path} line {line}: episode {ep.name!r}: {err}") from None
        episodes[ep.name], where[ep.name] = (states, actions), line
    if not pairs:
        raise InputError(f"{path}: no answers; expected lines like "
                         '{"preferred": "walk-1", "other": "walk-2"}')
    for (win, lose), line in zip(pairs, lines, strict=True):
        for name in (win, lose):
            if name not in episodes:
                raise InputError(f"{path} line {line}: episode {name!r} is not in the file"
                                 + (f"; episodes are {', '.join(sorted(episodes))}"
                                    if len(episodes) <= 10 else ""))
    return ComparisonFile(episodes, pairs, lines)


def _answer(path, line, obj) -> tuple[str, str]:
    if "tie" in obj or obj.get("preferred") is None:
        raise InputError(f"{path} line {line}: a tie or 'no preference' answer; the choice "
                         "model has no outcome for it (leave such answers out and say so)")
    if set(obj) != ANSWER_KEYS:
        raise InputError(f"{path} line {line}: keys {sorted(obj)}; an answer has exactly "
                         "preferred and other")
    names = []
    for key in ("preferred", "other"):
        v = obj[key]
        if isinstance(v, bool) or not isinstance(v, str | int):
            raise InputError(f"{path} line {line}: {key} {v!r} is not an episode id")
        names.append(str(v))
    if names[0] == names[1]:
        raise InputError(f"{path} line {line}: episode {names[0]!r} compared with itself")
    return names[0], names[1]
