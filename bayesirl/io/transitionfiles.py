"""Logged-transition files and the problem file's ``[dynamics]`` table.

A transitions file is CSV with a header row naming the columns ``state, action,
next_state`` and optionally ``count`` (how many times the row's transition was logged; 1
when absent or empty). Actions are names from the problem or indices. Blank lines and lines
starting with ``#`` are skipped. The format, with a complete example, is in
docs/dynamics.md ("The logged-transitions file").
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from bayesirl.errors import InputError
from bayesirl.io.arrays import read_npz
from bayesirl.io.fields import Table, path_argument, read_text
from bayesirl.model.transitions import SUPPORTS, TransitionLog

REQUIRED = ("state", "action", "next_state")
COLUMNS = (*REQUIRED, "count")
DYNAMICS_KEYS = {"transitions", "concentration", "support", "pattern", "draws",
                 "demonstrations", "slip"}


@dataclass(frozen=True)
class DynamicsSettings:
    """The ``[dynamics]`` table: where the transition evidence comes from and its prior."""

    transitions: Path | None  # the logged-transitions file, if any
    concentration: float  # Dirichlet parameter of every possible next state
    support: str  # "model", "observed" or "pattern"
    pattern: Path | None  # .npz with a boolean "support" array (S, A, S), for "pattern"
    draws: int  # dynamics draws of the cut posterior
    demonstrations: bool  # count the transitions inside the demonstrations too
    slip: tuple[float, float] | None = None  # a map's one slip probability: Beta(a, b) prior


def dynamics_from(table: Table) -> DynamicsSettings:
    """Check a ``[dynamics]`` table (see docs/dynamics.md)."""
    table.only(DYNAMICS_KEYS)
    support = table.string("support", "model", choices=SUPPORTS)
    pattern = table.path("pattern", None)
    if (support == "pattern") != (pattern is not None):
        raise InputError(f"{table.where('pattern')}: give a pattern file exactly when "
                         "support = \"pattern\"")
    slip = None
    if "slip" in table:
        v = table.data["slip"]
        ok = isinstance(v, list) and len(v) == 2 and all(
            isinstance(x, int | float) and not isinstance(x, bool) and 0 < x < float("inf")
            for x in v)
        if not ok:
            raise table.fail("slip", v, "[a, b], the two positive parameters of the slip "
                             "probability's Beta prior")
        if "concentration" in table or "support" in table or pattern is not None:
            raise InputError(f"{table.where('slip')}: a map's slip probability replaces the "
                             "per-row Dirichlet: drop concentration, support and pattern")
        slip = (float(v[0]), float(v[1]))
    return DynamicsSettings(
        slip=slip,
        transitions=table.path("transitions", None),
        concentration=table.number("concentration", 1.0, low=0.0, low_open=True),
        support=support, pattern=pattern, draws=table.integer("draws", 8, low=2),
        demonstrations=table.boolean("demonstrations", True))


def read_pattern(path: Path, shape: tuple[int, int, int]) -> np.ndarray:
    """The boolean ``support`` array ``(S, A, S)`` of a pattern ``.npz`` file."""
    data = read_npz(path)
    if "support" not in data:
        raise InputError(f"{path}: no array 'support'; expected a boolean (S, A, S) array")
    arr = data["support"]
    if arr.shape != shape or arr.dtype.kind not in "bui":
        raise InputError(f"{path}: 'support' has shape {arr.shape} and dtype {arr.dtype}; "
                         f"expected booleans of shape {shape}")
    return arr.astype(bool)


def read_transitions(path, problem) -> tuple[TransitionLog, np.ndarray]:
    """Read and check a logged-transitions file against ``problem``.

    Returns
    -------
    (TransitionLog, lines)
        The records and the file line of each (for later messages).

    Raises
    ------
    InputError
        Naming the file, the line, the column and the value.
    """
    path = path_argument(path)
    text = read_text(path, "transitions file")
    rows = [(k, r) for k, r in enumerate(csv.reader(io.StringIO(text)), start=1)
            if r and any(c.strip() for c in r) and not r[0].lstrip().startswith("#")]
    if not rows:
        raise InputError(f"{path}: no header and no transitions; expected a header row "
                         "state,action,next_state[,count] and one row per transition")
    line, header = rows[0]
    cols = [c.strip() for c in header]
    _check_header(path, line, cols)
    out, lines = [], []
    for k, r in rows[1:]:
        if len(r) != len(cols):
            raise InputError(f"{path}: line {k}: {len(r)} fields; expected {len(cols)} "
                             f"({', '.join(cols)})")
        cell = dict(zip(cols, (c.strip() for c in r), strict=True))
        out.append(_record(path, k, cell, problem))
        lines.append(k)
    if not out:
        raise InputError(f"{path}: a header but no transitions")
    arr = np.array(out, dtype=np.int64).reshape(-1, 4)
    log = TransitionLog(arr[:, 0], arr[:, 1], arr[:, 2], arr[:, 3].astype(np.float64))
    return log, np.asarray(lines, dtype=np.int64)


def check_support(path, log: TransitionLog, lines: np.ndarray, support, n_actions: int,
                  problem) -> None:
    """Every logged outcome must be possible; else an error naming the first bad line."""
    rows = log.states * n_actions + log.actions
    ok = np.asarray(support[rows, log.next_states]).ravel().astype(bool)
    if not ok.all():
        i = int(np.flatnonzero(~ok)[0])
        s, a, n = (int(x[i]) for x in (log.states, log.actions, log.next_states))
        raise InputError(f"{path}: line {int(lines[i])}: next_state {n} is impossible after "
                         f"state {s}, action {problem.action_label(a)} (not in the support; "
                         "see [dynamics] support)")


def _check_header(path: Path, line: int, cols: list[str]) -> None:
    for c in cols:
        if c not in COLUMNS:
            raise InputError(f"{path}: line {line}: unknown column {c!r}; expected "
                             f"{', '.join(REQUIRED)} and optionally count")
    if len(set(cols)) != len(cols):
        raise InputError(f"{path}: line {line}: a column is named twice ({', '.join(cols)})")
    missing = [c for c in REQUIRED if c not in cols]
    if missing:
        raise InputError(f"{path}: line {line}: missing column {missing[0]!r}; expected "
                         f"{', '.join(REQUIRED)} and optionally count")


def _record(path: Path, line: int, cell: dict, problem) -> tuple[int, int, int, int]:
    n_s = problem.mdp.n_states
    s = _index(path, line, "state", cell["state"], n_s)
    a = problem.action_index(cell["action"])
    if a is None:
        names = ", ".join(problem.action_names or ()) or f"0..{problem.mdp.n_actions - 1}"
        raise InputError(f"{path}: line {line}: action {cell['action']!r} is not an action "
                         f"of the problem ({names})")
    n = _index(path, line, "next_state", cell["next_state"], n_s)
    count = cell.get("count", "") or "1"
    if not _digits(count) or int(count) < 1:
        raise InputError(f"{path}: line {line}: count {cell.get('count')!r}: expected a "
                         "whole number >= 1")
    if int(count) > 10**12:
        raise InputError(f"{path}: line {line}: count {count}: more than 10^12 transitions "
                         "in one row is surely a mistake")
    return s, a, n, int(count)


def _index(path: Path, line: int, col: str, text: str, n: int) -> int:
    if not _digits(text) or int(text) >= n:
        raise InputError(f"{path}: line {line}: {col} {text!r}: expected a state index "
                         f"0..{n - 1}")
    return int(text)


def _digits(text: str) -> bool:
    """ASCII digits only (``str.isdigit`` also accepts superscripts that ``int`` refuses)."""
    return text.isascii() and text.isdigit()


def dynamics_posterior(problem, demos=None):
    """The Dirichlet posterior of the dynamics that ``problem``'s ``[dynamics]`` describes,
    or None when the problem has no ``[dynamics]`` table (plug-in dynamics).

    The logged transitions (if a file is named) and, with ``demonstrations = true``, those
    inside ``demos`` are the counts; the support comes from ``support``.
    """
    from bayesirl.model.transitions import (
        DynamicsPosterior,
        join_logs,
        log_from_demonstrations,
        support_of,
    )

    d = problem.dynamics
    if d is None:
        return None
    mdp = problem.mdp
    logs, filed = [], None
    if d.transitions is not None:
        filed = read_transitions(d.transitions, problem)
        logs.append(filed[0])
    if d.demonstrations and demos is not None:
        logs.append(log_from_demonstrations(demos))
    if not logs:
        raise InputError(f"{problem.source}: [dynamics] names no transitions file and "
                         "demonstrations = false: there is no transition evidence")
    log = join_logs(*logs)
    if d.slip is not None:
        return _slip_posterior(problem, log, filed)
    pattern = None
    if d.support == "pattern":
        pattern = read_pattern(d.pattern, (mdp.n_states, mdp.n_actions, mdp.n_states))
    support = support_of(d.support, mdp.transitions, mdp.n_actions, log, pattern)
    if filed is not None:
        check_support(d.transitions, *filed, support, mdp.n_actions, problem)
    try:
        return DynamicsPosterior(support, log, n_actions=mdp.n_actions,
                                 concentration=d.concentration)
    except InputError as err:  # only the demonstrations' transitions are left to fail
        raise InputError(f"demonstrations: {err}") from None


def _slip_posterior(problem, log, filed):
    """A ``[map]`` problem's slip posterior (the map is read again for its two matrices)."""
    from bayesirl.io.fields import load_toml
    from bayesirl.io.grid import grid_arrays, parse_map
    from bayesirl.model.slip import SlipPosterior

    if problem.world != "map":
        raise InputError(f"{problem.source}: [dynamics] slip needs a [map] world (a "
                         f"[{problem.world}] problem has no slip probability)")
    grid = parse_map(Table(load_toml(problem.source), problem.source, "").table("map"))
    intended = grid_arrays(grid._replace(slip=0.0))[0]
    slipped = grid_arrays(grid._replace(slip=1.0))[0]
    if filed is not None:
        support = (intended + slipped).astype(bool).tocsr()
        check_support(problem.dynamics.transitions, *filed, support, problem.mdp.n_actions,
                      problem)
    try:
        return SlipPosterior(intended, slipped, log, n_actions=problem.mdp.n_actions,
                             prior=problem.dynamics.slip)
    except InputError as err:
        raise InputError(f"demonstrations: {err}") from None
