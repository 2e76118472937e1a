"""Pathfinder: normal approximations along an L-BFGS path, the best by ELBO.

Zhang, Carpenter, Gelman & Vehtari (2022), "Pathfinder: parallel quasi-Newton variational
inference", JMLR 23(306). From a start, L-BFGS climbs the log density
(:mod:`~bayesirl.sampler.lbfgs`); at every iterate ``theta_l`` with gradient ``g_l`` and
L-BFGS inverse-Hessian estimate ``H_l`` the normal ``N(theta_l + H_l g_l, H_l)`` (one
quasi-Newton step towards the mode, the local curvature as covariance) is scored by a
Monte-Carlo ELBO ``mean_k log p(x_k) - log q(x_k)`` over ``elbo_draws`` draws, and the
best-scoring one is the path's approximation. Several paths from different starts are pooled
by importance resampling with Pareto-smoothed weights (:mod:`~bayesirl.sampler.psis`), whose
k-hat says whether the normal approximation can stand in for the posterior.

What differs from the paper: the inverse Hessian starts from the scalar ``gamma I`` of
L-BFGS (the paper uses a diagonal estimate) and is formed densely; the ELBO and importance
draws call the density without its gradient when a value-only callable is given.

Randomness: a ``numpy.random.Generator`` passed in; nothing global.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import NamedTuple

import numpy as np

from bayesirl.errors import InputError, SolverError
from bayesirl.sampler.integrators import LogDensityAndGrad
from bayesirl.sampler.lbfgs import LBFGSPath, inverse_hessian, lbfgs_path
from bayesirl.sampler.psis import PSISResult, psis

__all__ = ["Approximation", "PathResult", "PathfinderResult", "initial_state",
           "multi_path", "single_path"]

_LOG_2PI = math.log(2.0 * math.pi)


class Approximation(NamedTuple):
    """A normal approximation ``N(mean, cov)`` at L-BFGS iterate ``iteration``."""

    mean: np.ndarray
    cov: np.ndarray
    chol: np.ndarray  # lower Cholesky factor of cov
    elbo: float  # Monte-Carlo ELBO estimate
    iteration: int

    def draw(self, rng: np.random.Generator, n: int) -> tuple[np.ndarray, np.ndarray]:
        """``n`` draws and their log densities under the approximation."""
        z = rng.standard_normal((n, self.mean.shape[0]))
        log_q = -0.5 * np.sum(z * z, axis=1) - np.sum(np.log(np.diag(self.chol))) \
            - 0.5 * self.mean.shape[0] * _LOG_2PI
        return self.mean + z @ self.chol.T, log_q


class PathResult(NamedTuple):
    """One path: its iterates, each iterate's ELBO (NaN: no approximation) and the best."""

    path: LBFGSPath
    elbos: np.ndarray
    best: Approximation
    n_evals: int  # density-and-gradient calls (the L-BFGS run)
    n_value_evals: int  # density calls for the ELBO draws


class PathfinderResult(NamedTuple):
    """Importance-resampled draws from the pooled best approximations of every path.

    ``proposals`` are the ``(paths * draws, dim)`` draws from the approximations and
    ``psis`` their Pareto-smoothed log weights and k-hat; ``draws`` are resampled from the
    proposals with those weights (with replacement).
    """

    draws: np.ndarray
    proposals: np.ndarray
    psis: PSISResult
    paths: tuple[PathResult, ...]

    @property
    def k_hat(self) -> float:
        """Pareto k-hat of the importance ratios (see :mod:`~bayesirl.sampler.psis`)."""
        return self.psis.k_hat

    @property
    def trusted(self) -> bool:
        """k-hat at or below the threshold for this many draws (at most 0.7)."""
        return self.psis.trusted

    @property
    def n_evals(self) -> int:
        """Density calls in all: with gradient (L-BFGS) and value only (ELBO, weights)."""
        return sum(p.n_evals + p.n_value_evals for p in self.paths) + self.proposals.shape[0]


def _values(fn: Callable, xs: np.ndarray) -> np.ndarray:
    out = np.empty(xs.shape[0])
    for i, x in enumerate(xs):
        v = fn(x)
        v = float(v[0] if isinstance(v, tuple) else v)
        out[i] = v if not math.isnan(v) else -math.inf
    return out


def _approximation(path: LBFGSPath, i: int, history: int) -> tuple | None:
    cov = inverse_hessian(path, i, history)
    if cov is None:
        return None
    try:
        chol = np.linalg.cholesky(cov)
    except np.linalg.LinAlgError:
        return None
    return path.positions[i] + cov @ path.grads[i], cov, chol


def single_path(logdensity_and_grad: LogDensityAndGrad, start: np.ndarray,
                rng: np.random.Generator, *, logdensity: Callable | None = None,
                history: int = 6, elbo_draws: int = 25, max_iter: int = 1000) -> PathResult:
    """One Pathfinder path: L-BFGS from ``start``, the best normal approximation by ELBO.

    Parameters
    ----------
    logdensity_and_grad : callable
        ``theta -> (log density, gradient)``, finite at ``start``.
    start : numpy.ndarray
    rng : numpy.random.Generator
        Source of the ELBO draws.
    logdensity : callable, optional
        ``theta -> log density`` (cheaper when the gradient costs extra); default: the
        value of ``logdensity_and_grad``.
    history : int, default 6
        L-BFGS pairs kept (the paper's choice).
    elbo_draws : int, default 25
        Draws per ELBO estimate.
    max_iter : int, default 1000
        L-BFGS iterations at most.

    Returns
    -------
    PathResult

    Raises
    ------
    SolverError
        No iterate gave an approximation with a finite ELBO.
    """
    value_fn = logdensity if logdensity is not None else logdensity_and_grad
    path = lbfgs_path(logdensity_and_grad, start, history=history, max_iter=max_iter)
    elbos = np.full(path.positions.shape[0], math.nan)
    best, used = None, 0
    for i in range(1, path.positions.shape[0]):
        parts = _approximation(path, i, history)
        if parts is None:
            continue
        approx = Approximation(*parts, elbo=math.nan, iteration=i)
        xs, log_q = approx.draw(rng, elbo_draws)
        log_p = _values(value_fn, xs)
        used += elbo_draws
        elbos[i] = float(np.mean(log_p - log_q)) if np.all(np.isfinite(log_p)) else -math.inf
        if math.isfinite(elbos[i]) and (best is None or elbos[i] > best.elbo):
            best = approx._replace(elbo=float(elbos[i]))
    if best is None:
        raise SolverError(f"pathfinder: no normal approximation with a finite ELBO along "
                          f"{path.positions.shape[0]} L-BFGS iterates ({path.status})")
    return PathResult(path, elbos, best, path.n_evals, used)


def multi_path(logdensity_and_grad: LogDensityAndGrad, starts: Sequence[np.ndarray],
               rng: np.random.Generator, *, logdensity: Callable | None = None,
               draws: int = 1000, history: int = 6, elbo_draws: int = 25,
               max_iter: int = 1000) -> PathfinderResult:
    """Multi-path Pathfinder: one path per start, pooled by PSIS importance resampling.

    ``draws`` are taken from each path's best approximation; the ``len(starts) * draws``
    log importance ratios ``log p - log q_path`` are Pareto-smoothed and ``draws`` are
    resampled with replacement (Zhang et al. 2022, Alg. 2). Other parameters as in
    :func:`single_path`.

    Returns
    -------
    PathfinderResult
    """
    if len(starts) < 1 or draws < 2:
        raise InputError(f"pathfinder: need >= 1 start and >= 2 draws; got {len(starts)} "
                         f"and {draws}")
    value_fn = logdensity if logdensity is not None else logdensity_and_grad
    paths, proposals, log_ratios = [], [], []
    for start in starts:
        p = single_path(logdensity_and_grad, start, rng, logdensity=logdensity,
                        history=history, elbo_draws=elbo_draws, max_iter=max_iter)
        xs, log_q = p.best.draw(rng, draws)
        paths.append(p)
        proposals.append(xs)
        log_ratios.append(_values(value_fn, xs) - log_q)
    proposals = np.concatenate(proposals)
    smoothed = psis(np.concatenate(log_ratios))
    weights = np.exp(smoothed.log_weights)
    pick = rng.choice(proposals.shape[0], size=draws, replace=True, p=weights / weights.sum())
    return PathfinderResult(proposals[pick], proposals, smoothed, tuple(paths))


def initial_state(logdensity_and_grad: LogDensityAndGrad, start: np.ndarray,
                  rng: np.random.Generator, *, dense: bool = False,
                  logdensity: Callable | None = None,
                  tries: int = 100) -> tuple[np.ndarray, np.ndarray, int]:
    """A chain's start from one Pathfinder path: a draw from the best approximation.

    Parameters
    ----------
    logdensity_and_grad, start, rng, logdensity
        As in :func:`single_path`.
    dense : bool, default False
        Return the approximation's covariance as the inverse mass matrix; else its diagonal.
    tries : int, default 100
        Draws tried for one with a finite log density and gradient.

    Returns
    -------
    position : numpy.ndarray
    inv_mass : numpy.ndarray
        ``(dim,)`` or ``(dim, dim)``.
    n_evals : int
        Density calls used (with and without gradient).
    """
    p = single_path(logdensity_and_grad, start, rng, logdensity=logdensity)
    used = p.n_evals + p.n_value_evals
    cov = p.best.cov
    for _ in range(tries):
        x = p.best.draw(rng, 1)[0][0]
        value, grad = logdensity_and_grad(x)
        used += 1
        if math.isfinite(value) and np.all(np.isfinite(grad)):
            return x, (cov.copy() if dense else np.diag(cov).copy()), used
    raise SolverError(f"pathfinder: no finite log density in {tries} draws from the best "
                      "normal approximation")
