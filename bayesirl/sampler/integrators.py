"""Leapfrog integration and the Gaussian kinetic energy for Hamiltonian Monte Carlo.

The inverse mass matrix ``inv_mass`` is either a 1-D array (its diagonal) or a 2-D
symmetric positive-definite array. With mass matrix ``M = inv(inv_mass)`` the kinetic
energy is ``K(p) = p^T M^{-1} p / 2`` and momenta are drawn from ``N(0, M)``
(Neal 2011, "MCMC using Hamiltonian dynamics", Handbook of MCMC, ch. 5).

A log-density that is not finite, or a gradient that is not finite, ends an integration
step early and returns ``logdensity = -inf``: the callers read that as an infinite
energy error (a divergence) and never use the bad gradient, so no NaN propagates.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from scipy.linalg import solve_triangular

from bayesirl.errors import InputError

__all__ = [
    "LogDensityAndGrad",
    "check_inv_mass",
    "kinetic_energy",
    "leapfrog",
    "leapfrog_with_velocity",
    "sample_momentum",
    "velocity",
]

LogDensityAndGrad = Callable[[np.ndarray], tuple[float, np.ndarray]]


def check_inv_mass(inv_mass: np.ndarray, dim: int) -> np.ndarray:
    """Validate an inverse mass matrix and return it as a float array.

    Parameters
    ----------
    inv_mass : numpy.ndarray
        Diagonal ``(dim,)`` or dense ``(dim, dim)`` inverse mass matrix.
    dim : int
        Dimension of the position.

    Returns
    -------
    numpy.ndarray
        ``inv_mass`` as a float64 array.

    Raises
    ------
    InputError
        If the shape does not match ``dim`` or the matrix is not positive definite.
    """
    inv_mass = np.asarray(inv_mass, dtype=float)
    if inv_mass.shape not in ((dim,), (dim, dim)):
        raise InputError(f"inv_mass: shape {inv_mass.shape} does not fit dimension {dim}")
    if not np.all(np.isfinite(inv_mass)):
        raise InputError("inv_mass: contains non-finite entries")
    if inv_mass.ndim == 1 and np.any(inv_mass <= 0):
        raise InputError("inv_mass: diagonal entries must be positive")
    if inv_mass.ndim == 2:
        if not np.allclose(inv_mass, inv_mass.T):
            raise InputError("inv_mass: dense inverse mass matrix must be symmetric")
        try:
            np.linalg.cholesky(inv_mass)
        except np.linalg.LinAlgError as err:
            raise InputError("inv_mass: dense matrix is not positive definite") from err
    return inv_mass


def velocity(momentum: np.ndarray, inv_mass: np.ndarray) -> np.ndarray:
    """Return ``dK/dp = M^{-1} p``, the position velocity (Betancourt's ``p_sharp``).

    Parameters
    ----------
    momentum : numpy.ndarray
        Momentum, shape ``(dim,)``.
    inv_mass : numpy.ndarray
        Diagonal or dense inverse mass matrix.

    Returns
    -------
    numpy.ndarray
        ``M^{-1} p``, shape ``(dim,)``.
    """
    if inv_mass.ndim == 1:
        return inv_mass * momentum
    return inv_mass @ momentum


def kinetic_energy(momentum: np.ndarray, inv_mass: np.ndarray) -> float:
    """Return the Gaussian kinetic energy ``p^T M^{-1} p / 2``.

    Parameters
    ----------
    momentum : numpy.ndarray
        Momentum, shape ``(dim,)``.
    inv_mass : numpy.ndarray
        Diagonal or dense inverse mass matrix.

    Returns
    -------
    float
        The kinetic energy.
    """
    with np.errstate(over="ignore", invalid="ignore"):  # overflow -> inf energy: divergent
        return 0.5 * float(momentum @ velocity(momentum, inv_mass))


def sample_momentum(rng: np.random.Generator, inv_mass: np.ndarray) -> np.ndarray:
    """Draw a momentum from ``N(0, M)`` with ``M = inv(inv_mass)``.

    Parameters
    ----------
    rng : numpy.random.Generator
        Source of randomness.
    inv_mass : numpy.ndarray
        Diagonal or dense inverse mass matrix.

    Returns
    -------
    numpy.ndarray
        A momentum draw, shape ``(dim,)``.
    """
    z = rng.standard_normal(inv_mass.shape[0])
    if inv_mass.ndim == 1:
        return z / np.sqrt(inv_mass)
    # With inv_mass = L L^T, p = L^{-T} z has covariance (L L^T)^{-1} = M, and needs no
    # explicit inverse of inv_mass.
    chol = np.linalg.cholesky(inv_mass)
    return solve_triangular(chol, z, lower=True, trans="T")


def leapfrog(
    logdensity_and_grad: LogDensityAndGrad,
    position: np.ndarray,
    momentum: np.ndarray,
    grad: np.ndarray,
    step_size: float,
    inv_mass: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, float, np.ndarray]:
    """Take one leapfrog (velocity Verlet) step; costs one gradient evaluation.

    Parameters
    ----------
    logdensity_and_grad : callable
        ``theta -> (log density, gradient)``.
    position, momentum, grad : numpy.ndarray
        Current position, momentum and the log-density gradient at ``position``.
    step_size : float
        Signed step size; a negative value integrates backwards in time.
    inv_mass : numpy.ndarray
        Diagonal or dense inverse mass matrix.

    Returns
    -------
    position, momentum : numpy.ndarray
        The new position and momentum.
    logdensity : float
        Log density at the new position, ``-inf`` if it (or its gradient) is not finite.
    grad : numpy.ndarray
        Gradient at the new position (the old one if the new one is unusable).
    """
    return leapfrog_with_velocity(
        logdensity_and_grad, position, momentum, grad, step_size, inv_mass
    )[:4]


def leapfrog_with_velocity(
    logdensity_and_grad: LogDensityAndGrad,
    position: np.ndarray,
    momentum: np.ndarray,
    grad: np.ndarray,
    step_size: float,
    inv_mass: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, float, np.ndarray, np.ndarray, float]:
    """As :func:`leapfrog`, also returning the new velocity ``M^{-1} p`` and kinetic energy.

    NUTS needs both at every point; computing them here saves a matrix product per step.
    For an unusable point the velocity is the half-step momentum and the kinetic energy
    is ``inf``.

    Returns
    -------
    position, momentum, logdensity, grad :
        As :func:`leapfrog`.
    p_sharp : numpy.ndarray
        ``M^{-1} p`` at the new momentum.
    kinetic : float
        Kinetic energy at the new momentum.
    """
    # An unstable step may overflow: that is a divergence to report, not a warning, and
    # the errstate covers only our arithmetic, never the user's log density.
    with np.errstate(over="ignore", invalid="ignore"):
        half_momentum = momentum + 0.5 * step_size * grad
        new_position = position + step_size * velocity(half_momentum, inv_mass)
    if not np.isfinite(new_position).all():
        return new_position, half_momentum, -math.inf, grad, half_momentum, math.inf
    logdensity, new_grad = logdensity_and_grad(new_position)
    logdensity = float(logdensity)
    new_grad = np.asarray(new_grad, dtype=float)
    # +inf is as unusable as NaN: it would make every other point weightless.
    if not (math.isfinite(logdensity) and np.isfinite(new_grad).all()):
        return new_position, half_momentum, -math.inf, grad, half_momentum, math.inf
    with np.errstate(over="ignore", invalid="ignore"):
        new_momentum = half_momentum + 0.5 * step_size * new_grad
        p_sharp = velocity(new_momentum, inv_mass)
        kinetic = 0.5 * float(new_momentum @ p_sharp)
    return new_position, new_momentum, logdensity, new_grad, p_sharp, kinetic
