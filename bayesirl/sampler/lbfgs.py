"""L-BFGS ascent of a log density, keeping the whole path for Pathfinder.

The optimiser of Nocedal & Wright (2006, Numerical Optimization, 2nd ed., Alg. 7.4 with the
two-loop recursion Alg. 7.5) on ``f = -log p``: initial inverse Hessian ``gamma I`` with
``gamma = s'y / y'y`` from the newest pair (their eq. 7.20), a pair kept only when
``s'y > eps * y'y`` (as L-BFGS-B does), and steps meeting the strong Wolfe conditions with
``c1 = 1e-3, c2 = 0.9`` (L-BFGS-B's line-search constants). The first step has length
``1 / |g|`` and later ones start from 1, as in L-BFGS-B without bounds, so on a smooth
problem whose first trial steps are accepted the iterates are those of
``scipy.optimize.minimize(method="L-BFGS-B")`` (checked in tests/sampler/test_lbfgs.py).
When a trial is rejected the step is bracketed by doubling and then bisection, which is
simpler than L-BFGS-B's Moré-Thuente search and can give other iterates.

:func:`inverse_hessian` rebuilds the dense L-BFGS inverse-Hessian estimate at any iterate of
the path, which Pathfinder uses as the covariance of its normal approximations.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from bayesirl.sampler.integrators import LogDensityAndGrad

__all__ = ["LBFGSPath", "inverse_hessian", "lbfgs_path"]

_C1, _C2 = 1e-3, 0.9  # L-BFGS-B's sufficient-decrease and curvature constants
_EPS = np.finfo(float).eps
_MAX_TRIALS = 40  # trial steps per line search: 2^40 covers any useful range


class LBFGSPath(NamedTuple):
    """The accepted iterates of one L-BFGS run (start first).

    ``positions`` ``(L + 1, dim)``, their ``logdensities`` ``(L + 1,)`` and gradients of the
    log density ``grads`` ``(L + 1, dim)``; ``n_evals`` counts density-and-gradient calls,
    line-search trials included; ``status`` says why the run stopped.
    """

    positions: np.ndarray
    logdensities: np.ndarray
    grads: np.ndarray
    n_evals: int
    status: str


def _curvature_ok(s: np.ndarray, y: np.ndarray) -> bool:
    return float(s @ y) > _EPS * float(y @ y)


def _direction(g: np.ndarray, pairs: list[tuple[np.ndarray, np.ndarray]]) -> np.ndarray:
    """``-H g`` by the two-loop recursion (``g`` the gradient of ``f = -log p``)."""
    if not pairs:
        return -g
    q, alphas = g.copy(), []
    for s, y in reversed(pairs):
        a = float(s @ q) / float(s @ y)
        alphas.append(a)
        q -= a * y
    s, y = pairs[-1]
    r = q * (float(s @ y) / float(y @ y))
    for (s, y), a in zip(pairs, reversed(alphas), strict=True):
        b = float(y @ r) / float(s @ y)
        r += s * (a - b)
    return -r


def _line_search(fn, x, f, g, d, step):
    """Strong Wolfe step along ``d``: ``(step, f, g, evaluations)`` or None on failure."""
    slope = float(g @ d)
    lo, hi, best, evals = 0.0, math.inf, None, 0
    for _ in range(_MAX_TRIALS):
        value, grad = fn(x + step * d)
        evals += 1
        f_new, g_new = -float(value), -np.asarray(grad, dtype=float)
        finite = math.isfinite(f_new) and bool(np.all(np.isfinite(g_new)))
        if not finite or f_new > f + _C1 * step * slope:
            hi = step
        else:
            new_slope = float(g_new @ d)
            best = (step, f_new, g_new)
            if new_slope < _C2 * slope:  # still descending steeply: go further
                lo = step
            elif new_slope > -_C2 * slope:  # overshot the minimum along d
                hi = step
            else:
                return step, f_new, g_new, evals
        step = 2.0 * step if math.isinf(hi) else 0.5 * (lo + hi)
    return None if best is None else (*best, evals)


def lbfgs_path(logdensity_and_grad: LogDensityAndGrad, start: np.ndarray, *,
               history: int = 6, max_iter: int = 1000, rel_tol: float = 1e-10,
               grad_tol: float = 1e-8) -> LBFGSPath:
    """Maximise a log density by L-BFGS from ``start`` and keep every iterate.

    Parameters
    ----------
    logdensity_and_grad : callable
        ``theta -> (log density, gradient)``; finite at ``start``.
    start : numpy.ndarray
        Shape ``(dim,)``.
    history : int, default 6
        Pairs kept (Zhang et al. 2022 use 6 in Pathfinder).
    max_iter : int, default 1000
        Iterations at most.
    rel_tol : float, default 1e-10
        Stop when ``(f_k - f_{k+1}) / max(|f_k|, |f_{k+1}|, 1) <= rel_tol`` (L-BFGS-B's
        ``ftol`` test).
    grad_tol : float, default 1e-8
        Stop when the largest gradient component is at most this.

    Returns
    -------
    LBFGSPath
    """
    x = np.array(start, dtype=float)
    value, grad = logdensity_and_grad(x)
    f, g = -float(value), -np.asarray(grad, dtype=float)
    if not (math.isfinite(f) and np.all(np.isfinite(g))):
        raise ValueError("lbfgs_path: the start has a non-finite log density or gradient")
    xs, fs, gs, pairs, evals, status = [x], [f], [g], [], 1, "iteration limit"
    for it in range(max_iter):
        if float(np.max(np.abs(g), initial=0.0)) <= grad_tol:
            status = "gradient tolerance"
            break
        d = _direction(g, pairs)
        if not float(g @ d) < 0.0:
            d = -g  # numerical loss of descent: restart from steepest descent
            pairs.clear()
        step = min(1.0 / float(np.linalg.norm(d)), 1e10) if it == 0 else 1.0
        found = _line_search(logdensity_and_grad, x, f, g, d, step)
        if found is None:
            status = "line search failed"
            break
        step, f_new, g_new, n = found
        evals += n
        x_new = x + step * d
        s, y = x_new - x, g_new - g
        if _curvature_ok(s, y):
            pairs = (pairs + [(s, y)])[-history:]
        small = (f - f_new) / max(abs(f), abs(f_new), 1.0) <= rel_tol
        x, f, g = x_new, f_new, g_new
        xs.append(x), fs.append(f), gs.append(g)
        if small:
            status = "relative tolerance"
            break
    return LBFGSPath(np.array(xs), -np.array(fs), -np.array(gs), evals, status)


def inverse_hessian(path: LBFGSPath, i: int, history: int = 6) -> np.ndarray | None:
    """The dense L-BFGS inverse-Hessian estimate of ``-log p`` at iterate ``i`` of ``path``.

    Built from the last ``history`` pairs up to iterate ``i`` that pass the curvature test,
    by the BFGS update from ``gamma I`` (Nocedal & Wright 2006, eq. 7.19, 7.20): the matrix
    the two-loop recursion applies. None when there is no such pair (iterate 0).
    Dense ``(dim, dim)``: fine for the tens of parameters of a reward model; the paper's
    low-rank form would be needed for thousands.
    """
    pairs = []
    for j in range(1, i + 1):
        s = path.positions[j] - path.positions[j - 1]
        y = path.grads[j - 1] - path.grads[j]  # gradients of f = -log p
        if _curvature_ok(s, y):
            pairs = (pairs + [(s, y)])[-history:]
    if not pairs:
        return None
    s, y = pairs[-1]
    dim = path.positions.shape[1]
    h = np.eye(dim) * (float(s @ y) / float(y @ y))
    for s, y in pairs:
        rho = 1.0 / float(s @ y)
        left = np.eye(dim) - rho * np.outer(s, y)
        h = left @ h @ left.T + rho * np.outer(s, s)
    return 0.5 * (h + h.T)
