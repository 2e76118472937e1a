"""Gaussian random-walk Metropolis, with the same state / info / init / step pattern as NUTS.

The proposal is ``x' = x + step_size * L z`` with ``z ~ N(0, I)`` and ``L L^T`` the proposal
covariance shape (diagonal or dense). During warmup (see :mod:`bayesirl.sampler.chain`)
the shape is estimated from the draws, as in the adaptive Metropolis of Haario, Saksman &
Tamminen (2001, Bernoulli 7), and ``step_size`` is tuned by dual averaging towards the mean
acceptance 0.234 that is optimal for high-dimensional random walks (Roberts, Gelman &
Gilks 1997, Ann. Appl. Probab. 7), starting from ``2.38 / sqrt(dim)`` (same source).

Only the log density is used. The callable may return a float or, to share the NUTS
interface, a ``(log density, gradient)`` pair whose gradient is ignored; a non-finite
log density rejects the proposal.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any, NamedTuple

import numpy as np

from bayesirl.errors import InputError
from bayesirl.sampler.integrators import check_inv_mass

__all__ = ["RWMInfo", "RWMState", "init", "optimal_scale", "step"]

LogDensity = Callable[[np.ndarray], Any]


class RWMState(NamedTuple):
    """Position and its log density."""

    position: np.ndarray
    logdensity: float


class RWMInfo(NamedTuple):
    """Diagnostics of one random-walk Metropolis transition.

    ``acceptance`` is the Metropolis probability ``min(1, p(x')/p(x))``, a lower-variance
    adaptation signal than the accept indicator; ``n_steps`` is the number of density
    evaluations (always 1); ``invalid`` says the proposal's log density was not finite.
    """

    step_size: float
    n_steps: int
    accepted: bool
    acceptance: float
    invalid: bool


def optimal_scale(dim: int) -> float:
    """Return ``2.38 / sqrt(dim)``, the asymptotically optimal random-walk scale.

    Parameters
    ----------
    dim : int
        Dimension of the target.

    Returns
    -------
    float
        Scale relative to the target covariance (Roberts, Gelman & Gilks 1997).
    """
    return 2.38 / math.sqrt(dim)


def _value(output: Any) -> float:
    if isinstance(output, tuple):
        output = output[0]
    value = float(output)
    # NaN and +inf are treated like -inf: such a point is never accepted.
    return value if value < math.inf else -math.inf


def _factor(proposal_cov: np.ndarray, dim: int) -> np.ndarray:
    """Return ``L`` with ``L L^T = proposal_cov``, validating as it goes.

    A dense matrix is validated by its Cholesky factorisation alone (the full check in
    ``check_inv_mass`` costs more than a cheap density evaluation).
    """
    proposal_cov = np.asarray(proposal_cov, dtype=float)
    if proposal_cov.shape == (dim,) and np.all(proposal_cov > 0):
        return np.diag(np.sqrt(proposal_cov))
    if proposal_cov.shape == (dim, dim):
        try:
            return np.linalg.cholesky(proposal_cov)
        except np.linalg.LinAlgError:
            pass
    if proposal_cov.ndim == 1:
        check_inv_mass(proposal_cov, dim)  # raises with the reason
    raise InputError(f"proposal_cov: not a positive-definite ({dim}, {dim}) matrix")


def init(position: np.ndarray, logdensity_fn: LogDensity) -> RWMState:
    """Evaluate the log density at the initial position.

    Parameters
    ----------
    position : numpy.ndarray
        Initial position, shape ``(dim,)``.
    logdensity_fn : callable
        ``theta -> log density`` or ``theta -> (log density, gradient)``.

    Returns
    -------
    RWMState
        The starting state.

    Raises
    ------
    InputError
        If the log density is not finite at ``position``.
    """
    position = np.array(position, dtype=float)
    if position.ndim != 1:
        raise InputError(f"position: expected a 1-D array, got shape {position.shape}")
    logdensity = _value(logdensity_fn(position))
    if not math.isfinite(logdensity):
        raise InputError(f"position: log density {logdensity} is not finite at the start")
    return RWMState(position, logdensity)


def step(
    rng: np.random.Generator,
    state: RWMState,
    logdensity_fn: LogDensity,
    step_size: float,
    proposal_cov: np.ndarray,
) -> tuple[RWMState, RWMInfo]:
    """Take one random-walk Metropolis transition.

    Parameters
    ----------
    rng : numpy.random.Generator
        Source of randomness.
    state : RWMState
        Current state.
    logdensity_fn : callable
        ``theta -> log density`` or ``theta -> (log density, gradient)``.
    step_size : float
        Proposal scale, positive; the proposal covariance is
        ``step_size**2 * proposal_cov``.
    proposal_cov : numpy.ndarray
        Diagonal ``(dim,)`` or dense ``(dim, dim)`` proposal covariance shape.

    Returns
    -------
    RWMState
        The new state.
    RWMInfo
        Diagnostics of the transition.
    """
    if not (step_size > 0 and math.isfinite(step_size)):
        raise InputError(f"step_size: must be positive and finite, got {step_size}")
    z = rng.standard_normal(state.position.shape[0])
    offset = _factor(proposal_cov, state.position.shape[0]) @ z
    proposal = state.position + step_size * offset
    logdensity = _value(logdensity_fn(proposal))
    log_ratio = logdensity - state.logdensity  # -inf for an invalid proposal
    acceptance = math.exp(min(0.0, log_ratio))
    accepted = rng.uniform() < acceptance  # u in [0, 1): acceptance 1 always accepts
    new_state = RWMState(proposal, logdensity) if accepted else state
    info = RWMInfo(float(step_size), 1, bool(accepted), acceptance, logdensity == -math.inf)
    return new_state, info
