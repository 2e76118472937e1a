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


def _xlogx(p: np.ndarray) -> np.ndarray:
    return np.where(p > 0, p * np.log(np.where(p > 0, p, 1.0)), 0.0)


def _weighted_sd(mass, first, second):
    """sd from unnormalised moments ``sum w``, ``sum w g``, ``sum w g^2`` (0 where no mass)."""
    safe = np.where(mass > 0, mass, 1.0)
    mean = first / safe
    return np.sqrt(np.maximum(second / safe - mean * mean, 0.0)) * (mass > 0)


def query_first(policies, states: np.ndarray, g: np.ndarray, moments=query_moments) -> Scores:
    """Exact information gain of one answer at each state, with its draw-to-draw error.

    ``I = H(mean_m pi_m) - mean_m H(pi_m)``. Its influence function is
    ``psi_m = -pi_m . log(pbar) - H_m`` (mean ``I``), so the standard error is
    ``sd(psi) / sqrt(N)``, with ``E psi^2`` from second moments accumulated in one pass.
    ``moments`` is the accumulating kernel (its numpy twin in the benchmark).
    """
    mdp = policies.mdp
    n_s, n_a, n = mdp.n_states, mdp.n_actions, policies.n
    acc_p = np.zeros((4, n_s, n_a))
    acc_h = np.zeros((2 + n_a, n_s, n_a))
    for m0, block in policies.chunks():
        moments(block, np.ascontiguousarray(g[m0:m0 + block.shape[0]]), acc_p, acc_h)
    pbar = acc_p[0] / n
    logp = np.log(np.where(pbar > 0, pbar, 1.0))
    gain = -_xlogx(pbar).sum(axis=1) - acc_h[0, :, 0] / n
    # E psi^2 = l' E[pi pi'] l + 2 l . E[H pi] + E[H^2] with l = log pbar.
    second = np.einsum("sb,bsa,sa->s", logp, acc_h[2:], logp) / n
    second += 2 * (logp * acc_p[1]).sum(axis=1) / n + acc_h[1, :, 0] / n
    var = np.maximum(second - gain * gain, 0.0)
    stderr = np.sqrt(var / n)
    sd_after = (_weighted_sd(acc_p[0], acc_p[2], acc_p[3]) * pbar).sum(axis=1)
    return Scores(np.maximum(gain, 0.0)[states], stderr[states], sd_after[states])


def _normalised(prev: np.ndarray) -> np.ndarray:
    w = np.exp(prev - prev.max(axis=1, keepdims=True))
    return w / w.sum(axis=1, keepdims=True)


def query_given(policies, states: np.ndarray, g: np.ndarray, prev: np.ndarray) -> Scores:
    """Gain of one answer per state given earlier picks: exact over actions for each outer
    sample (posterior reweighted by ``exp(prev[j])``), averaged over the outer samples."""
    mdp = policies.mdp
    n_j, k = prev.shape[0], states.shape[0]
    w = _normalised(prev)
    mass = np.zeros((3, n_j, k * mdp.n_actions))
    ent = np.zeros((n_j, k))
    for m0, block in policies.chunks():
        lp = block[:, 0, states, :]  # (n, k, A)
        p = np.exp(lp)
        wc = w[:, m0:m0 + block.shape[0]]
        flat = p.reshape(p.shape[0], -1)
        gm = g[m0:m0 + block.shape[0]][:, None]
        mass[0] += wc @ flat
        mass[1] += wc @ (flat * gm)
        mass[2] += wc @ (flat * gm * gm)
        ent += wc @ (-_xlogx(p).sum(axis=2))
    pj = mass[0].reshape(n_j, k, -1)
    per_j = -_xlogx(pj).sum(axis=2) - ent  # (J, k)
    sd = _weighted_sd(mass[0], mass[1], mass[2]).reshape(n_j, k, -1)
    sd_after = (sd * pj).sum(axis=2).mean(axis=0)
    return Scores(per_j.mean(axis=0), per_j.std(axis=0, ddof=1) / np.sqrt(n_j), sd_after)


def prev_gain(prev: np.ndarray, outer: np.ndarray) -> np.ndarray:
    """Per-outer-sample information of the earlier picks, ``ll_self - log mean exp ll``."""
    n = prev.shape[1]
    top = prev.max(axis=1)
    lme = top + np.log(np.exp(prev - top[:, None]).sum(axis=1)) - np.log(n)
    return prev[np.arange(prev.shape[0]), outer] - lme


def start_given(policies, states, actions, g, prev, outer,
                accumulate=nested_accumulate) -> Scores:
    """Nested Monte-Carlo gain of a simulated demonstration per candidate, given ``prev``.

    ``states``/``actions`` ``(C, J, L+1)``/``(C, J, L)`` are demonstrations simulated under
    draw ``outer[j]``; the inner average over all draws estimates their marginal likelihood.
    The outer samples share draws and earlier outcomes across candidates (common random
    numbers), so differences between candidates carry less noise than each gain.
    """
    n = policies.n
    n_c, n_j = actions.shape[0], actions.shape[1]
    acc = np.zeros((5, n_c, n_j))
    acc[0] = -np.inf
    mdp = policies.mdp
    steps = flat_steps(states, actions, policies.tp, mdp.n_states, mdp.n_actions)
    for m0, block in policies.chunks():
        flat_t = np.ascontiguousarray(block.reshape(block.shape[0], -1).T)
        accumulate(flat_t, m0, steps, prev, outer, g, acc)
    lme = acc[0] + np.log(acc[1]) - np.log(n)
    per_j = acc[4] - lme - prev_gain(prev, outer)[None, :]  # (C, J)
    sd_after = _weighted_sd(acc[1], acc[2], acc[3]).mean(axis=1)
    stderr = per_j.std(axis=1, ddof=1) / np.sqrt(n_j)
    return Scores(per_j.mean(axis=1), stderr, sd_after)
