"""Logged transitions and the Dirichlet posterior of the dynamics they imply.

Each state-action row ``P(. | s, a)`` gets an independent Dirichlet prior with the same
``concentration`` on every next state of its *support* (the next states that are possible);
``n`` logged outcomes update it to ``Dirichlet(concentration + counts)``. The rows are
conjugate and independent, so a draw of the whole dynamics is one Dirichlet draw per row.
See docs/dynamics.md for the support choices and the "cut" inference built on top.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import scipy.sparse as sp

from bayesirl.errors import InputError

SUPPORTS = ("model", "observed", "pattern")


class TransitionLog(NamedTuple):
    """Logged transitions as parallel integer arrays (one entry per distinct record)."""

    states: np.ndarray  # int64 (n,)
    actions: np.ndarray  # int64 (n,)
    next_states: np.ndarray  # int64 (n,)
    counts: np.ndarray  # float64 (n,) whole numbers >= 1

    @property
    def total(self) -> int:
        """How many transitions the log holds (counts summed)."""
        return int(self.counts.sum())


def log_from_demonstrations(demos) -> TransitionLog:
    """The transitions inside recorded episodes: ``(s_t, a_t) -> s_{t+1}``, each once."""
    s_all, a_all, n_all = [], [], []
    for states, actions in demos.episodes:
        t = min(actions.shape[0], states.shape[0] - 1)
        s_all.append(states[:t])
        a_all.append(actions[:t])
        n_all.append(states[1:t + 1])
    s, a, n = (np.concatenate(x).astype(np.int64) for x in (s_all, a_all, n_all))
    return TransitionLog(s, a, n, np.ones(s.shape[0]))


def join_logs(*logs: TransitionLog) -> TransitionLog:
    """One log holding every record of ``logs``."""
    return TransitionLog(*(np.concatenate([getattr(g, f) for g in logs])
                           for f in TransitionLog._fields))


class DynamicsPosterior:
    """Independent Dirichlet rows on a fixed support, updated by transition counts.

    Parameters
    ----------
    support : sparse or dense boolean ``(S*A, S)`` (or ``(S, A, S)``)
        Row ``s*A + a`` marks the possible next states of ``(s, a)``. Build it with
        :func:`support_of` from the problem's transitions, the observed outcomes or a pattern.
    counts : TransitionLog
        The logged transitions (and, usually, those inside the demonstrations).
    n_actions : int
    concentration : float
        Dirichlet parameter of every possible next state before any data (1: uniform on the
        support's simplex; smaller: prior mass near the simplex's corners).

    Raises
    ------
    InputError
        A logged outcome outside its row's support, an empty support row, or a
        concentration that is not a positive finite number.
    """

    def __init__(self, support, counts: TransitionLog, *, n_actions: int,
                 concentration: float = 1.0) -> None:
        c = float(concentration)
        if not np.isfinite(c) or c <= 0:
            raise InputError(f"concentration: expected a positive number; got {concentration!r}")
        pattern = _pattern(support, n_actions)
        rows, n_s = pattern.shape
        self.n_states, self.n_actions, self.concentration = n_s, int(n_actions), c
        empty = np.flatnonzero(np.diff(pattern.indptr) == 0)
        if empty.size:
            s, a = divmod(int(empty[0]), self.n_actions)
            raise InputError(f"support: (s={s}, a={a}) has no possible next state "
                             f"({empty.size} such rows)")
        observed = _count_matrix(counts, n_s, self.n_actions)
        outside = observed - observed.multiply(pattern)
        outside.eliminate_zeros()
        if outside.nnz:
            r, n = outside.nonzero()
            s, a = divmod(int(r[0]), self.n_actions)
            raise InputError(f"transitions: (s={s}, a={a}) -> {int(n[0])} was logged but is "
                             f"outside the support of (s={s}, a={a}) ({outside.nnz} such "
                             "outcomes)")
        self.support = pattern
        # The posterior's Dirichlet parameters on the support's entries, in CSR order.
        alpha = pattern.astype(np.float64) * c + observed.multiply(pattern)
        self.alpha = sp.csr_matrix(alpha)
        self.alpha.sort_indices()
        self.n_logged = counts.total

    def __repr__(self) -> str:
        return (f"DynamicsPosterior(S={self.n_states}, A={self.n_actions}, "
                f"concentration={self.concentration}, logged={self.n_logged})")

    def mean(self) -> sp.csr_matrix:
        """The posterior mean of every row (the plug-in dynamics)."""
        a = self.alpha
        sums = np.add.reduceat(a.data, a.indptr[:-1])
        return _with_data(a, a.data / np.repeat(sums, np.diff(a.indptr)))

    def draw(self, rng: np.random.Generator) -> sp.csr_matrix:
        """One draw of the dynamics: a Dirichlet draw for every row, as ``(S*A, S)`` CSR."""
        return _with_data(self.alpha, dirichlet_rows(rng, self.alpha.data,
                                                     self.alpha.indptr))

    def row_alpha(self, s: int, a: int) -> tuple[np.ndarray, np.ndarray]:
        """Next states and Dirichlet parameters of row ``(s, a)``."""
        r = s * self.n_actions + a
        lo, hi = self.alpha.indptr[r], self.alpha.indptr[r + 1]
        return self.alpha.indices[lo:hi].copy(), self.alpha.data[lo:hi].copy()


def dirichlet_rows(rng: np.random.Generator, alpha: np.ndarray,
                   indptr: np.ndarray) -> np.ndarray:
    """Normalised Gamma draws, one Dirichlet per CSR row of parameters ``alpha``.

    Gammas are drawn in log space (``G = G' U^(1/alpha)`` with ``G' ~ Gamma(alpha + 1)``,
    ``U`` uniform) so that rows of small parameters, whose Gamma draws underflow to 0 in
    float64, still normalise.
    """
    log_g = np.log(rng.standard_gamma(alpha + 1.0)) + np.log(rng.random(alpha.shape[0])) / alpha
    starts = indptr[:-1]
    top = np.maximum.reduceat(log_g, starts)
    lengths = np.diff(indptr)
    e = np.exp(log_g - np.repeat(top, lengths))
    return e / np.repeat(np.add.reduceat(e, starts), lengths)


def support_of(kind: str, transitions: sp.csr_matrix, n_actions: int,
               counts: TransitionLog | None = None, pattern=None) -> sp.csr_matrix:
    """The support of every row, as a boolean ``(S*A, S)`` CSR matrix.

    ``"model"``: the next states the problem's transitions allow (a map's moves, the
    non-zeros of the given arrays). ``"observed"``: the outcomes logged for each row; a row
    with no logged outcome keeps the problem's. ``"pattern"``: ``pattern``, a boolean
    ``(S, A, S)`` array or ``(S*A, S)`` matrix.
    """
    if kind not in SUPPORTS:
        raise InputError(f"support: expected one of {', '.join(SUPPORTS)}; got {kind!r}")
    model = _pattern(transitions, n_actions)
    if kind == "model":
        return model
    if kind == "pattern":
        if pattern is None:
            raise InputError("support: 'pattern' needs the pattern array")
        got = _pattern(pattern, n_actions)
        if got.shape != model.shape:
            raise InputError(f"support: pattern has shape {got.shape}; expected {model.shape}")
        return got
    if counts is None:
        raise InputError("support: 'observed' needs logged transitions")
    seen = _count_matrix(counts, model.shape[1], n_actions).astype(bool).tocsr()
    unseen = np.diff(seen.indptr) == 0
    keep = sp.diags(unseen.astype(np.float64)) @ model.astype(np.float64)
    return (seen.astype(np.float64) + keep).astype(bool).tocsr()


def _pattern(support, n_actions: int) -> sp.csr_matrix:
    if sp.issparse(support):
        m = sp.csr_matrix(support)
    else:
        arr = np.asarray(support)
        if arr.ndim == 3:
            arr = arr.reshape(arr.shape[0] * arr.shape[1], arr.shape[2])
        if arr.ndim != 2:
            raise InputError(f"support: expected an (S*A, S) or (S, A, S) array; got shape "
                             f"{arr.shape}")
        m = sp.csr_matrix(arr)
    m = (m != 0).astype(bool).tocsr()
    if m.shape[0] != m.shape[1] * n_actions:
        raise InputError(f"support: {m.shape[0]} rows for {m.shape[1]} states and "
                         f"{n_actions} actions")
    m.sort_indices()
    return m


def _count_matrix(log: TransitionLog, n_states: int, n_actions: int) -> sp.csr_matrix:
    for name, v, hi in (("state", log.states, n_states), ("action", log.actions, n_actions),
                        ("next state", log.next_states, n_states)):
        bad = np.flatnonzero((v < 0) | (v >= hi))
        if bad.size:
            raise InputError(f"transitions: {name} {int(v[bad[0]])} is out of range "
                             f"0..{hi - 1} (record {int(bad[0])})")
    rows = log.states * n_actions + log.actions
    m = sp.coo_matrix((log.counts, (rows, log.next_states)),
                      shape=(n_states * n_actions, n_states)).tocsr()
    m.sum_duplicates()
    return m


def _with_data(like: sp.csr_matrix, data: np.ndarray) -> sp.csr_matrix:
    return sp.csr_matrix((data, like.indices.copy(), like.indptr.copy()), shape=like.shape)
