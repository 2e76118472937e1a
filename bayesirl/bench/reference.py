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


def reference_newton_value_and_grad(mdp, demos, weights, rationality=1.0, tol=1e-10,
                                    max_iter=100, direct=False):
    """The same quantities by Newton's method with scipy's GMRES: the baseline at discounts
    >= 0.999, where value iteration from zero needs ~log(1/tol) / (1 - g) sweeps.

    What a careful user writes with scipy (nested fixed point, soft policy iteration): each
    step solves ``(I - g P_pi) dV = T(V) - V`` in relative values (re-centred each step), with
    ``scipy.sparse.linalg.spsolve`` when ``direct`` (banded problems such as grids, where the
    LU stays sparse) or else ``gmres`` without preconditioner (random sparse problems, whose
    LU fills in: 130 s for one spsolve at S = 10^4, measured); the stopping rule is the span
    bound with a floor of 1e3 eps |Q| for rounding; the adjoint the same way on the transpose.
    """
    import scipy.sparse as sp

    p = mdp.transitions
    n_s, n_a, g = mdp.n_states, mdp.n_actions, mdp.discount
    phi = np.asarray(mdp.features_sa).reshape(n_s * n_a, -1)
    reward = rationality * (phi @ weights).reshape(n_s, n_a)
    rows = np.repeat(np.arange(n_s), n_a)
    eye = sp.identity(n_s, format="csr")
    v = np.zeros(n_s)
    scale = g / (1.0 - g)
    for _ in range(max_iter):
        q = reward + g * (p @ v).reshape(n_s, n_a)
        top = q.max(axis=1)
        v_new = top + np.log(np.exp(q - top[:, None]).sum(axis=1))
        pi = np.exp(q - v_new[:, None])
        d = v_new - v
        if scale * np.ptp(d) <= max(tol, scale * 1e3 * np.finfo(float).eps * np.abs(q).max()):
            break
        p_pi = sp.csr_matrix((pi.ravel(), (rows, np.arange(n_s * n_a))),
                             shape=(n_s, n_s * n_a)) @ p
        v = v + _solve(eye - g * p_pi, d - d.mean(), direct)
        v -= v.mean()
    log_pi = q - v_new[:, None]
    st = demos.steps
    loglik = float(log_pi[st.states, st.actions].sum())
    counts = np.bincount(st.states * n_a + st.actions, minlength=n_s * n_a).astype(float)
    rho = g * (p.T @ counts) - np.bincount(st.states, minlength=n_s)
    p_pi = sp.csr_matrix((pi.ravel(), (rows, np.arange(n_s * n_a))),
                         shape=(n_s, n_s * n_a)) @ p
    m = _solve((eye - g * p_pi).T.tocsr(), rho, direct)
    grad = phi[st.states * n_a + st.actions].sum(axis=0) + ((pi * m[:, None]).ravel() @ phi)
    return loglik, rationality * grad


def _solve(matrix, rhs, direct):
    import scipy.sparse.linalg as spla

    if direct:
        return spla.spsolve(matrix.tocsc(), rhs)
    return spla.gmres(matrix, rhs, rtol=1e-12, restart=50, maxiter=2000)[0]
