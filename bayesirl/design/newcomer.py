"""Gains of a demonstration from a new demonstrator: the newcomer's own weights integrated out.

Posterior draw ``m`` carries ``K`` predictive draws of the newcomer's weights,
``w_mk = mu_m + tau_m z_mk`` (:func:`bayesirl.design.groups.people`), solved as ``N K``
pseudo-draws in draw-major order. Under draw ``m`` an outcome ``y`` has likelihood
``p_m(y) = (1/K) sum_k p(y | w_mk)``, the Monte-Carlo estimate of ``E_z p(y | mu_m + tau_m z)``.
The gain is the mutual information between ``y`` and the draw ``m`` (the model's parameters)
under that likelihood, the same quantity and the same draws as for a present demonstrator:

- one answer at a state: exact over actions, ``H(mean_m pi_m) - mean_m H(pi_m)`` with the
  mixture policy ``pi_m = (1/K) sum_k pi_mk`` (:class:`MixturePolicies` feeds the usual
  accumulator);
- a whole demonstration: nested Monte Carlo (:class:`NewStart`). Outer sample ``j`` takes
  draw ``m_j`` and one of its ``K`` pseudo-draws at random, so its demonstration is a draw
  from ``p_{m_j}`` exactly; ``log p_{m_j}(y_j) - log mean_m p_m(y_j)`` averages to the
  information for the ``N`` draws, as in :class:`~bayesirl.design.estimators.StartGiven`.

With finite ``K`` the mixture is an estimate of the integral over ``z``; the number the
designer reports is exact for that estimate (tests/groups/test_design_new.py) and tends to the
integral as ``K`` grows.
"""

from __future__ import annotations

import numpy as np

from bayesirl.design import estimators as est
from bayesirl.design.kernels import trajectory_loglik


def _group_lse(x: np.ndarray, k: int) -> np.ndarray:
    """``log mean_k exp`` over consecutive groups of ``k`` along axis 0."""
    x = x.reshape((-1, k) + x.shape[1:])
    top = x.max(axis=1)
    return top + np.log(np.exp(x - top[:, None]).mean(axis=1))


class MixturePolicies:
    """Per-draw mixture log-policies ``log (1/K) sum_k pi_mk``, with ``chunks()``."""

    def __init__(self, pseudo, k: int) -> None:
        self.pseudo, self.k = pseudo, int(k)
        self.mdp, self.tp = pseudo.mdp, pseudo.tp
        self.n = pseudo.n // self.k

    def chunks(self):
        """Yield ``(m0, logpol)`` over the posterior draws."""
        for p0, block in self.pseudo.chunks():
            yield p0 // self.k, _group_lse(block, self.k)


class NewStart:
    """Nested Monte-Carlo gain of a newcomer's demonstration per start candidate.

    ``states``/``actions`` ``(C, J, L+1)``/``(C, J, L)`` are simulated under the pseudo-draw of
    outer sample ``j``; ``prev`` ``(J, N)`` and ``outer`` ``(J,)`` index posterior draws.
    """

    def __init__(self, k: int, n: int, states, actions, g, prev, outer) -> None:
        self.k, self.n, self.g, self.prev, self.outer = int(k), n, g, prev, outer
        self.states = np.ascontiguousarray(states, dtype=np.int64)
        self.actions = np.ascontiguousarray(actions, dtype=np.int64)
        c, n_j = actions.shape[:2]
        self.acc = np.zeros((5, c, n_j))
        self.acc[0] = -np.inf

    def add(self, p0: int, block: np.ndarray, flat_t=None) -> None:
        """Stream one block of pseudo-draws in (whole groups of ``K``)."""
        m0 = p0 // self.k
        nb = block.shape[0] // self.k
        gm = self.g[m0:m0 + nb]
        hit = (self.outer >= m0) & (self.outer < m0 + nb)
        for c in range(self.actions.shape[0]):
            ll = _group_lse(trajectory_loglik(block, self.states[c], self.actions[c]), self.k)
            ll = ll.T + self.prev[:, m0:m0 + nb]  # (J, nb)
            self.acc[4, c, hit] = ll[np.flatnonzero(hit), self.outer[hit] - m0]
            top = np.maximum(self.acc[0, c], ll.max(axis=1))
            old = np.exp(self.acc[0, c] - top)
            e = np.exp(ll - top[:, None])
            self.acc[1, c] = self.acc[1, c] * old + e.sum(axis=1)
            self.acc[2, c] = self.acc[2, c] * old + e @ gm
            self.acc[3, c] = self.acc[3, c] * old + e @ (gm * gm)
            self.acc[0, c] = top

    def result(self) -> est.Scores:
        """The gains, their outer-sample standard errors and the expected target sds."""
        acc, n_j = self.acc, self.acc.shape[2]
        lme = acc[0] + np.log(acc[1]) - np.log(self.n)
        per_j = acc[4] - lme - est.prev_gain(self.prev, self.outer)[None, :]
        sd_after = est._weighted_sd(acc[1], acc[2], acc[3]).mean(axis=1)
        stderr = per_j.std(axis=1, ddof=1) / np.sqrt(n_j)
        return est.Scores(per_j.mean(axis=1), stderr, sd_after, per_j)


class NewcomerBackend:
    """The designer's work for a new demonstrator, in this process (one greedy step).

    Parameters
    ----------
    pseudo : DrawPolicies
        The ``N K`` pseudo-draws' policies (its ``chunk`` a multiple of ``K``).
    k : int
    g, outer : as for :class:`~bayesirl.design.work.LocalBackend` (per posterior draw).
    which : numpy.ndarray
        ``(J,)`` the pseudo-draw (``0..K-1``) of each outer sample's draw that simulates it.
    """

    def __init__(self, pseudo, k: int, g: np.ndarray, outer: np.ndarray,
                 which: np.ndarray) -> None:
        self.pseudo, self.k, self.g, self.outer = pseudo, int(k), g, outer
        self.mixture = MixturePolicies(pseudo, k)
        self.mdp, self.n = pseudo.mdp, self.mixture.n
        self.which = np.asarray(which, dtype=np.int64)

    def outer_policies(self) -> np.ndarray:
        """Log-policies ``(J, Tp, S, A)`` of the pseudo-draws that simulate the outcomes."""
        return np.stack([self.pseudo.one(int(m) * self.k + int(i))
                         for m, i in zip(self.outer, self.which, strict=True)])

    def score(self, batch, prev: np.ndarray, first: bool) -> list[est.Scores]:
        """Scores of every group (queries on the mixtures, starts on the pseudo-draws)."""
        n_a = self.mdp.n_actions
        out: list = [None] * len(batch)
        queries = [i for i, grp in enumerate(batch) if grp.kind == "query"]
        accs = [est.QueryFirst(self.n, n_a, batch[i].states, self.g) if first else
                est.QueryGiven(n_a, batch[i].states, self.g, prev) for i in queries]
        for i, sc in zip(queries, est.run_pass(self.mixture, accs), strict=True):
            out[i] = sc
        starts = [i for i, grp in enumerate(batch) if grp.kind == "start"]
        accs = [NewStart(self.k, self.n, batch[i].states, batch[i].actions, self.g, prev,
                         self.outer) for i in starts]
        for i, sc in zip(starts, est.run_pass(self.pseudo, accs), strict=True):
            out[i] = sc
        return out

    def close(self) -> None:
        """Nothing to release."""
