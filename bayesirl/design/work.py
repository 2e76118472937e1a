"""The designer's units of work, shared by the local run and the Dask tasks.

A step scores groups of :data:`CANDIDATE_CHUNK` consecutive candidates of one kind (a
:class:`Group`); conditioning on a pick adds the log-likelihood of its simulated outcomes
block of draws by block. A local run feeds every group in one pass over the blocks; a
cluster runs one task per group (and per block), on the same inputs, hence the same bits.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl.design import estimators as est
from bayesirl.design.kernels import trajectory_loglik

# Candidates per group: a group is one scoring task on a cluster. Fixed, so the groups (and
# the numbers) do not depend on how many workers there are.
CANDIDATE_CHUNK = 8


class Group(NamedTuple):
    """Candidates scored together: their positions in the candidate list and their data."""

    kind: str  # "start" or "query"
    index: np.ndarray  # positions in the candidate list
    states: np.ndarray  # query: (k,) states; start: simulated states (k, J, L + 1)
    actions: np.ndarray | None  # start: simulated actions (k, J, L); query: None


def groups(kind: str, index: np.ndarray, states: np.ndarray, actions=None) -> list[Group]:
    """Cut candidates of one kind into consecutive groups of ``CANDIDATE_CHUNK``."""
    out = []
    for a in range(0, index.shape[0], CANDIDATE_CHUNK):
        b = a + CANDIDATE_CHUNK
        out.append(Group(kind, index[a:b], states[a:b],
                         None if actions is None else actions[a:b]))
    return out


def score_groups(policies, batch: list[Group], g: np.ndarray, prev: np.ndarray,
                 outer: np.ndarray, first: bool) -> list[est.Scores]:
    """Scores of each group in one pass over ``policies.chunks()``.

    Parameters
    ----------
    policies : DrawPolicies or BlockList
        The draws' log-policies, block by block.
    batch : list of Group
    g : numpy.ndarray
        Target values per draw ``(N,)`` (zeros without a target).
    prev : numpy.ndarray
        ``(J, N)`` log-likelihood of the earlier picks' outcomes.
    outer : numpy.ndarray
        The outer samples' draws ``(J,)``.
    first : bool
        The first greedy step: query gains are then exact over actions.

    Returns
    -------
    list of Scores
        One per group, in order.
    """
    n_a = policies.mdp.n_actions
    accs = []
    for grp in batch:
        if grp.kind == "query" and first:
            accs.append(est.QueryFirst(policies.n, n_a, grp.states, g))
        elif grp.kind == "query":
            accs.append(est.QueryGiven(n_a, grp.states, g, prev))
        else:
            accs.append(est.StartGiven(policies, grp.states, grp.actions, g, prev, outer))
    return est.run_pass(policies, accs)


def block_loglik(block: np.ndarray, kind: str, what: tuple) -> np.ndarray:
    """Log-likelihood ``(n, J)`` of one pick's simulated outcomes under a block's draws.

    ``what`` is ``(states, actions)`` of the simulated demonstrations ``(J, L + 1)``,
    ``(J, L)`` for a start pick, or ``(state, answers)`` with ``answers`` ``(J,)`` for a
    query pick.
    """
    if kind == "start":
        return trajectory_loglik(block, what[0], what[1])
    state, answers = what
    return np.ascontiguousarray(block[:, 0, state, answers])


class LocalBackend:
    """The designer's work in this process, on one :class:`DrawPolicies`."""

    def __init__(self, policies, g: np.ndarray, outer: np.ndarray) -> None:
        self.policies, self.g, self.outer = policies, g, outer
        self.mdp, self.n = policies.mdp, policies.n

    def outer_policies(self) -> np.ndarray:
        """Log-policies of the outer samples' draws ``(J, Tp, S, A)``."""
        return np.stack([self.policies.one(int(m)) for m in self.outer])

    def score(self, batch: list[Group], prev: np.ndarray, first: bool) -> list[est.Scores]:
        """Scores of every group (see :func:`score_groups`)."""
        return score_groups(self.policies, batch, self.g, prev, self.outer, first)

    def loglik(self, kind: str, what: tuple) -> np.ndarray:
        """``(J, N)`` log-likelihood of one pick's outcomes under every draw."""
        out = np.empty((self.outer.shape[0], self.n))
        for m0, block in self.policies.chunks():
            out[:, m0:m0 + block.shape[0]] = block_loglik(block, kind, what).T
        return out

    def close(self) -> None:
        """Nothing to release."""
