"""Forward-backward passes for episodes with unrecorded actions or states (numpy, no kernels).

An episode is cut at its recorded states into independent pieces (the process is Markov):

* a **step**: recorded state ``x``, then either the next recorded state ``y`` or the episode's
  end (``y = -1``), with the action recorded or not. Its probability is
  ``sum_a pi(a|x) [a = u] P(y|x,a)`` (``P(y|x,a) = 1`` at the end). All steps are done at
  once, vectorised: ``P(y|x, .)`` is looked up once, at construction.
* a **gap**: recorded state ``x``, then ``L - 1 >= 1`` unrecorded states, then a recorded
  state or the end, with each action recorded or not. Its probability is a forward pass over
  the hidden states, its expected step counts the matching backward pass. Memory: ``L`` vectors
  of ``S`` floats for the gap being done (gaps are done one at a time), so the longest gap
  bounds it; :data:`MAX_GAP_FLOATS` caps it at validation.

Both return the log-probability and the expected counts ``N(s, a)`` of every step under the
posterior over what was not recorded (see :mod:`bayesirl.likelihood.marginal` for why these
counts give the exact gradient).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

# Largest (gap length) x (number of states) held by one forward pass: 2e7 floats = 160 MB.
MAX_GAP_FLOATS = 20_000_000


class Steps(NamedTuple):
    """Pieces with no hidden state, as flat arrays (``K`` entries)."""

    source: np.ndarray  # (K,) recorded state
    target: np.ndarray  # (K,) next recorded state, -1 at an episode's end
    action: np.ndarray  # (K,) recorded action, -1 if not recorded
    time: np.ndarray  # (K,) step index within the episode
    episode: np.ndarray  # (K,)
    next_prob: np.ndarray  # (K, A) P(target | source, a), 1 at an episode's end


class Gap(NamedTuple):
    """A recorded state, ``len(actions) - 1`` hidden states, then ``end`` (-1: episode end)."""

    episode: int
    time: int  # step index of ``start``
    start: int
    actions: np.ndarray  # (L,) recorded action per step, -1 if not recorded
    end: int


def step_pass(steps: Steps, policy: np.ndarray, finite: bool):
    """Per-step log-probabilities ``(K,)`` and posterior action weights ``(K, A)``."""
    pol = policy[steps.time, steps.source] if finite else policy[steps.source]
    n_a = pol.shape[1]
    recorded = steps.action >= 0
    mask = np.ones_like(pol)
    mask[recorded] = np.arange(n_a)[None, :] == steps.action[recorded, None]
    joint = pol * steps.next_prob * mask
    z = joint.sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log(z), joint / z[:, None]


def step_pass_ref(steps: Steps, policy: np.ndarray, finite: bool):
    """Reference for :func:`step_pass`: one step at a time."""
    k_steps = steps.source.shape[0]
    logp, post = np.empty(k_steps), np.empty((k_steps, policy.shape[-1]))
    for k in range(k_steps):
        pol = policy[steps.time[k], steps.source[k]] if finite else policy[steps.source[k]]
        w = pol * steps.next_prob[k]
        if steps.action[k] >= 0:
            keep = np.zeros_like(w)
            keep[steps.action[k]] = w[steps.action[k]]
            w = keep
        logp[k] = np.log(w.sum())
        post[k] = w / w.sum()
    return logp, post


def _masked(pol: np.ndarray, action: int) -> np.ndarray:
    if action < 0:
        return pol
    out = np.zeros_like(pol)
    out[:, action] = pol[:, action]
    return out


def gap_pass(dyn, gap: Gap, policy_at, counts: bool = True):
    """``(log P(gap), [(time, N_t (S, A)), ...])`` by a scaled forward-backward pass.

    ``policy_at(t)`` gives the ``(S, A)`` policy at step ``t``; ``dyn`` is the solver's
    :class:`~bayesirl.solver.Dynamics`. Returns ``-inf`` and no counts if the recorded parts
    are impossible.
    """
    n_s, n_a = dyn.n_states, dyn.n_actions
    length = gap.actions.shape[0]
    alphas, scales, masked = np.empty((length, n_s)), np.empty(length), []
    alpha = np.zeros(n_s)
    alpha[gap.start] = 1.0
    transpose = dyn.by_state.T
    for k in range(length):
        alphas[k] = alpha
        pim = _masked(policy_at(gap.time + k), int(gap.actions[k]))
        masked.append(pim)
        raw = transpose @ (alpha[:, None] * pim).ravel()
        if k == length - 1 and gap.end >= 0:
            keep = raw[gap.end]
            raw = np.zeros(n_s)
            raw[gap.end] = keep
        scales[k] = raw.sum()
        if not scales[k] > 0.0:
            return -np.inf, []
        alpha = raw / scales[k]
    logp = float(np.sum(np.log(scales)))
    if not counts:
        return logp, []
    back = np.ones(n_s)
    if gap.end >= 0:
        back = np.zeros(n_s)
        back[gap.end] = 1.0
    out = []
    for k in range(length - 1, -1, -1):
        joint = masked[k] * (dyn.by_state @ back).reshape(n_s, n_a) / scales[k]
        out.append((gap.time + k, alphas[k][:, None] * joint))
        back = joint.sum(axis=1)
    return logp, out[::-1]


def gap_pass_ref(p_dense: np.ndarray, gap: Gap, policy_at):
    """Reference for :func:`gap_pass` on a dense ``(S, A, S)`` array: unscaled forward
    probabilities and the posterior counts from explicit alpha-beta products."""
    n_s, n_a, _ = p_dense.shape
    length = gap.actions.shape[0]
    pims = [_masked(policy_at(gap.time + k), int(gap.actions[k])) for k in range(length)]
    alphas = [np.eye(n_s)[gap.start]]
    for k in range(length):
        nxt = np.einsum("s,sa,sat->t", alphas[-1], pims[k], p_dense)
        if k == length - 1 and gap.end >= 0:
            nxt = nxt * np.eye(n_s)[gap.end]
        alphas.append(nxt)
    total = alphas[-1].sum()
    betas = [np.ones(n_s) if gap.end < 0 else np.eye(n_s)[gap.end]]
    for k in range(length - 1, -1, -1):
        betas.insert(0, np.einsum("sa,sat,t->s", pims[k], p_dense, betas[0]))
    out = [(gap.time + k, alphas[k][:, None] * pims[k]
            * np.einsum("sat,t->sa", p_dense, betas[k + 1]) / total) for k in range(length)]
    return float(np.log(total)), out


# Gaps done together hold (gaps x states x actions) floats per step: at most this many.
BATCH_FLOATS = 4_000_000


def gap_batch_pass(dyn, gaps: list[Gap], policy: np.ndarray, counts: bool = True):
    """:func:`gap_pass` for many gaps of a stationary policy at once.

    Gaps of equal length go through the forward and backward passes together, as
    ``(gaps, S)`` arrays multiplied by the transition matrix (one sparse product per step
    instead of one per gap and step). Returns each gap's log-probability and the sum of
    their expected step counts ``(S, A)`` (zeros unless ``counts``).
    """
    n_s, n_a = dyn.n_states, dyn.n_actions
    logp = np.empty(len(gaps))
    total = np.zeros((n_s, n_a))
    lengths = np.array([g.actions.size for g in gaps], dtype=np.int64)
    chunk = max(1, BATCH_FLOATS // (n_s * n_a))
    for length in np.unique(lengths):
        idx = np.flatnonzero(lengths == length)
        for part in np.array_split(idx, -(-idx.size // chunk)):
            lp, n = _batch(dyn, [gaps[i] for i in part], policy, counts)
            logp[part] = lp
            total += n
    return logp, total


def _batch(dyn, gaps: list[Gap], policy: np.ndarray, counts: bool):
    n_s, n_a = dyn.n_states, dyn.n_actions
    g, length = len(gaps), gaps[0].actions.size
    acts = np.stack([gap.actions for gap in gaps])  # (G, L)
    ends = np.array([gap.end for gap in gaps])
    rows = np.arange(g)
    alpha = np.zeros((g, n_s))
    alpha[rows, [gap.start for gap in gaps]] = 1.0
    alphas, masks, scales = np.empty((length, g, n_s)), [], np.empty((length, g))
    for k in range(length):
        alphas[k] = alpha
        mask = np.ones((g, n_a))
        rec = acts[:, k] >= 0
        mask[rec] = np.arange(n_a)[None, :] == acts[rec, k][:, None]
        masks.append(mask)
        joint = alpha[:, :, None] * policy[None] * mask[:, None, :]
        raw = np.asarray(dyn.by_state.T @ joint.reshape(g, -1).T).T  # (G, S)
        if k == length - 1:
            closed = ends >= 0
            keep = raw[closed, ends[closed]]
            raw[closed] = 0.0
            raw[closed, ends[closed]] = keep
        scales[k] = raw.sum(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            alpha = raw / scales[k][:, None]
    with np.errstate(divide="ignore"):
        logp = np.log(scales).sum(axis=0)
    total = np.zeros((n_s, n_a))
    if not counts or not np.all(np.isfinite(logp)):
        return logp, total
    back = np.ones((g, n_s))
    closed = ends >= 0
    back[closed] = 0.0
    back[closed, ends[closed]] = 1.0
    for k in range(length - 1, -1, -1):
        nxt = np.asarray(dyn.by_state @ back.T).T.reshape(g, n_s, n_a)
        joint = policy[None] * masks[k][:, None, :] * nxt / scales[k][:, None, None]
        total += np.einsum("gs,gsa->sa", alphas[k], joint)
        back = joint.sum(axis=2)
    return logp, total
