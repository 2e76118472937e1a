"""Multinomial No-U-Turn Sampler with the generalised U-turn criterion.

The trajectory is built by repeated doubling in a random direction (Hoffman & Gelman
2014, JMLR 15, "The No-U-Turn Sampler", Alg. 3). Instead of slice sampling, a point is
drawn from the trajectory with probability proportional to ``exp(-H)`` (multinomial
sampling), using biased progressive sampling when a new subtree joins the trajectory and
uniform progressive sampling inside subtrees, and doubling stops at the generalised
no-U-turn criterion on ``rho`` (the summed momenta) and the end velocities ``M^{-1} p``
(Betancourt 2017, arXiv:1701.02434, "A Conceptual Introduction to Hamiltonian Monte
Carlo", appendix A). As in current Stan, every merge also checks the criterion on
the two sub-trajectories extended by the neighbouring point of the other one, which
catches U-turns that fall between the two halves.

A subtree that diverges (energy error above ``max_energy_error``, or a non-finite log
density) or turns is discarded, and building stops; the sample is taken from the
trajectory built before it. The adaptation statistic is the mean of
``min(1, exp(H0 - H))`` over all new points (Hoffman & Gelman 2014, sec. 3.2 for
NUTS, with every leapfrog point counted as in Stan).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from bayesirl.errors import InputError
from bayesirl.sampler.integrators import (
    LogDensityAndGrad,
    check_inv_mass,
    kinetic_energy,
    leapfrog_with_velocity,
    sample_momentum,
    velocity,
)

__all__ = ["NUTSInfo", "NUTSState", "init", "step"]


class NUTSState(NamedTuple):
    """Position with its log density and gradient, carried from one step to the next."""

    position: np.ndarray
    logdensity: float
    grad: np.ndarray


class NUTSInfo(NamedTuple):
    """Diagnostics of one NUTS transition.

    ``n_steps`` is the number of leapfrog steps, i.e. gradient evaluations. ``acceptance``
    is the mean Metropolis acceptance statistic used for step-size adaptation.
    ``energy`` is the Hamiltonian at the returned point (for E-BFMI).
    """

    step_size: float
    tree_depth: int
    n_steps: int
    divergent: bool
    acceptance: float
    energy: float


class _Point(NamedTuple):
    position: np.ndarray
    momentum: np.ndarray
    logdensity: float
    grad: np.ndarray
    p_sharp: np.ndarray
    energy: float


class _Tree(NamedTuple):
    left: _Point  # earliest point in integration time
    right: _Point  # latest point in integration time
    proposal: _Point
    log_weight: float  # log of sum over points of exp(H0 - H)
    rho: np.ndarray  # sum of the momenta
    valid: bool  # False once it diverged or turned


@dataclass
class _Context:
    """Per-transition constants and counters shared by the recursion."""

    rng: np.random.Generator
    logdensity_and_grad: LogDensityAndGrad
    step_size: float
    inv_mass: np.ndarray
    energy0: float
    max_energy_error: float
    n_steps: int = 0
    sum_accept: float = 0.0
    divergent: bool = False


def init(position: np.ndarray, logdensity_and_grad: LogDensityAndGrad) -> NUTSState:
    """Evaluate the log density at the initial position.

    Parameters
    ----------
    position : numpy.ndarray
        Initial position, shape ``(dim,)``.
    logdensity_and_grad : callable
        ``theta -> (log density, gradient)``.

    Returns
    -------
    NUTSState
        The starting state.

    Raises
    ------
    InputError
        If the log density or its gradient is not finite at ``position``.
    """
    position = np.array(position, dtype=float)
    if position.ndim != 1:
        raise InputError(f"position: expected a 1-D array, got shape {position.shape}")
    logdensity, grad = logdensity_and_grad(position)
    grad = np.asarray(grad, dtype=float)
    if not (np.isfinite(logdensity) and np.all(np.isfinite(grad))):
        raise InputError(
            f"position: log density {logdensity} or its gradient is not finite at the start"
        )
    if grad.shape != position.shape:
        raise InputError(f"gradient: shape {grad.shape} differs from position {position.shape}")
    return NUTSState(position, float(logdensity), grad)


def _log_add_exp(a: float, b: float) -> float:
    top = max(a, b)
    if top == -math.inf:
        return -math.inf
    return top + math.log1p(math.exp(-abs(a - b)))


def _is_turning(p_sharp_left: np.ndarray, p_sharp_right: np.ndarray, rho: np.ndarray) -> bool:
    # Generalised criterion (Betancourt 2017, appendix A): keep going only while both end
    # velocities still point along the summed momentum.
    return not (float(p_sharp_left @ rho) > 0.0 and float(p_sharp_right @ rho) > 0.0)


def _merge(earlier: _Tree, later: _Tree, proposal: _Point, log_weight: float) -> _Tree:
    """Join two adjacent trees (``earlier`` precedes ``later`` in time) and check U-turns."""
    rho = earlier.rho + later.rho
    turning = _is_turning(earlier.left.p_sharp, later.right.p_sharp, rho)
    # Stan's extra checks across the join: each half extended by the neighbour point.
    turning = turning or _is_turning(
        earlier.left.p_sharp, later.left.p_sharp, earlier.rho + later.left.momentum
    )
    turning = turning or _is_turning(
        earlier.right.p_sharp, later.right.p_sharp, later.rho + earlier.right.momentum
    )
    return _Tree(earlier.left, later.right, proposal, log_weight, rho, not turning)


def _join(old: _Tree, new: _Tree, direction: int, proposal: _Point) -> _Tree:
    log_weight = _log_add_exp(old.log_weight, new.log_weight)
    if direction > 0:
        return _merge(old, new, proposal, log_weight)
    return _merge(new, old, proposal, log_weight)


def _leaf(ctx: _Context, start: _Point, direction: int) -> _Tree:
    position, momentum, logdensity, grad, p_sharp, kinetic = leapfrog_with_velocity(
        ctx.logdensity_and_grad,
        start.position,
        start.momentum,
        start.grad,
        direction * ctx.step_size,
        ctx.inv_mass,
    )
    ctx.n_steps += 1
    energy = kinetic - logdensity
    if not math.isfinite(energy):  # -inf log density or overflowing momentum
        energy = math.inf
    delta = ctx.energy0 - energy
    ctx.sum_accept += 1.0 if delta > 0 else math.exp(delta)
    # A non-finite point diverges whatever the threshold, so it can never be selected.
    divergent = energy == math.inf or -delta > ctx.max_energy_error
    ctx.divergent = ctx.divergent or divergent
    point = _Point(position, momentum, logdensity, grad, p_sharp, energy)
    return _Tree(point, point, point, delta, momentum, not divergent)


def _build(ctx: _Context, start: _Point, direction: int, depth: int) -> _Tree:
    """Build a subtree of ``2**depth`` leapfrog steps beginning next to ``start``."""
    if depth == 0:
        return _leaf(ctx, start, direction)
    first = _build(ctx, start, direction, depth - 1)
    if not first.valid:
        return first
    edge = first.right if direction > 0 else first.left
    second = _build(ctx, edge, direction, depth - 1)
    if not second.valid:
        return second
    # Uniform progressive sampling within a subtree.
    log_weight = _log_add_exp(first.log_weight, second.log_weight)
    take_second = ctx.rng.uniform() < math.exp(second.log_weight - log_weight)
    proposal = second.proposal if take_second else first.proposal
    return _join(first, second, direction, proposal)


def _trajectory(ctx: _Context, start: _Point, max_depth: int) -> tuple[_Point, int]:
    """Double the trajectory until it turns, diverges or reaches ``max_depth``.

    Returns the sampled point and the number of completed doublings (Stan's treedepth).
    """
    tree = _Tree(start, start, start, 0.0, start.momentum, True)
    depth = 0
    while depth < max_depth:
        direction = 1 if ctx.rng.uniform() < 0.5 else -1
        edge = tree.right if direction > 0 else tree.left
        subtree = _build(ctx, edge, direction, depth)
        if not subtree.valid:
            break
        depth += 1
        # Biased progressive sampling: favour the new subtree, which moves further away.
        accept = math.exp(min(0.0, subtree.log_weight - tree.log_weight))
        proposal = subtree.proposal if ctx.rng.uniform() < accept else tree.proposal
        tree = _join(tree, subtree, direction, proposal)
        if not tree.valid:
            break
    return tree.proposal, depth


def step(
    rng: np.random.Generator,
    state: NUTSState,
    logdensity_and_grad: LogDensityAndGrad,
    step_size: float,
    inv_mass: np.ndarray,
    max_depth: int = 10,
    max_energy_error: float = 1000.0,
) -> tuple[NUTSState, NUTSInfo]:
    """Take one multinomial NUTS transition.

    Parameters
    ----------
    rng : numpy.random.Generator
        Source of randomness (momentum, directions, multinomial choices).
    state : NUTSState
        Current state, from :func:`init` or a previous :func:`step`.
    logdensity_and_grad : callable
        ``theta -> (log density, gradient)``; ``-inf`` or NaN marks an invalid point.
    step_size : float
        Leapfrog step size, positive.
    inv_mass : numpy.ndarray
        Diagonal ``(dim,)`` or dense ``(dim, dim)`` inverse mass matrix.
    max_depth : int, default 10
        Maximum number of doublings; at most ``2**max_depth - 1`` gradient evaluations.
    max_energy_error : float, default 1000
        Energy error above which a trajectory counts as divergent (Stan's default).

    Returns
    -------
    NUTSState
        The new state.
    NUTSInfo
        Diagnostics of the transition.
    """
    if not (step_size > 0 and np.isfinite(step_size)):
        raise InputError(f"step_size: must be positive and finite, got {step_size}")
    if max_depth < 1:
        raise InputError(f"max_depth: must be at least 1, got {max_depth}")
    inv_mass = check_inv_mass(inv_mass, state.position.shape[0])
    momentum = sample_momentum(rng, inv_mass)
    energy0 = -state.logdensity + kinetic_energy(momentum, inv_mass)
    ctx = _Context(rng, logdensity_and_grad, float(step_size), inv_mass, energy0,
                   max_energy_error)
    start = _Point(state.position, momentum, state.logdensity, state.grad,
                   velocity(momentum, inv_mass), energy0)
    chosen, depth = _trajectory(ctx, start, max_depth)
    new_state = NUTSState(chosen.position, chosen.logdensity, chosen.grad)
    info = NUTSInfo(
        step_size=float(step_size),
        tree_depth=depth,
        n_steps=ctx.n_steps,
        divergent=ctx.divergent,
        acceptance=ctx.sum_accept / ctx.n_steps,
        energy=chosen.energy,
    )
    return new_state, info
