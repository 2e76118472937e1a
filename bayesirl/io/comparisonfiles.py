"""Comparison files (JSON Lines): the episodes shown, then which of two was preferred.

Each line is either an episode, written as in an episode file (``{"episode": id, "states" or
"cells": [...], "actions": [...]}``), an answer ``{"preferred": id, "other": id}`` naming
two episodes of the same file, or a "no preference" answer ``{"no_preference": [id, id]}``.
Episodes may appear in any order before or after the answers that name them. The episodes
shown to a judge are not demonstrations: they enter only through the answers
(:class:`~bayesirl.evidence.ComparisonTerm`).

"No preference" answers are modelled by Davidson's (1970) tie extension, which needs its tie
parameter: the problem file's ``[judge] tie`` (a number or ``{ log_mean, log_sd }``). A file
with such answers and a problem without it is refused, naming the first such line: the
logistic model has no outcome for them, and dropping or splitting them would misstate the
evidence.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.comparisons import ComparisonTerm, discounted_features
from bayesirl.io.episodefiles import episode_line, json_lines
from bayesirl.io.fields import path_argument, read_text

ANSWER_KEYS = {"preferred", "other"}
TIE_KEY = "no_preference"


@dataclass
class ComparisonFile:
    """Episodes by id, answers as (preferred, other) ids, and each answer's line."""

    episodes: dict
    pairs: list[tuple[str, str]]
    lines: list[int]
    ties: list[bool] = field(default_factory=list)

    def term(self, mdp, rationality=1.0, tie=None) -> ComparisonTerm:
        """The evidence term of these answers (``rationality``, ``tie``: numbers or priors)."""
        return ComparisonTerm.from_episodes(mdp, self.episodes, self.pairs,
                                            rationality=rationality,
                                            ties=self.ties or None, tie=tie)


def _episode(path, line: int, obj, problem, episodes: dict):
    """An episode line of a comparisons or questions file: ``(episode, states, actions)``,
    refused (naming file and line) when its discounted return cannot be formed."""
    ep = episode_line(path, line, obj, problem, set(episodes), len(episodes))
    states, actions = np.asarray(ep.states, np.int64), np.asarray(ep.actions, np.int64)
    try:
        discounted_features(problem.mdp, states, actions)
    except InputError as err:
        raise InputError(f"{path} line {line}: episode {ep.name!r}: {err}") from None
    return ep, states, actions


def read_comparisons(path, problem) -> ComparisonFile:
    """Read and check a comparison file against ``problem`` (errors name file and line)."""
    path = path_argument(path)
    if path.suffix.lower() not in (".jsonl", ".ndjson"):
        raise InputError(f"{path}: comparison files are JSON Lines (.jsonl or .ndjson)")
    text = read_text(path, "comparison file")
    episodes, where, pairs, lines, ties = {}, {}, [], [], []
    for line, obj in json_lines(path, text):
        if isinstance(obj, dict) and ("preferred" in obj or "other" in obj or TIE_KEY in obj
                                      or "tie" in obj):
            tie = TIE_KEY in obj
            pairs.append(_tie(path, line, obj) if tie else _answer(path, line, obj))
            lines.append(line)
            ties.append(tie)
            continue
        ep, states, actions = _episode(path, line, obj, problem, episodes)
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
    if any(ties) and problem.judge["tie"] is None:
        raise InputError(f"{path} line {lines[ties.index(True)]}: a 'no preference' answer "
                         f"({sum(ties)} in the file); modelling it needs Davidson's tie "
                         f"parameter: add to {problem.source} [judge] tie = {{ log_mean = "
                         "0.0, log_sd = 1.0 }} (or a number), or leave such answers out and "
                         "say so")
    return ComparisonFile(episodes, pairs, lines, ties)


def _tie(path, line, obj) -> tuple[str, str]:
    v = obj[TIE_KEY]
    if set(obj) != {TIE_KEY}:
        raise InputError(f"{path} line {line}: keys {sorted(obj)}; a 'no preference' answer "
                         f"has only {TIE_KEY}")
    ok = isinstance(v, list) and len(v) == 2 and all(
        isinstance(x, str | int) and not isinstance(x, bool) for x in v)
    if not ok:
        raise InputError(f"{path} line {line}: {TIE_KEY} {v!r} is not a list of two "
                         "episode ids")
    if str(v[0]) == str(v[1]):
        raise InputError(f"{path} line {line}: episode {str(v[0])!r} compared with itself")
    return str(v[0]), str(v[1])


def _answer(path, line, obj) -> tuple[str, str]:
    if "tie" in obj or obj.get("preferred") is None:
        raise InputError(f"{path} line {line}: a tie or 'no preference' answer is written "
                         f'{{"{TIE_KEY}": [id, id]}}')
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


def read_candidates(path, problem) -> tuple[dict, list[tuple[str, str]]]:
    """A file of candidate questions for ``bayesirl suggest --comparisons``: episodes as in a
    comparison file, and lines ``{"ask": [id, id]}`` naming the pairs to consider (without
    any, every pair of the file's episodes). Returns ``(episodes, pairs)``."""
    path = path_argument(path)
    if path.suffix.lower() not in (".jsonl", ".ndjson"):
        raise InputError(f"{path}: candidate files are JSON Lines (.jsonl or .ndjson)")
    episodes, asks = {}, []
    for line, obj in json_lines(path, read_text(path, "candidate file")):
        if isinstance(obj, dict) and "ask" in obj:
            v = obj["ask"]
            ok = set(obj) == {"ask"} and isinstance(v, list) and len(v) == 2 and all(
                isinstance(x, str | int) and not isinstance(x, bool) for x in v)
            if not ok or str(v[0]) == str(v[1]):
                raise InputError(f"{path} line {line}: expected {{\"ask\": [id, id]}} naming "
                                 f"two different episodes; got {obj!r}")
            asks.append((line, str(v[0]), str(v[1])))
            continue
        ep, states, actions = _episode(path, line, obj, problem, episodes)
        episodes[ep.name] = (states, actions)
    for line, a, b in asks:
        for name in (a, b):
            if name not in episodes:
                raise InputError(f"{path} line {line}: episode {name!r} is not in the file")
    names = list(episodes)
    pairs = ([(a, b) for _, a, b in asks] if asks else
             [(names[i], names[j]) for i in range(len(names)) for j in range(i + 1, len(names))])
    if not pairs:
        raise InputError(f"{path}: no question to rank; give at least two episodes")
    return episodes, pairs
