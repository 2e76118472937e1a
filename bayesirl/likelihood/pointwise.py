"""Log-likelihood of each demonstrated step and episode (for model checking and PSIS-LOO).

The demonstrations' log-likelihood is a sum over steps of ``log pi(a_t | s_t)`` (the
transitions do not depend on the reward), so the per-step terms are the natural pointwise
values and an episode's value is the sum of its steps. These functions solve once per call
and keep no warm starts of the sampler's likelihood (they never touch its cache), so
computing them after a run changes no draw.
"""

from __future__ import annotations

import numpy as np

from bayesirl.solver import logsumexp_rows, policy_iteration
from bayesirl.solver.finite import soft_backward


def log_policy(mdp, q: str, weights: np.ndarray, beta: float, values0=None):
    """``(log pi, warm)``: the demonstrator's log policy ``(S, A)`` (``(H, S, A)`` with a
    horizon) under ``q`` ("soft" or "optimal"), and a warm start for the next call."""
    if q == "soft":
        if mdp.horizon is not None:
            return soft_backward(mdp.dynamics, beta * mdp.reward(weights), mdp.discount,
                                 mdp.horizon).log_policy, None
        sol = mdp.solve(weights, beta, values0=values0)
        return sol.log_policy, sol.values
    if mdp.horizon is not None:
        return _optimal_finite(mdp, weights, beta), None
    sol = policy_iteration(mdp.dynamics, mdp.reward(weights), mdp.discount, values0)
    logits = beta * sol.q
    return logits - logsumexp_rows(logits)[:, None], sol.greedy


def _optimal_finite(mdp, weights, beta) -> np.ndarray:
    dyn, g, h = mdp.dynamics, mdp.discount, mdp.horizon
    reward = mdp.reward(weights)
    out = np.empty((h, mdp.n_states, mdp.n_actions))
    v_next = np.zeros(mdp.n_states)
    for t in range(h - 1, -1, -1):
        q = reward + g * dyn.expected_next(v_next)
        v_next = q.max(axis=1)
        logits = beta * q
        out[t] = logits - logsumexp_rows(logits)[:, None]
    return out


def step_values(log_pi: np.ndarray, demos) -> np.ndarray:
    """``log pi(a_t | s_t)`` of every demonstrated step, in ``demos.steps`` order."""
    st = demos.steps
    if log_pi.ndim == 3:
        return log_pi[st.times, st.states, st.actions]
    return log_pi[st.states, st.actions]


def episode_values(steps: np.ndarray, demos) -> np.ndarray:
    """Per-episode sums of per-step values (episodes in ``demos`` order)."""
    return np.bincount(demos.steps.episodes, weights=steps, minlength=demos.n_episodes)
