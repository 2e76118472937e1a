"""One slip probability for a whole grid map, learned from logged transitions.

A map's transitions are ``P(slip) = (1 - slip) * A + slip * B``: ``A`` makes every intended
move, ``B`` one of the other moves uniformly (walls and blocked cells keep the walker in
place in both). With a ``Beta(a, b)`` prior and logged transitions the posterior of the one
parameter is ``Beta(a, b)`` times ``prod (1 - slip) A[r, s'] + slip B[r, s']`` per record:
exactly ``Beta(a + intended, b + slipped)`` when no outcome could be both, and otherwise a
one-dimensional density that is evaluated on a fine grid and drawn by its inverse CDF.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from bayesirl.errors import InputError
from bayesirl.model.transitions import TransitionLog

GRID = 20_000  # midpoints in (0, 1): the inverse CDF is exact to ~1/GRID in probability


class SlipPosterior:
    """The posterior of a map's slip probability and the dynamics it implies.

    Parameters
    ----------
    intended, slipped : ``(S*A, S)`` CSR matrices ``A`` and ``B`` (see the module docstring)
    counts : TransitionLog
    n_actions : int
    prior : (a, b), the Beta prior of the slip probability
    """

    def __init__(self, intended: sp.csr_matrix, slipped: sp.csr_matrix, counts: TransitionLog,
                 *, n_actions: int, prior: tuple[float, float] = (1.0, 1.0)) -> None:
        a, b = (float(x) for x in prior)
        if not (np.isfinite(a) and np.isfinite(b) and a > 0 and b > 0):
            raise InputError(f"slip prior: expected two positive numbers (Beta a, b); got "
                             f"{prior!r}")
        self.intended, self.slipped = sp.csr_matrix(intended), sp.csr_matrix(slipped)
        self.n_states, self.n_actions = self.intended.shape[1], int(n_actions)
        self.prior, self.n_logged = (a, b), counts.total
        rows = counts.states * self.n_actions + counts.actions
        pa = np.asarray(self.intended[rows, counts.next_states]).ravel()
        pb = np.asarray(self.slipped[rows, counts.next_states]).ravel()
        impossible = np.flatnonzero((pa == 0) & (pb == 0))
        if impossible.size:
            i = int(impossible[0])
            raise InputError(f"transitions: (s={int(counts.states[i])}, a={int(counts.actions[i])})"
                             f" -> {int(counts.next_states[i])} is impossible on this map "
                             "whatever the slip probability")
        x = (np.arange(GRID) + 0.5) / GRID
        logp = (a - 1) * np.log(x) + (b - 1) * np.log1p(-x)
        logp += (counts.counts[:, None] * np.log((1 - x)[None, :] * pa[:, None]
                                                  + x[None, :] * pb[:, None])).sum(axis=0)
        w = np.exp(logp - logp.max())
        self._x, self._cdf = x, np.cumsum(w) / w.sum()
        self.slip_mean = float((x * w).sum() / w.sum())

    def __repr__(self) -> str:
        return f"SlipPosterior(mean slip {self.slip_mean:.4f}, logged={self.n_logged})"

    def draw_slip(self, rng: np.random.Generator) -> float:
        """One draw of the slip probability (inverse CDF on the grid)."""
        return float(np.interp(rng.random(), self._cdf, self._x))

    def at(self, slip: float) -> sp.csr_matrix:
        """The map's transitions at this slip probability."""
        return ((1.0 - slip) * self.intended + slip * self.slipped).tocsr()

    def draw(self, rng: np.random.Generator) -> sp.csr_matrix:
        """One draw of the dynamics."""
        return self.at(self.draw_slip(rng))

    def mean(self) -> sp.csr_matrix:
        """The dynamics at the posterior-mean slip (linear in it: the mean dynamics)."""
        return self.at(self.slip_mean)
