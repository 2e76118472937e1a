"""Demonstration files: CSV with one row per step, or JSON Lines with one episode per line.

CSV columns: ``episode, step, state, action`` (or ``row, col`` instead of ``state`` on a map),
optionally ``demonstrator`` (who demonstrated the episode: the same non-empty name on each of
its rows). Steps of an episode are consecutive rows numbered 0, 1, 2, ...; the last row of an
episode may leave ``action`` empty to record the state the episode ended in. JSON Lines: one
object per line, ``{"episode": id, "demonstrator": name (optional), "states": [...] or
"cells": [[r, c], ...], "actions": [...]}``; either every episode names its demonstrator or
none does. Actions are names (from the problem) or indices.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np

from bayesirl.errors import InputError
from bayesirl.files import write_text
from bayesirl.io.fields import path_argument, read_text
from bayesirl.model import Demonstrations

CSV_SUFFIXES = (".csv",)
JSONL_SUFFIXES = (".jsonl", ".ndjson")


class _Episode:
    """States and actions of one episode with the file line of each step."""

    def __init__(self, name: str) -> None:
        self.name, self.states, self.actions, self.lines = name, [], [], []
        self.who: str | None = None  # the demonstrator, when the file names one


def read_demonstrations(path, problem) -> Demonstrations:
    """Read a CSV or JSON Lines file against ``problem`` and check every step.

    Parameters
    ----------
    path : str or Path
        ``.csv``, ``.jsonl`` or ``.ndjson``.
    problem : Problem
        Gives the action names, the map and the dynamics the steps must respect.

    Returns
    -------
    Demonstrations
    """
    path = path_argument(path)
    if not hasattr(problem, "mdp") or not hasattr(problem, "action_index"):
        raise InputError(f"problem: expected a Problem from read_problem; got "
                         f"{type(problem).__name__}")
    text = read_text(path, "demonstration file")
    if not text.strip():
        raise InputError(f"{path}: the file is empty; expected demonstrations "
                         "(one row per step, or one episode per line)")
    suffix = path.suffix.lower()
    if suffix in CSV_SUFFIXES:
        episodes = _read_csv(path, text, problem)
    elif suffix in JSONL_SUFFIXES:
        episodes = _read_jsonl(path, text, problem)
    else:
        raise InputError(f"{path}: unknown demonstration format {suffix!r}; expected .csv, "
                         ".jsonl or .ndjson")
    for ep in episodes:
        _check_episode(path, ep, problem)
    who = [e.who for e in episodes]
    return Demonstrations.from_arrays([np.asarray(e.states, dtype=np.int64) for e in episodes],
                                      [np.asarray(e.actions, dtype=np.int64) for e in episodes],
                                      None if who[0] is None else who)


def _state(path, line, problem, value=None, row=None, col=None) -> int:
    """A state index from ``value`` or from map coordinates ``row``, ``col`` (strings/ints)."""
    mdp = problem.mdp
    if value is None:
        if mdp.grid_shape is None:
            raise InputError(f"{path} line {line}: row/col given but the problem has no map; "
                             "give states by index")
        n_r, n_c = mdp.grid_shape
        r, c = _whole(path, line, "row", row), _whole(path, line, "col", col)
        if not (0 <= r < n_r and 0 <= c < n_c):
            raise InputError(f"{path} line {line}: cell (row={r}, col={c}) is off the map; "
                             f"rows are 0..{n_r - 1}, columns 0..{n_c - 1}")
        s = r * n_c + c
    else:
        s = _whole(path, line, "state", value)
        if not 0 <= s < mdp.n_states:
            raise InputError(f"{path} line {line}: state {s} does not exist; states are "
                             f"0..{mdp.n_states - 1}")
    if s in problem.blocked:
        raise InputError(f"{path} line {line}: state {problem.state_label(s)} is a blocked "
                         "cell; demonstrations cannot visit it")
    return s


def _whole(path, line, what, value) -> int:
    text = str(value).strip()
    if isinstance(value, bool) or not text.lstrip("-").isdigit():
        raise InputError(f"{path} line {line}: {what} {value!r} is not a whole number")
    return int(text)


def _action(path, line, problem, value) -> int:
    a = problem.action_index(str(value).strip()) if not isinstance(value, bool) else None
    if a is None:
        names = ", ".join(problem.action_names or ())
        known = f"one of {names} or " if names else ""
        raise InputError(f"{path} line {line}: action {value!r} is not allowed; expected "
                         f"{known}an index 0..{problem.mdp.n_actions - 1}")
    return a


def _check_episode(path, ep: _Episode, problem) -> None:
    """Horizon and every recorded move against the dynamics, naming the file line."""
    mdp = problem.mdp
    if not ep.actions:
        raise InputError(f"{path} line {ep.lines[0]}: episode {ep.name!r} has no actions")
    if mdp.horizon is not None and len(ep.actions) > mdp.horizon:
        raise InputError(f"{path} line {ep.lines[0]}: episode {ep.name!r} has "
                         f"{len(ep.actions)} steps, more than the horizon {mdp.horizon}")
    p, n_a = mdp.transitions, mdp.n_actions
    for t in range(min(len(ep.actions), len(ep.states) - 1)):
        s, a, s2 = ep.states[t], ep.actions[t], ep.states[t + 1]
        if p[s * n_a + a, s2] <= 0.0:
            raise InputError(
                f"{path} line {ep.lines[t + 1]}: episode {ep.name!r} step {t + 1}: the "
                f"dynamics cannot go from state {problem.state_label(s)} by action "
                f"{problem.action_label(a)!r} to state {problem.state_label(s2)} "
                "(probability 0)")


def _read_csv(path: Path, text: str, problem) -> list[_Episode]:
    reader = csv.reader(io.StringIO(text))
    try:
        return _csv_rows(path, reader, problem)
    except csv.Error as err:
        raise InputError(f"{path} line {reader.line_num}: not readable as CSV ({err})") from None


def _csv_rows(path: Path, reader, problem) -> list[_Episode]:
    header = [h.strip().lower() for h in next(reader)]
    base = {"episode", "step", "action"}
    layouts = (base | {"state"}, base | {"row", "col"})
    if set(header) - {"demonstrator"} not in layouts or len(header) != len(set(header)):
        raise InputError(f"{path} line 1: columns {', '.join(header)}; expected episode, "
                         "step, state, action (or episode, step, row, col, action), and "
                         "optionally demonstrator")
    col = {h: i for i, h in enumerate(header)}
    episodes: dict[str, _Episode] = {}
    current, ended = None, False
    for line, row in enumerate(reader, start=2):
        if not any(x.strip() for x in row):
            continue
        if len(row) != len(header):
            raise InputError(f"{path} line {line}: {len(row)} values; expected {len(header)} "
                             f"({', '.join(header)})")
        get = {h: row[i].strip() for h, i in col.items()}
        name = get["episode"]
        if not name:
            raise InputError(f"{path} line {line}: empty episode id")
        if name != (current.name if current else None):
            if name in episodes:
                raise InputError(f"{path} line {line}: episode {name!r} continues after "
                                 "another episode; keep each episode's rows together")
            current, ended = episodes.setdefault(name, _Episode(name)), False
        if "demonstrator" in col:
            _csv_demonstrator(path, line, current, get["demonstrator"])
        step = _whole(path, line, "step", get["step"])
        if ended or step != len(current.states):
            raise InputError(f"{path} line {line}: episode {name!r} step {get['step']}; "
                             f"expected step {len(current.states)}"
                             + (" (the episode already ended with an empty action)"
                                if ended else ""))
        s = (_state(path, line, problem, get["state"]) if "state" in col
             else _state(path, line, problem, row=get["row"], col=get["col"]))
        current.states.append(s)
        current.lines.append(line)
        if get["action"] == "":
            ended = True  # the state the episode ended in
        else:
            current.actions.append(_action(path, line, problem, get["action"]))
    if not episodes:
        raise InputError(f"{path}: only a header; expected one row per demonstrated step")
    return list(episodes.values())


def _csv_demonstrator(path, line, episode: _Episode, who: str) -> None:
    if not who:
        raise InputError(f"{path} line {line}: empty demonstrator; name who demonstrated "
                         f"episode {episode.name!r} on each of its rows")
    if episode.who is not None and who != episode.who:
        raise InputError(f"{path} line {line}: episode {episode.name!r} has demonstrator "
                         f"{who!r} here but {episode.who!r} on its earlier rows")
    episode.who = who


def _read_jsonl(path: Path, text: str, problem) -> list[_Episode]:
    episodes, names = [], set()
    for line, raw in enumerate(text.splitlines(), start=1):
        if not raw.strip():
            continue
        try:
            obj = json.loads(raw)
        except json.JSONDecodeError as err:
            raise InputError(f"{path} line {line}: not valid JSON ({err.msg} at column "
                             f"{err.colno})") from None
        except RecursionError:
            raise InputError(f"{path} line {line}: JSON nested too deeply to be an "
                             "episode") from None
        ep = _jsonl_episode(path, line, obj, problem, len(episodes))
        if ep.name in names:
            raise InputError(f"{path} line {line}: episode {ep.name!r} appears more than once")
        names.add(ep.name)
        if episodes and (ep.who is None) != (episodes[0].who is None):
            raise InputError(f"{path} line {line}: " + (
                "no demonstrator, while earlier episodes name theirs" if ep.who is None else
                "names a demonstrator, while earlier episodes do not")
                + "; name the demonstrator of every episode or of none")
        episodes.append(ep)
    return episodes


def _jsonl_episode(path, line, obj, problem, k) -> _Episode:
    if not isinstance(obj, dict):
        raise InputError(f"{path} line {line}: expected an object with states (or cells) and "
                         f"actions; got {type(obj).__name__}")
    extra = set(obj) - {"episode", "demonstrator", "states", "cells", "actions"}
    if extra or ("states" in obj) == ("cells" in obj) or "actions" not in obj:
        raise InputError(f"{path} line {line}: keys {sorted(obj)}; expected episode and "
                         "demonstrator (both optional), actions and exactly one of states or "
                         "cells")
    name = obj.get("episode", k)
    if isinstance(name, bool) or not isinstance(name, str | int):
        raise InputError(f"{path} line {line}: episode id {name!r} is not a string or a "
                         "whole number")
    ep = _Episode(str(name))
    if "demonstrator" in obj:
        who = obj["demonstrator"]
        if not isinstance(who, str) or not who.strip():
            raise InputError(f"{path} line {line}: demonstrator must be a non-empty name; "
                             f"got {who!r}")
        ep.who = who.strip()
    seq_key = "states" if "states" in obj else "cells"
    for key in (seq_key, "actions"):
        if not isinstance(obj[key], list):
            raise InputError(f"{path} line {line}: {key} must be a list; got {obj[key]!r}")
    for x in obj[seq_key]:
        if seq_key == "cells":
            if not (isinstance(x, list) and len(x) == 2):
                raise InputError(f"{path} line {line}: cell {x!r} is not a [row, col] pair")
            ep.states.append(_state(path, line, problem, row=x[0], col=x[1]))
        elif x is None:  # not "no state given", which means row/col to _state
            raise InputError(f"{path} line {line}: state None is not a whole number")
        else:
            ep.states.append(_state(path, line, problem, x))
    ep.actions = [_action(path, line, problem, a) for a in obj["actions"]]
    ep.lines = [line] * (len(ep.states) + 1)
    n_s, n_a = len(ep.states), len(ep.actions)
    if n_s not in (n_a, n_a + 1):
        raise InputError(f"{path} line {line}: {n_a} actions and {n_s} {seq_key}; expected "
                         f"{n_a} or {n_a + 1} {seq_key}")
    return ep


def write_demonstrations(path, demos: Demonstrations, problem, names=None) -> Path:
    """Write ``demos`` as CSV or JSON Lines (by suffix), with action names and map cells.

    ``names`` are the episode ids (default ``episode-1``, ``episode-2``, ...).
    """
    path = Path(path)
    names = names or [f"episode-{k + 1}" for k in range(demos.n_episodes)]
    grid = problem.mdp.grid_shape
    who = demos.demonstrators
    if path.suffix.lower() in JSONL_SUFFIXES:
        lines = []
        for k, (name, (s, a)) in enumerate(zip(names, demos.episodes, strict=True)):
            obj = {"episode": name} | ({} if who is None else {"demonstrator": who[k]})
            if grid:
                obj["cells"] = [list(divmod(int(x), grid[1])) for x in s]
            else:
                obj["states"] = [int(x) for x in s]
            obj["actions"] = [problem.action_label(int(x)) for x in a]
            lines.append(json.dumps(obj))
        return write_text(path, "\n".join(lines) + "\n")
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow((["episode", "step", "row", "col", "action"] if grid
                else ["episode", "step", "state", "action"])
               + ([] if who is None else ["demonstrator"]))
    for k, (name, (s, a)) in enumerate(zip(names, demos.episodes, strict=True)):
        for t, state in enumerate(s):
            where = list(divmod(int(state), grid[1])) if grid else [int(state)]
            act = problem.action_label(int(a[t])) if t < len(a) else ""
            w.writerow([name, t, *where, act] + ([] if who is None else [who[k]]))
    return write_text(path, out.getvalue())
