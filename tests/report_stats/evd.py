"""Independent expected-value-difference computations (no bayesirl solver code).

Everything here works on the dense ``(S, A, S)`` transition array and the ``(S, A, F)``
feature array. Policy values solve ``(I - g P_pi) V = r_pi`` with
``scipy.sparse.linalg.spsolve``; optimal values come either from enumerating every
deterministic policy (tiny problems: the optimal value is the state-wise maximum over
deterministic policies, Puterman 1994, "Markov Decision Processes", Thm 6.2.10) or from our
own Howard policy iteration.
"""

from __future__ import annotations

import itertools

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve


def rewards(phi: np.ndarray, w: np.ndarray) -> np.ndarray:
    """``(S, A)`` reward table from ``(S, A, F)`` (or ``(S, F)``) features."""
    r = np.asarray(phi, float) @ np.asarray(w, float)
    return r[:, None] if r.ndim == 1 else r


def policy_value(p: np.ndarray, r: np.ndarray, g: float, pi: np.ndarray) -> np.ndarray:
    """Value of the deterministic stationary policy ``pi`` (one action per state)."""
    s = np.arange(p.shape[0])
    r = np.broadcast_to(r, (p.shape[0], p.shape[1]))
    system = sp.csc_matrix(np.eye(p.shape[0]) - g * p[s, pi])
    return np.atleast_1d(spsolve(system, r[s, pi]))


def enumerate_optimal(p, r, g) -> tuple[np.ndarray, np.ndarray]:
    """(V*, the policy attaining it) by trying every deterministic policy."""
    n_s, n_a = p.shape[:2]
    best_v, best_pi = None, None
    for pi in itertools.product(range(n_a), repeat=n_s):
        v = policy_value(p, r, g, np.array(pi))
        if best_v is None or v.sum() > best_v.sum():
            best_v, best_pi = v, np.array(pi)
    return best_v, best_pi


def howard(p, r, g, max_iter: int = 500) -> tuple[np.ndarray, np.ndarray]:
    """(V*, greedy policy) by Howard's policy iteration with spsolve evaluations."""
    r = np.broadcast_to(r, (p.shape[0], p.shape[1]))
    pi = np.zeros(p.shape[0], dtype=int)
    rows = np.arange(p.shape[0])
    for _ in range(max_iter):
        v = policy_value(p, r, g, pi)
        q = r + g * p @ v
        better = q.max(axis=1) > q[rows, pi] + 1e-12 * (1 + np.abs(v))
        if not better.any():
            return v, pi
        pi = np.where(better, q.argmax(axis=1), pi)
    raise RuntimeError("policy iteration did not settle")


def finite_value(p, r, g, pi_t: np.ndarray) -> np.ndarray:
    """``V_0`` of a time-dependent deterministic policy ``pi_t`` (H, S), ``V_H = 0``."""
    rows = np.arange(p.shape[0])
    v = np.zeros(p.shape[0])
    for pi in pi_t[::-1]:
        v = r[rows, pi] + g * p[rows, pi] @ v
    return v


def enumerate_finite(p, r, g, horizon) -> tuple[np.ndarray, np.ndarray]:
    """(V*_0, the time-dependent policy attaining it) by trying every such policy."""
    n_s, n_a = p.shape[:2]
    best_v, best_pi = None, None
    for flat in itertools.product(range(n_a), repeat=n_s * horizon):
        pi_t = np.array(flat).reshape(horizon, n_s)
        v = finite_value(p, r, g, pi_t)
        if best_v is None or v.sum() > best_v.sum():
            best_v, best_pi = v, pi_t
    return best_v, best_pi
