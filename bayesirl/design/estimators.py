"""Expected information gains (nats) and expected target sds, one greedy step at a time.

Notation: draws ``m = 1..N`` of the posterior stand for it; ``prev`` ``(J, N)`` holds, for
outer sample ``j``, the log-likelihood of the outcomes of the earlier picks simulated under
draw ``outer[j]``. The gain of a candidate given the earlier picks is the conditional mutual
information ``I(y_c; theta | y_prev)`` (Bayesian experimental design's expected information
gain, Lindley 1956), which is what greedy batch selection must add up.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl.design.kernels import flat_steps, nested_accumulate, query_moments


class Scores(NamedTuple):
    """Per-candidate gain, its Monte-Carlo standard error and the expected target sd."""

    gain: np.ndarray
    stderr: np.ndarray
    target_sd: np.ndarray  # nan without a target
    # (k, J) per-outer-sample terms whose mean is the gain (None when exact over outcomes):
    # the same outer samples serve every candidate, so the ranking's own uncertainty is
    # measured from these jointly (bayesirl.design.ranking).
    per_outer: np.ndarray | None = None


def _xlogx(p: np.ndarray) -> np.ndarray:
    return np.where(p > 0, p * np.log(np.where(p > 0, p, 1.0)), 0.0)


def _weighted_sd(mass, first, second):
    """sd from unnormalised moments ``sum w``, ``sum w g``, ``sum w g^2`` (0 where no mass)."""
    safe = np.where(mass > 0, mass, 1.0)
    mean = first / safe
    return np.sqrt(np.maximum(second / safe - mean * mean, 0.0)) * (mass > 0)


class QueryFirst:
    """Accumulates the exact first-step gains of one answer at each of ``states``.

    ``I = H(mean_m pi_m) - mean_m H(pi_m)``. Its influence function is
    ``psi_m = -pi_m . log(pbar) - H_m`` (mean ``I``), so the standard error is
    ``sd(psi) / sqrt(N)``, with ``E psi^2`` from second moments accumulated in one pass.
    ``moments`` is the accumulating kernel (its numpy twin in the benchmark). Each state's
    sums are its own, so scoring states in groups gives the same numbers as all at once.
    """

    def __init__(self, n: int, n_actions: int, states: np.ndarray, g: np.ndarray,
                 moments=query_moments) -> None:
        k = states.shape[0]
        self.n, self.states, self.g, self.moments = n, states, g, moments
        self.acc_p = np.zeros((4, k, n_actions))
        self.acc_h = np.zeros((2 + n_actions, k, n_actions))

    def add(self, m0: int, block: np.ndarray, flat_t=None) -> None:
        """Stream one block of draws in."""
        sub = np.ascontiguousarray(block[:, :1, self.states, :])
        self.moments(sub, np.ascontiguousarray(self.g[m0:m0 + block.shape[0]]),
                     self.acc_p, self.acc_h)

    def result(self) -> Scores:
        """The gains, their standard errors and the expected target sds."""
        n, acc_p, acc_h = self.n, self.acc_p, self.acc_h
        pbar = acc_p[0] / n
        logp = np.log(np.where(pbar > 0, pbar, 1.0))
        gain = -_xlogx(pbar).sum(axis=1) - acc_h[0, :, 0] / n
        # E psi^2 = l' E[pi pi'] l + 2 l . E[H pi] + E[H^2] with l = log pbar.
        second = np.einsum("sb,bsa,sa->s", logp, acc_h[2:], logp) / n
        second += 2 * (logp * acc_p[1]).sum(axis=1) / n + acc_h[1, :, 0] / n
        var = np.maximum(second - gain * gain, 0.0)
        sd_after = (_weighted_sd(acc_p[0], acc_p[2], acc_p[3]) * pbar).sum(axis=1)
        return Scores(np.maximum(gain, 0.0), np.sqrt(var / n), sd_after)


def run_pass(policies, accumulators) -> list[Scores]:
    """One pass over the draws' blocks feeding every accumulator; their results in order.

    The accumulators are independent, so the numbers of each do not depend on which others
    share the pass (a cluster task scores one group of candidates, a local run all groups).
    """
    need_flat = any(isinstance(a, StartGiven) for a in accumulators)
    for m0, block in policies.chunks():
        flat_t = (np.ascontiguousarray(block.reshape(block.shape[0], -1).T)
                  if need_flat else None)
        for acc in accumulators:
            acc.add(m0, block, flat_t)
    return [acc.result() for acc in accumulators]


def query_first(policies, states: np.ndarray, g: np.ndarray, moments=query_moments) -> Scores:
    """Exact information gain of one answer at each state, with its draw-to-draw error
    (see :class:`QueryFirst`)."""
    acc = QueryFirst(policies.n, policies.mdp.n_actions, np.asarray(states), g, moments)
    return run_pass(policies, [acc])[0]


def _normalised(prev: np.ndarray) -> np.ndarray:
    w = np.exp(prev - prev.max(axis=1, keepdims=True))
    return w / w.sum(axis=1, keepdims=True)


class QueryGiven:
    """Gain of one answer per state given earlier picks: exact over actions for each outer
    sample (posterior reweighted by ``exp(prev[j])``), averaged over the outer samples."""

    def __init__(self, n_actions: int, states: np.ndarray, g: np.ndarray,
                 prev: np.ndarray) -> None:
        n_j, k = prev.shape[0], states.shape[0]
        self.states, self.g, self.w = states, g, _normalised(prev)
        self.mass = np.zeros((3, n_j, k * n_actions))
        self.ent = np.zeros((n_j, k))

    def add(self, m0: int, block: np.ndarray, flat_t=None) -> None:
        """Stream one block of draws in."""
        lp = block[:, 0, self.states, :]  # (n, k, A)
        p = np.exp(lp)
        wc = self.w[:, m0:m0 + block.shape[0]]
        flat = p.reshape(p.shape[0], -1)
        gm = self.g[m0:m0 + block.shape[0]][:, None]
        self.mass[0] += wc @ flat
        self.mass[1] += wc @ (flat * gm)
        self.mass[2] += wc @ (flat * gm * gm)
        self.ent += wc @ (-_xlogx(p).sum(axis=2))

    def result(self) -> Scores:
        """The gains, their outer-sample standard errors and the expected target sds."""
        n_j, k = self.ent.shape
        mass = self.mass
        pj = mass[0].reshape(n_j, k, -1)
        per_j = -_xlogx(pj).sum(axis=2) - self.ent  # (J, k)
        sd = _weighted_sd(mass[0], mass[1], mass[2]).reshape(n_j, k, -1)
        sd_after = (sd * pj).sum(axis=2).mean(axis=0)
        return Scores(per_j.mean(axis=0), per_j.std(axis=0, ddof=1) / np.sqrt(n_j), sd_after,
                      per_j.T.copy())


def query_given(policies, states: np.ndarray, g: np.ndarray, prev: np.ndarray) -> Scores:
    """Gain of one answer per state given earlier picks (see :class:`QueryGiven`)."""
    return run_pass(policies, [QueryGiven(policies.mdp.n_actions, states, g, prev)])[0]


def prev_gain(prev: np.ndarray, outer: np.ndarray) -> np.ndarray:
    """Per-outer-sample information of the earlier picks, ``ll_self - log mean exp ll``."""
    n = prev.shape[1]
    top = prev.max(axis=1)
    lme = top + np.log(np.exp(prev - top[:, None]).sum(axis=1)) - np.log(n)
    return prev[np.arange(prev.shape[0]), outer] - lme


class StartGiven:
    """Nested Monte-Carlo gain of a simulated demonstration per candidate, given ``prev``.

    ``states``/``actions`` ``(C, J, L+1)``/``(C, J, L)`` are demonstrations simulated under
    draw ``outer[j]``; the inner average over all draws estimates their marginal likelihood.
    The outer samples share draws and earlier outcomes across candidates (common random
    numbers), so differences between candidates carry less noise than each gain. Each
    candidate's sums are its own, so scoring candidates in groups changes no bit.
    """

    def __init__(self, policies, states, actions, g, prev, outer,
                 accumulate=nested_accumulate) -> None:
        mdp = policies.mdp
        self.n, self.g, self.prev, self.outer = policies.n, g, prev, outer
        self.accumulate = accumulate
        self.steps = flat_steps(states, actions, policies.tp, mdp.n_states, mdp.n_actions)
        self.acc = np.zeros((5, actions.shape[0], actions.shape[1]))
        self.acc[0] = -np.inf

    def add(self, m0: int, block: np.ndarray, flat_t=None) -> None:
        """Stream one block of draws in (``flat_t``: its transposed flat log-policies)."""
        if flat_t is None:
            flat_t = np.ascontiguousarray(block.reshape(block.shape[0], -1).T)
        self.accumulate(flat_t, m0, self.steps, self.prev, self.outer, self.g, self.acc)

    def result(self) -> Scores:
        """The gains, their outer-sample standard errors and the expected target sds."""
        acc, n_j = self.acc, self.acc.shape[2]
        lme = acc[0] + np.log(acc[1]) - np.log(self.n)
        per_j = acc[4] - lme - prev_gain(self.prev, self.outer)[None, :]  # (C, J)
        sd_after = _weighted_sd(acc[1], acc[2], acc[3]).mean(axis=1)
        stderr = per_j.std(axis=1, ddof=1) / np.sqrt(n_j)
        return Scores(per_j.mean(axis=1), stderr, sd_after, per_j)


def start_given(policies, states, actions, g, prev, outer,
                accumulate=nested_accumulate) -> Scores:
    """Nested Monte-Carlo gain per start candidate given ``prev`` (see :class:`StartGiven`)."""
    acc = StartGiven(policies, states, actions, g, prev, outer, accumulate)
    return run_pass(policies, [acc])[0]
