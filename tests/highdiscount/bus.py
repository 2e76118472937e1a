"""The bus-engine replacement model of Rust (1987) and an independent dense reference solver.

Rust, J. (1987), "Optimal replacement of GMC bus engines: an empirical model of Harold
Zurcher", Econometrica 55(5), 999-1033. Specification as in its Table IX (values from memory,
as the issue that asked for these checks gives them): 90 mileage bins; each month the bin
grows by 0, 1 or 2 with probabilities 0.3919, 0.5953, 0.0128 (capped at the last bin); a
replaced engine restarts at bin 0 and then grows the same way; per-period utility
``-0.001 * theta1 * x`` for keeping, ``-RC`` for replacing, with theta1 = 2.6275 and
RC = 9.7558, plus type-I extreme-value (logit) shocks. As state-action features:
keep -> (-0.001 x, 0), replace -> (0, -1), weights (theta1, RC).

The reference is the nested fixed point written plainly: Newton's method on the soft
Bellman equation in relative values (the policy ignores constants) with dense
``numpy.linalg.solve`` steps, a fixed number of steps (quadratic convergence makes 60 far more
than enough; the final residual is checked), and the gradient by forward sensitivities
``dV/dtheta = (I - g P_pi)^{-1} sum_a pi(a|s) phi(s, a)`` - not the adjoint the package uses.
"""

from __future__ import annotations

import numpy as np

from bayesirl import TabularMDP
from bayesirl.bench.problems import BUS_BINS, BUS_TRUTH, bus_engine

N_BINS = BUS_BINS
TRUTH = BUS_TRUTH
NAMES = ("theta1", "RC")


def bus_mdp(discount: float) -> TabularMDP:
    return bus_engine(discount)


def transitions() -> np.ndarray:
    """``P[s, a, s']`` (a = 0 keep, 1 replace) as the reference solver reads it."""
    return bus_mdp(0.9).transitions.toarray().reshape(N_BINS, 2, N_BINS)


def features() -> np.ndarray:
    """``phi[s, a, :]``: keep -> (-0.001 x, 0), replace -> (0, -1)."""
    return np.asarray(bus_mdp(0.9).features_sa)


def reference_solve(p, phi, theta, discount, steps: int = 60):
    """``(V relative, log pi (S, A), pi)`` by dense Newton on the soft Bellman equation."""
    n_s, n_a, _ = p.shape
    r = phi @ theta
    v = np.zeros(n_s)
    for _ in range(steps):
        q = r + discount * np.einsum("sat,t->sa", p, v)
        top = q.max(axis=1)
        tv = top + np.log(np.exp(q - top[:, None]).sum(axis=1))
        pi = np.exp(q - tv[:, None])
        p_pi = np.einsum("sa,sat->st", pi, p)
        d = tv - v
        v = v + np.linalg.solve(np.eye(n_s) - discount * p_pi, d - d.mean())
        v -= v.mean()
    q = r + discount * np.einsum("sat,t->sa", p, v)
    top = q.max(axis=1)
    tv = top + np.log(np.exp(q - top[:, None]).sum(axis=1))
    return v, q - tv[:, None], np.exp(q - tv[:, None]), np.ptp(tv - v)


def reference_loglik_and_grad(p, phi, theta, discount, states, actions):
    """Log-likelihood of (s_t, a_t) pairs and its gradient by forward sensitivities."""
    n_s = p.shape[0]
    _, log_pi, pi, _ = reference_solve(p, phi, theta, discount)
    loglik = float(log_pi[states, actions].sum())
    p_pi = np.einsum("sa,sat->st", pi, p)
    source = np.einsum("sa,saf->sf", pi, phi)  # E_pi phi(s, .)
    dv = np.linalg.solve(np.eye(n_s) - discount * p_pi, source)  # (S, F)
    dq = phi + discount * np.einsum("sat,tf->saf", p, dv)  # (S, A, F)
    dlog_pi = dq - np.einsum("sa,saf->sf", pi, dq)[:, None, :]
    return loglik, dlog_pi[states, actions].sum(axis=0)


def old_rule_newton(p, r, discount, v0, tol=1e-10, max_iter=50):
    """The stopping rule before the fix (kept here only as a negative control).

    No re-centring of the values, and the floor ``64 eps |V|`` compared with the span scaled
    by ``g / (1 - g)``. Returns the number of steps, or -1 if it never stops.
    """
    scale = discount / (1.0 - discount)
    v = np.array(v0, dtype=float)
    for it in range(1, max_iter + 1):
        q = r + discount * np.einsum("sat,t->sa", p, v)
        top = q.max(axis=1)
        tv = top + np.log(np.exp(q - top[:, None]).sum(axis=1))
        d = tv - v
        floor = max(tol, 64 * np.finfo(float).eps * max(1.0, np.abs(tv).max()))
        if scale * np.ptp(d) <= floor:
            return it
        pi = np.exp(q - tv[:, None])
        p_pi = np.einsum("sa,sat->st", pi, p)
        v = v + np.linalg.solve(np.eye(p.shape[0]) - discount * p_pi, d - d.mean())
    return -1
