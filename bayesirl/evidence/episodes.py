"""Episodes with unrecorded parts, as data: :class:`PartialEpisodes`, their pieces and checks.

The data side of :mod:`bayesirl.evidence.partial` (which adds the likelihood term): reading
and checking a file of such episodes needs numpy only, so ``bayesirl check`` loads no solver.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.hidden import MAX_GAP_FLOATS, Gap, Steps, gap_pass, step_pass


class PartialEpisodes:
    """Episodes of ``T + 1`` (or ``T``) states and ``T`` actions, ``-1`` = not recorded.

    Parameters
    ----------
    states_list, actions_list : sequences of integer sequences (``None`` allowed inside)
        The first state of every episode must be recorded.
    """

    def __init__(self, states_list, actions_list) -> None:
        states_list, actions_list = list(states_list), list(actions_list)
        if not states_list:
            raise InputError("partial episodes: the set is empty; give at least one episode")
        if len(states_list) != len(actions_list):
            raise InputError(f"partial episodes: {len(states_list)} state sequences but "
                             f"{len(actions_list)} action sequences")
        self.episodes = []
        for k, (s, a) in enumerate(zip(states_list, actions_list, strict=True)):
            s_arr, a_arr = _ints(s, f"episode {k} states"), _ints(a, f"episode {k} actions")
            if a_arr.size == 0 or s_arr.size not in (a_arr.size, a_arr.size + 1):
                raise InputError(f"partial episodes: episode {k} has {a_arr.size} actions and "
                                 f"{s_arr.size} states; expected at least one action and as "
                                 "many states or one more")
            if s_arr[0] < 0:
                raise InputError(f"partial episodes: episode {k}: the first state is not "
                                 "recorded; an episode starts at a known state")
            if s_arr.size == a_arr.size:  # the state after the last action: not recorded
                s_arr = np.append(s_arr, -1)
            self.episodes.append((s_arr, a_arr))

    @property
    def n_episodes(self) -> int:
        """Number of episodes."""
        return len(self.episodes)

    def __repr__(self) -> str:
        missing_a = sum(int(np.sum(a < 0)) for _, a in self.episodes)
        missing_s = sum(int(np.sum(s < 0)) for s, _ in self.episodes)
        return (f"PartialEpisodes(episodes={self.n_episodes}, unrecorded actions={missing_a}, "
                f"unrecorded states={missing_s})")

    def pieces(self, mdp) -> tuple[Steps, list[Gap]]:
        """Cut every episode at its recorded states; check everything against ``mdp``."""
        rows: list[tuple[int, int, int, int, int]] = []
        gaps: list[Gap] = []
        for k, (s, a) in enumerate(self.episodes):
            _check_ranges(k, s, a, mdp)
            last = _last_informative(s, a)
            t = 0
            while t < last:
                nxt = t + 1
                while nxt < last and s[nxt] < 0:
                    nxt += 1
                end = int(s[nxt]) if nxt <= a.size and s[nxt] >= 0 else -1
                if nxt == t + 1:
                    rows.append((int(s[t]), end, int(a[t]), t, k))
                else:
                    gaps.append(Gap(k, t, int(s[t]), a[t:nxt].copy(), end))
                t = nxt
        return _steps(rows, mdp), gaps


def _last_informative(s: np.ndarray, a: np.ndarray) -> int:
    """Steps after the last recorded state or action carry no information: drop them."""
    t_s = int(np.flatnonzero(s >= 0).max())
    t_a = int(np.flatnonzero(a >= 0).max()) + 1 if np.any(a >= 0) else 0
    return max(t_s, t_a)


def _steps(rows, mdp) -> Steps:
    arr = np.asarray(rows, dtype=np.int64).reshape(-1, 5)
    source, target = arr[:, 0], arr[:, 1]
    n_a = mdp.n_actions
    next_prob = np.ones((arr.shape[0], n_a))
    inside = target >= 0
    if np.any(inside):
        r = (source[inside, None] * n_a + np.arange(n_a)[None, :]).ravel()
        c = np.repeat(target[inside], n_a)
        next_prob[inside] = np.asarray(mdp.transitions[r, c]).reshape(-1, n_a)
    return Steps(source, target, arr[:, 2], arr[:, 3], arr[:, 4], next_prob)


def _check_ranges(k: int, s: np.ndarray, a: np.ndarray, mdp) -> None:
    for arr, n, what in ((s, mdp.n_states, "state"), (a, mdp.n_actions, "action")):
        bad = np.flatnonzero(arr >= n)
        if bad.size:
            raise InputError(f"partial episodes: episode {k} {what} {int(bad[0])} is "
                             f"{int(arr[bad[0]])}; valid values are 0..{n - 1}")
    if mdp.horizon is not None and a.size > mdp.horizon:
        raise InputError(f"partial episodes: episode {k} has {a.size} steps, longer than the "
                         f"horizon {mdp.horizon}")


def _ints(x, what: str) -> np.ndarray:
    try:
        vals = [-1 if v is None else v for v in x]
        arr = np.asarray(vals)
    except (TypeError, ValueError) as err:
        raise InputError(f"partial episodes: {what}: not a sequence of indices ({err})") from None
    if arr.ndim != 1 or (arr.size and (arr.dtype == bool or not np.issubdtype(arr.dtype,
                                                                            np.integer))):
        raise InputError(f"partial episodes: {what}: expected whole numbers (None or -1 for "
                         f"not recorded); got {list(x)!r}")
    if np.any(arr < -1):
        raise InputError(f"partial episodes: {what}: {int(arr.min())} is not an index "
                         "(-1 or None means not recorded)")
    return arr.astype(np.int64)


def first_impossible(mdp, steps: Steps, gaps: list[Gap]):
    """``(episode, step, message)`` of the first piece the dynamics forbid, else None.

    ``step`` is the index of the recorded state that cannot be reached (or the episode's
    length for an impossible end). A soft policy gives every action positive probability,
    so the uniform policy has the same support as every soft policy: checking it once checks
    all weights.
    """
    uniform = np.full((mdp.n_states, mdp.n_actions), 1.0 / mdp.n_actions)
    logp, _ = step_pass(steps, uniform, False)
    bad = np.flatnonzero(~np.isfinite(logp))
    found = []
    if bad.size:
        i = int(bad[0])
        how = "any action" if steps.action[i] < 0 else f"action {int(steps.action[i])}"
        found.append((int(steps.episode[i]), int(steps.time[i]) + 1,
                      f"step {int(steps.time[i]) + 1}: the dynamics cannot go from state "
                      f"{int(steps.source[i])} by {how} to state {int(steps.target[i])}"))
    for gap in gaps:
        length = gap.actions.size
        if length * mdp.n_states > MAX_GAP_FLOATS:
            found.append((gap.episode, gap.time + length,
                          f"steps {gap.time}..{gap.time + length}: a gap of {length - 1} "
                          f"unrecorded states; at most {MAX_GAP_FLOATS // mdp.n_states - 1} "
                          "fit in memory"))
        elif not np.isfinite(gap_pass(mdp.dynamics, gap, lambda t: uniform, False)[0]):
            where = "the episode's end" if gap.end < 0 else f"state {gap.end}"
            found.append((gap.episode, gap.time + length,
                          f"steps {gap.time}..{gap.time + length}: no path of {length} steps "
                          f"leads from state {gap.start} to {where} with the recorded actions"))
    return min(found, key=lambda x: x[:2]) if found else None


def state_only(states_list: Sequence) -> PartialEpisodes:
    """Episodes given as state sequences only (no action recorded)."""
    return PartialEpisodes(states_list, [[-1] * (len(s) - 1) for s in states_list])
