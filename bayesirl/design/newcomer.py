"""Gains of a demonstration from a new demonstrator: the newcomer's own weights integrated out.

Posterior draw ``m`` carries ``K`` predictive draws of the newcomer's weights,
``w_mk = mu_m + tau_m z_mk`` (:func:`bayesirl.design.groups.people`), solved as ``N K``
pseudo-draws in draw-major order. Under draw ``m`` an outcome ``y`` has likelihood
``p_m(y) = (1/K) sum_k p(y | w_mk)``, the Monte-Carlo estimate of ``E_z p(y | mu_m + tau_m z)``.
The gain is the mutual information between ``y`` and the draw ``m`` (the model's parameters),
the same quantity over the same draws as for a present demonstrator:

- one answer at a state: exact over actions, ``H(mean_m pi_m) - mean_m H(pi_m)`` with the
  mixture policy ``pi_m = (1/K) sum_k pi_mk`` (:class:`HalvedQueries`);
- a whole demonstration: nested Monte Carlo (:class:`NewStart`). Outer sample ``j`` takes
  draw ``m_j`` and one of its ``K`` pseudo-draws at random, so its demonstration is a draw
  from ``p_{m_j}`` exactly; ``log p_{m_j}(y_j) - log mean_m p_m(y_j)`` averages to the
  information of the ``K``-mixtures, as in :class:`~bayesirl.design.estimators.StartGiven`.

The ``K``-mixture is noisier than the integral over ``z``, which makes each draw's outcome
look more particular to it: the information of the ``K``-mixtures exceeds the true one by
about ``c / K`` (measured on tests/groups' partial posterior, one answer per state:
+0.016 nats at ``K = 8`` on gains of 0.036-0.077, +0.005 at ``K = 16``, against ``K = 256``).
So both estimators are jackknifed over the two halves of the ``K`` pseudo-draws:
``2 I_K - I_{K/2}`` removes the ``1/K`` term (Quenouille's bias correction); ``K`` is even.
"""

from __future__ import annotations

import numpy as np

from bayesirl.design import estimators as est
from bayesirl.design.kernels import trajectory_loglik


def _lme(x: np.ndarray) -> np.ndarray:
    """``log mean exp`` along axis 1."""
    top = x.max(axis=1)
    return top + np.log(np.exp(x - top[:, None]).mean(axis=1))


def mixtures(block: np.ndarray, k: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per-draw log-mixtures over all ``k`` pseudo-draws, the first ``k/2`` and the last."""
    x = block.reshape((-1, k) + block.shape[1:])
    h = k // 2
    return _lme(x), _lme(x[:, :h]), _lme(x[:, h:])


class HalvedQueries:
    """Exact gains of one answer per state for the ``K``-mixture and both ``K/2``-halves."""

    def __init__(self, k: int, n: int, n_actions: int, states, g) -> None:
        self.k = int(k)
        self.parts = [est.QueryFirst(n, n_actions, states, g) for _ in range(3)]

    def add(self, p0: int, block: np.ndarray, flat_t=None) -> None:
        """Stream one block of pseudo-draws in (whole groups of ``K``)."""
        for acc, mix in zip(self.parts, mixtures(block, self.k), strict=True):
            acc.add(p0 // self.k, mix)

    def result(self) -> est.Scores:
        """Jackknifed gains; the error bound adds the parts' errors (conservative)."""
        full, a, b = (p.result() for p in self.parts)
        gain = 2.0 * full.gain - 0.5 * (a.gain + b.gain)
        stderr = 2.0 * full.stderr + 0.5 * (a.stderr + b.stderr)
        return est.Scores(gain, stderr, full.target_sd)


class NewStart:
    """Nested Monte-Carlo gain of a newcomer's demonstration per start candidate.

    ``states``/``actions`` ``(C, J, L+1)``/``(C, J, L)`` are simulated under pseudo-draw
    ``which[j]`` of outer sample ``j``'s draw; ``prev`` ``(J, N)`` and ``outer`` ``(J,)`` index
    posterior draws. Two nested sums per outer sample: with the ``K``-mixtures, and with the
    ``K/2``-mixtures of the half holding ``which[j]`` (so ``y_j`` is a draw from that half's
    mixture too); ``2 full - half`` per outer sample is the jackknifed gain.
    """

    def __init__(self, k: int, n: int, states, actions, g, prev, outer, which) -> None:
        self.k, self.n, self.g, self.prev, self.outer = int(k), n, g, prev, outer
        self.second = np.asarray(which) >= self.k // 2
        self.states = np.ascontiguousarray(states, dtype=np.int64)
        self.actions = np.ascontiguousarray(actions, dtype=np.int64)
        c, n_j = actions.shape[:2]
        self.acc = np.zeros((2, 5, c, n_j))  # full, half
        self.acc[:, 0] = -np.inf

    def add(self, p0: int, block: np.ndarray, flat_t=None) -> None:
        """Stream one block of pseudo-draws in (whole groups of ``K``)."""
        m0 = p0 // self.k
        nb = block.shape[0] // self.k
        gm = self.g[m0:m0 + nb]
        hit = np.flatnonzero((self.outer >= m0) & (self.outer < m0 + nb))
        prev = self.prev[:, m0:m0 + nb]
        for c in range(self.actions.shape[0]):
            ll = trajectory_loglik(block, self.states[c], self.actions[c])
            full, first, second = mixtures(ll, self.k)  # (nb, J) each
            half = np.where(self.second[None, :], second, first)
            for acc, x in zip(self.acc, (full, half), strict=True):
                _nested_add(acc[:, c], x.T + prev, gm, hit, self.outer[hit] - m0)

    def result(self) -> est.Scores:
        """The gains, their outer-sample standard errors and the expected target sds."""
        per_j = []
        for acc in self.acc:
            lme = acc[0] + np.log(acc[1]) - np.log(self.n)
            per_j.append(acc[4] - lme - est.prev_gain(self.prev, self.outer)[None, :])
        jack = 2.0 * per_j[0] - per_j[1]
        full = self.acc[0]
        sd_after = est._weighted_sd(full[1], full[2], full[3]).mean(axis=1)
        stderr = jack.std(axis=1, ddof=1) / np.sqrt(jack.shape[1])
        return est.Scores(jack.mean(axis=1), stderr, sd_after, jack)


def _nested_add(acc: np.ndarray, ll: np.ndarray, gm, hit, own) -> None:
    """Online log-sum-exp sums ``acc`` ``(5, J)`` of ``ll`` ``(J, nb)`` (as the kernel's)."""
    acc[4, hit] = ll[hit, own]
    top = np.maximum(acc[0], ll.max(axis=1))
    old = np.exp(acc[0] - top)
    e = np.exp(ll - top[:, None])
    acc[1] = acc[1] * old + e.sum(axis=1)
    acc[2] = acc[2] * old + e @ gm
    acc[3] = acc[3] * old + e @ (gm * gm)
    acc[0] = top


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
        self.mdp, self.n = pseudo.mdp, pseudo.n // self.k
        self.which = np.asarray(which, dtype=np.int64)

    def outer_policies(self) -> np.ndarray:
        """Log-policies ``(J, Tp, S, A)`` of the pseudo-draws that simulate the outcomes."""
        return np.stack([self.pseudo.one(int(m) * self.k + int(i))
                         for m, i in zip(self.outer, self.which, strict=True)])

    def score(self, batch, prev: np.ndarray, first: bool) -> list[est.Scores]:
        """Scores of every group at the first step (the only one a newcomer takes part in)."""
        assert first, "a new demonstrator is ranked for one pick"
        n_a = self.mdp.n_actions
        accs = [HalvedQueries(self.k, self.n, n_a, grp.states, self.g) if grp.kind == "query"
                else NewStart(self.k, self.n, grp.states, grp.actions, self.g, prev,
                              self.outer, self.which) for grp in batch]
        return est.run_pass(self.pseudo, accs)

    def close(self) -> None:
        """Nothing to release."""
