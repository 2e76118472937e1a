"""What a user would write by hand: plain soft value iteration from zero, then the gradient.

This is the benchmark's baseline (and an independent cross-check of the engine in the tests):
numpy/scipy only, no warm starts, no acceleration. Value iteration stops when the largest
change of ``V`` is below ``tol``; the adjoint ``m = rho + g P_pi^T m`` is iterated likewise.
"""

from __future__ import annotations

import numpy as np


def reference_value_and_grad(mdp, demos, weights, rationality=1.0, tol=1e-10, max_iter=200_000):
    """Log-likelihood and gradient of the soft (maximum-causal-entropy) model, discounted."""
    p = mdp.transitions
    n_s, n_a, g = mdp.n_states, mdp.n_actions, mdp.discount
    phi = np.asarray(mdp.features_sa).reshape(n_s * n_a, -1)
    reward = rationality * (phi @ weights).reshape(n_s, n_a)
    v = np.zeros(n_s)
    for _ in range(max_iter):
        q = reward + g * (p @ v).reshape(n_s, n_a)
        top = q.max(axis=1)
        v_new = top + np.log(np.exp(q - top[:, None]).sum(axis=1))
        done = np.max(np.abs(v_new - v)) < tol
        v = v_new
        if done:
            break
    log_pi = q - v[:, None]
    pi = np.exp(log_pi)
    st = demos.steps
    loglik = float(log_pi[st.states, st.actions].sum())
    counts = np.bincount(st.states * n_a + st.actions, minlength=n_s * n_a).astype(float)
    rho = g * (p.T @ counts) - np.bincount(st.states, minlength=n_s)
    m = np.zeros(n_s)
    for _ in range(max_iter):
        m_new = rho + g * (p.T @ (pi * m[:, None]).ravel())
        done = np.max(np.abs(m_new - m)) < tol * max(1.0, np.max(np.abs(m_new)))
        m = m_new
        if done:
            break
    grad = phi[st.states * n_a + st.actions].sum(axis=0) + ((pi * m[:, None]).ravel() @ phi)
    return loglik, rationality * grad
