"""Recorded demonstrations: episodes of states and actions."""

from __future__ import annotations

from collections.abc import Sequence
from typing import NamedTuple

import numpy as np

from bayesirl.errors import InputError


class Steps(NamedTuple):
    """All demonstrated steps flattened: one entry per (state, action) pair."""

    states: np.ndarray  # int64 (N,)
    actions: np.ndarray  # int64 (N,)
    times: np.ndarray  # int64 (N,) step index within its episode
    episodes: np.ndarray  # int64 (N,) episode index


class Demonstrations:
    """A set of episodes, each with ``T`` actions and ``T`` or ``T + 1`` states.

    Build with :meth:`from_arrays`. Ranges and dynamics are checked against a model by
    :meth:`check` (the likelihood and simulation call it).
    """

    def __init__(self, episodes: Sequence[tuple[np.ndarray, np.ndarray]], *,
                 demonstrators: Sequence[str] | None = None) -> None:
        if len(episodes) == 0:
            raise InputError("demonstrations: the set is empty; give at least one episode")
        self.episodes = tuple((s, a) for s, a in episodes)
        self.demonstrators = _labels(demonstrators, len(self.episodes))
        lengths = [a.shape[0] for _, a in self.episodes]
        self.lengths = np.asarray(lengths, dtype=np.int64)
        self.steps = Steps(
            np.concatenate([s[: a.shape[0]] for s, a in self.episodes]),
            np.concatenate([a for _, a in self.episodes]),
            np.concatenate([np.arange(n, dtype=np.int64) for n in lengths]),
            np.repeat(np.arange(len(lengths), dtype=np.int64), lengths),
        )

    @classmethod
    def from_arrays(cls, states_list, actions_list, demonstrators=None) -> Demonstrations:
        """One episode per ``(states, actions)`` pair of integer sequences.

        ``demonstrators``, if given, names who demonstrated each episode (one non-empty
        string per episode); without it every episode is from one unnamed demonstrator.
        """
        states_list, actions_list = list(states_list), list(actions_list)
        if len(states_list) != len(actions_list):
            raise InputError(
                f"demonstrations: {len(states_list)} state sequences but "
                f"{len(actions_list)} action sequences"
            )
        episodes = []
        for k, (s, a) in enumerate(zip(states_list, actions_list, strict=True)):
            s_arr = _int_array(s, f"demonstrations: episode {k} states")
            a_arr = _int_array(a, f"demonstrations: episode {k} actions")
            if a_arr.shape[0] == 0:
                raise InputError(f"demonstrations: episode {k} has no actions")
            if s_arr.shape[0] not in (a_arr.shape[0], a_arr.shape[0] + 1):
                raise InputError(
                    f"demonstrations: episode {k} has {a_arr.shape[0]} actions and "
                    f"{s_arr.shape[0]} states; expected {a_arr.shape[0]} or {a_arr.shape[0] + 1}"
                )
            episodes.append((s_arr, a_arr))
        return cls(episodes, demonstrators=demonstrators)

    @property
    def n_episodes(self) -> int:
        """Number of episodes."""
        return len(self.episodes)

    @property
    def n_steps(self) -> int:
        """Total number of demonstrated (state, action) pairs."""
        return int(self.lengths.sum())

    @property
    def start_states(self) -> np.ndarray:
        """First state of every episode."""
        return np.asarray([s[0] for s, _ in self.episodes], dtype=np.int64)

    def __repr__(self) -> str:
        who = "" if self.demonstrators is None else f", demonstrators={len(self.groups())}"
        return f"Demonstrations(episodes={self.n_episodes}, steps={self.n_steps}{who})"

    def groups(self) -> dict[str, np.ndarray]:
        """Episode indices of each named demonstrator, in order of first appearance.

        Without names, one group ``""`` holding every episode.
        """
        if self.demonstrators is None:
            return {"": np.arange(self.n_episodes)}
        out: dict[str, list[int]] = {}
        for k, name in enumerate(self.demonstrators):
            out.setdefault(name, []).append(k)
        return {name: np.asarray(ks, dtype=np.int64) for name, ks in out.items()}

    def subset(self, episodes) -> Demonstrations:
        """The demonstrations of the given episode indices (names kept)."""
        idx = [int(k) for k in episodes]
        names = None if self.demonstrators is None else [self.demonstrators[k] for k in idx]
        return Demonstrations([self.episodes[k] for k in idx], demonstrators=names)

    def check(self, mdp) -> None:
        """Check ranges, horizon and every recorded transition against ``mdp``.

        Consecutive recorded states ``(s_t, s_{t+1})`` must have positive probability under
        ``a_t``; with ``T + 1`` states this covers every step.
        """
        n_s, n_a = mdp.n_states, mdp.n_actions
        p = mdp.transitions
        for k, (s, a) in enumerate(self.episodes):
            _in_range(s, n_s, f"demonstrations: episode {k} state")
            _in_range(a, n_a, f"demonstrations: episode {k} action")
            if mdp.horizon is not None and a.shape[0] > mdp.horizon:
                raise InputError(
                    f"demonstrations: episode {k} has {a.shape[0]} steps, "
                    f"longer than the horizon {mdp.horizon}"
                )
            n_checked = min(a.shape[0], s.shape[0] - 1)
            if n_checked <= 0:
                continue
            probs = np.asarray(p[s[:n_checked] * n_a + a[:n_checked], s[1 : n_checked + 1]])
            zero = np.flatnonzero(probs.ravel() <= 0.0)
            if zero.size:
                t = int(zero[0])
                raise InputError(
                    f"demonstrations: episode {k} step {t}: the dynamics give probability 0 to "
                    f"s={int(s[t])} --a={int(a[t])}--> s'={int(s[t + 1])}"
                )


def _labels(names, n: int) -> tuple[str, ...] | None:
    if names is None:
        return None
    if isinstance(names, str | bytes):
        raise InputError("demonstrations: demonstrators must be one name per episode, "
                         f"not a single string; got {names!r}")
    names = list(names)
    if len(names) != n:
        raise InputError(f"demonstrations: {len(names)} demonstrator names for {n} episodes")
    for k, name in enumerate(names):
        if not isinstance(name, str) or not name.strip():
            raise InputError(f"demonstrations: episode {k} demonstrator must be a non-empty "
                             f"name; got {name!r}")
    return tuple(name.strip() for name in names)


def _int_array(x, what: str) -> np.ndarray:
    try:
        arr = np.asarray(x)
    except (TypeError, ValueError) as err:
        raise InputError(f"{what}: not a sequence of integer indices ({err})") from None
    if arr.ndim != 1:
        raise InputError(f"{what}: expected a 1-D sequence; got shape {arr.shape}")
    if arr.dtype == bool:
        raise InputError(f"{what}: got booleans; expected integer indices")
    if arr.size and not np.issubdtype(arr.dtype, np.integer):
        bad = next((v for v in arr.tolist() if not _is_whole(v)), None)
        if bad is not None:
            raise InputError(f"{what}: {bad!r} is not an integer index")
    return arr.astype(np.int64)


def _is_whole(v) -> bool:
    if isinstance(v, bool | str | bytes):
        return False
    try:
        return np.isfinite(float(v)) and float(v) == int(v)
    except (TypeError, ValueError, OverflowError):
        return False


def _in_range(x: np.ndarray, n: int, what: str) -> None:
    bad = np.flatnonzero((x < 0) | (x >= n))
    if bad.size:
        i = int(bad[0])
        raise InputError(f"{what} {i} is {int(x[i])}; valid values are 0..{n - 1}")
