"""Episode files with unrecorded actions or states: the demonstration formats with blanks.

The CSV and JSON Lines formats of :mod:`bayesirl.io.demofiles`, where a step may leave its
action or its state out (an empty CSV field, ``null`` in JSON Lines): state-only walks from
tracking, logs that dropped samples. In CSV an empty ``action`` on an episode's last row
still records the state the episode ended in; an empty ``state`` (or empty ``row`` and
``col``) is a state that was not recorded. The first state of an episode must be recorded.

Episodes with nothing missing become :class:`~bayesirl.model.Demonstrations` (the Boltzmann
term); the others :class:`~bayesirl.evidence.PartialEpisodes`. Every recorded piece is
checked against the dynamics and the horizon, each error naming the file, line and value.
"""

from __future__ import annotations

import csv
import io
import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.episodes import PartialEpisodes, first_impossible
from bayesirl.io.demofiles import CSV_SUFFIXES, JSONL_SUFFIXES, _action, _state, _whole
from bayesirl.io.fields import path_argument, read_text
from bayesirl.model import Demonstrations


@dataclass
class EpisodeFile:
    """What an episode file holds, split by how completely each episode was recorded."""

    names: list[str]  # every episode's id, in file order
    demonstrations: Demonstrations | None  # episodes with nothing missing
    complete: list[str]  # their ids
    partial: PartialEpisodes | None  # episodes with an unrecorded action or state
    incomplete: list[str]  # their ids
    episodes: dict  # id -> (states, actions) with -1 for not recorded


class _Ep:
    def __init__(self, name: str) -> None:
        self.name, self.states, self.actions, self.lines = name, [], [], []


def read_episodes(path, problem) -> EpisodeFile:
    """Read a CSV or JSON Lines episode file (blanks allowed) and check it against ``problem``."""
    path = path_argument(path)
    text = read_text(path, "episode file")
    if not text.strip():
        raise InputError(f"{path}: the file is empty; expected episodes")
    suffix = path.suffix.lower()
    if suffix in CSV_SUFFIXES:
        eps = _csv(path, text, problem)
    elif suffix in JSONL_SUFFIXES:
        eps = _jsonl(path, text, problem)
    else:
        raise InputError(f"{path}: unknown episode format {suffix!r}; expected .csv, .jsonl or "
                         ".ndjson")
    if suffix in CSV_SUFFIXES:
        for ep in eps:
            check_episode(path, ep, problem)
    arrays = {e.name: (np.asarray(e.states, dtype=np.int64), np.asarray(e.actions, np.int64))
              for e in eps}
    full = [e.name for e in eps if min(e.states) >= 0 and min(e.actions) >= 0]
    part = [e.name for e in eps if e.name not in set(full)]
    demos = (Demonstrations.from_arrays([arrays[n][0] for n in full], [arrays[n][1] for n in full])
             if full else None)
    partial = (PartialEpisodes([arrays[n][0] for n in part], [arrays[n][1] for n in part])
               if part else None)
    return EpisodeFile([e.name for e in eps], demos, full, partial, part, arrays)


def check_episode(path, ep: _Ep, problem) -> None:
    """Horizon, first state and every recorded piece against the dynamics, with the line."""
    mdp = problem.mdp
    if not ep.actions:
        raise InputError(f"{path} line {ep.lines[0]}: episode {ep.name!r} has no steps")
    if ep.states[0] < 0:
        raise InputError(f"{path} line {ep.lines[0]}: episode {ep.name!r}: the first state is "
                         "not recorded; an episode starts at a known state")
    if mdp.horizon is not None and len(ep.actions) > mdp.horizon:
        hidden = sum(s < 0 for s in ep.states)
        why = f" (with {hidden} unrecorded states)" if hidden else ""
        raise InputError(f"{path} line {ep.lines[mdp.horizon]}: episode {ep.name!r} has "
                         f"{len(ep.actions)} steps{why}, more than the horizon {mdp.horizon}")
    one = PartialEpisodes([ep.states], [ep.actions])
    found = first_impossible(mdp, *one.pieces(mdp))
    if found is not None:
        line = ep.lines[min(found[1], len(ep.lines) - 1)]
        raise InputError(f"{path} line {line}: episode {ep.name!r} {found[2]}")


def _csv(path: Path, text: str, problem) -> list[_Ep]:
    reader = csv.reader(io.StringIO(text))
    try:
        header = [h.strip().lower() for h in next(reader)]
        base = {"episode", "step", "action"}
        if set(header) not in (base | {"state"}, base | {"row", "col"}) \
                or len(header) != len(set(header)):
            raise InputError(f"{path} line 1: columns {', '.join(header)}; expected episode, "
                             "step, state, action (or episode, step, row, col, action); "
                             "episodes with unrecorded parts have no demonstrator column yet")
        return _csv_rows(path, reader, problem, {h: i for i, h in enumerate(header)})
    except csv.Error as err:
        raise InputError(f"{path} line {reader.line_num}: not readable as CSV ({err})") from None


def _csv_rows(path, reader, problem, col) -> list[_Ep]:
    eps: dict[str, _Ep] = {}
    current = None
    for line, row in enumerate(reader, start=2):
        if not any(x.strip() for x in row):
            continue
        if len(row) != len(col):
            raise InputError(f"{path} line {line}: {len(row)} values; expected {len(col)}")
        get = {h: row[i].strip() for h, i in col.items()}
        if not get["episode"]:
            raise InputError(f"{path} line {line}: empty episode id")
        if current is None or get["episode"] != current.name:
            if get["episode"] in eps:
                raise InputError(f"{path} line {line}: episode {get['episode']!r} continues "
                                 "after another episode; keep each episode's rows together")
            current = eps.setdefault(get["episode"], _Ep(get["episode"]))
        step = _whole(path, line, "step", get["step"])
        if step != len(current.states):
            raise InputError(f"{path} line {line}: episode {current.name!r} step "
                             f"{get['step']}; expected step {len(current.states)}")
        current.states.append(_csv_state(path, line, problem, get))
        current.lines.append(line)
        if get["action"]:
            current.actions.append(_action(path, line, problem, get["action"]))
        else:
            current.actions.append(-1)
    for ep in eps.values():  # an empty action on the last row: the state the episode ended in
        if ep.actions[-1] < 0:
            ep.actions.pop()
    if not eps:
        raise InputError(f"{path}: only a header; expected one row per step")
    return list(eps.values())


def _csv_state(path, line, problem, get) -> int:
    if "state" in get:
        return -1 if get["state"] == "" else _state(path, line, problem, get["state"])
    if get["row"] == "" and get["col"] == "":
        return -1
    return _state(path, line, problem, row=get["row"], col=get["col"])


def _jsonl(path: Path, text: str, problem) -> list[_Ep]:
    eps: list[_Ep] = []
    for line, obj in json_lines(path, text):
        eps.append(episode_line(path, line, obj, problem, {e.name for e in eps}, len(eps)))
    return eps


def json_lines(path: Path, text: str):
    """``(line number, object)`` of every non-blank line, each checked to be JSON."""
    for line, raw in enumerate(text.splitlines(), start=1):
        if not raw.strip():
            continue
        try:
            yield line, json.loads(raw)
        except (json.JSONDecodeError, RecursionError):
            raise InputError(f"{path} line {line}: not a valid JSON object") from None


def episode_line(path, line, obj, problem, taken, k) -> _Ep:
    """One JSON Lines episode (states or cells with nulls, actions with nulls), checked."""
    if not isinstance(obj, dict) or set(obj) - {"episode", "states", "cells", "actions"} \
            or ("states" in obj) == ("cells" in obj) or "actions" not in obj:
        raise InputError(f"{path} line {line}: expected an object with episode (optional), "
                         "actions and exactly one of states or cells")
    key = "states" if "states" in obj else "cells"
    if not isinstance(obj[key], list) or not isinstance(obj["actions"], list):
        raise InputError(f"{path} line {line}: {key} and actions must be lists")
    name = obj.get("episode", k)
    if isinstance(name, bool) or not isinstance(name, str | int) or str(name) in taken:
        raise InputError(f"{path} line {line}: episode id {name!r} is not a new string "
                         "or whole number")
    ep = _Ep(str(name))
    ep.states = [_json_state(path, line, problem, key, x) for x in obj[key]]
    ep.actions = [-1 if a is None else _action(path, line, problem, a) for a in obj["actions"]]
    if len(ep.states) not in (len(ep.actions), len(ep.actions) + 1):
        raise InputError(f"{path} line {line}: {len(ep.actions)} actions and "
                         f"{len(ep.states)} {key}; expected as many {key} or one more")
    if len(ep.states) == len(ep.actions):
        ep.states.append(-1)
    ep.lines = [line] * (len(ep.states) + 1)
    check_episode(path, ep, problem)
    return ep


def _json_state(path, line, problem, key, x) -> int:
    if x is None:
        return -1
    if key == "cells":
        if not (isinstance(x, list) and len(x) == 2):
            raise InputError(f"{path} line {line}: cell {x!r} is not a [row, col] pair or null")
        return _state(path, line, problem, row=x[0], col=x[1])
    return _state(path, line, problem, x)


def write_episodes(path, episodes: dict, problem) -> Path:
    """Write ``{id: (states, actions)}`` (-1 = not recorded) as CSV with blanks, cells on a
    map; the inverse of :func:`read_episodes` for CSV."""
    from bayesirl.files import write_text

    grid = problem.mdp.grid_shape
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(["episode", "step", "row", "col", "action"] if grid
               else ["episode", "step", "state", "action"])
    for name, (states, actions) in episodes.items():
        for t, s in enumerate(states):
            where = ([""] * (2 if grid else 1) if s < 0 else
                     list(divmod(int(s), grid[1])) if grid else [int(s)])
            act = (problem.action_label(int(actions[t])) if t < len(actions) and actions[t] >= 0
                   else "")
            w.writerow([name, t, *where, act])
    return write_text(Path(path), out.getvalue())
