"""Transition tables of gymnasium toy-text environments (``env.unwrapped.P``).

The table maps ``s -> a -> [(prob, s', reward, terminated), ...]``. Environments disagree on
what happens after termination: FrozenLake's holes and goal already loop to themselves,
CliffWalking's goal keeps ordinary moves, and Taxi's post-drop-off states are also reached by
ordinary moves. We map a terminal outcome as follows:

* when its target is reached *only* by terminal outcomes, the target itself becomes absorbing
  (its rows are replaced by self-loops);
* otherwise every terminal outcome goes to one extra absorbing state appended at index
  ``S_env``, and the features must then have ``S_env + 1`` rows.

Rewards in the table are ignored: they are what the user wants to learn.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from bayesirl.errors import InputError


def _table(env):
    base = getattr(env, "unwrapped", env)
    table = getattr(base, "P", None)
    if not isinstance(table, dict) or not table:
        raise InputError(
            f"from_gymnasium: {type(base).__name__} has no transition table `unwrapped.P`; "
            "only toy-text environments with a tabular model are supported"
        )
    return base, table


def gymnasium_transitions(env) -> tuple[sp.csr_matrix, np.ndarray | None]:
    """Return the ``(S*A, S)`` transition matrix and the initial-state distribution.

    Duplicate outcomes of one ``(s, a)`` are merged by summing their probabilities.
    """
    base, table = _table(env)
    n_s = len(table)
    n_a = len(table[next(iter(table))])
    outcomes = [(s, a, float(p), int(s2), bool(done))
                for s in range(n_s) for a in range(n_a) for p, s2, _r, done in table[s][a]]
    terminal_to = {s2 for _s, _a, _p, s2, d in outcomes if d}
    ordinary_to = {s2 for _s, _a, _p, s2, d in outcomes if not d}
    extra = bool(terminal_to & ordinary_to)
    n_total = n_s + 1 if extra else n_s
    rows, cols, vals = [], [], []
    for s, a, p, s2, done in outcomes:
        if not extra and s in terminal_to:
            continue  # replaced by a self-loop below
        rows.append(s * n_a + a)
        cols.append(n_s if (done and extra) else s2)
        vals.append(p)
    absorbing = [n_s] if extra else sorted(terminal_to)
    for s in absorbing:
        for a in range(n_a):
            rows.append(s * n_a + a)
            cols.append(s)
            vals.append(1.0)
    m = sp.csr_matrix((vals, (rows, cols)), shape=(n_total * n_a, n_total))
    m.sum_duplicates()
    start = getattr(base, "initial_state_distrib", None)
    if start is not None:
        start = np.asarray(start, dtype=np.float64)
        start = np.concatenate([start, [0.0]]) if extra else start
    return m, start


def check_feature_rows(env, features, n_states: int) -> None:
    """Explain a feature table of the wrong length, including the added terminal state."""
    shape = np.shape(features)
    rows = shape[0] if shape else 0
    _, table = _table(env)
    if rows == n_states:
        return
    if n_states == len(table) + 1:
        raise InputError(
            f"from_gymnasium: features have shape {shape}; expected ({n_states}, F) or "
            f"({n_states}, A, F): "
            f"its {len(table)} states plus one absorbing state (index {len(table)}) that "
            "receives its terminal outcomes, which also lead to states reached without "
            "terminating. Append one row of features for that absorbing state."
        )
    raise InputError(
        f"from_gymnasium: features have shape {shape}; expected ({n_states}, F) or "
        f"({n_states}, A, F) for the environment's {n_states} states"
    )
