"""Warmup adaptation, as small ``init`` / ``update`` / ``final`` parts.

* Dual averaging of the log step size (Nesterov 2009; Hoffman & Gelman 2014, JMLR 15,
  "The No-U-Turn Sampler", sec. 3.2 and Alg. 5, with their constants
  ``gamma=0.05, t0=10, kappa=0.75`` and ``mu = log(10 * eps0)``).
* Welford's running mean and (co)variance (Welford 1962, Technometrics 4), finalised with
  Stan's regularisation ``n/(n+5) * var + 1e-3 * 5/(n+5)`` (Stan Reference Manual,
  MCMC sampling chapter, automatic parameter tuning).
* Stan's warmup window schedule: initial fast buffer 75, slow windows doubling from 25 with
  the last stretched to fill, terminal fast buffer 50; warmups shorter than 150 use
  15% / 75% / 10% (same source).
* A reasonable initial step size by doubling or halving until the one-step acceptance
  crosses 1/2 (Hoffman & Gelman 2014, Alg. 4).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from bayesirl.errors import InputError
from bayesirl.sampler.integrators import (
    LogDensityAndGrad,
    kinetic_energy,
    leapfrog,
    sample_momentum,
)

# Step sizes stay within exp(+-700), well inside the float range (exp(-745) underflows to 0,
# and log(0) would raise): a density that accepts nothing (or everything) drives the
# adaptation to these bounds, where the diagnostics report the chain as stalled.
_LOG_STEP_MIN, _LOG_STEP_MAX = -700.0, 700.0
STEP_MIN, STEP_MAX = math.exp(_LOG_STEP_MIN), math.exp(_LOG_STEP_MAX)

__all__ = [
    "DualAveragingState",
    "Window",
    "WelfordState",
    "dual_averaging_final",
    "dual_averaging_init",
    "dual_averaging_update",
    "find_reasonable_step_size",
    "welford_final",
    "welford_init",
    "welford_update",
    "window_flags",
    "window_schedule",
]


class DualAveragingState(NamedTuple):
    """State of dual averaging on ``x = log(step size)``.

    ``log_step`` is the iterate to use next, ``log_step_avg`` the weighted average that is
    returned at the end, ``h_bar`` the running mean of ``target - acceptance``.
    """

    log_step: float
    log_step_avg: float
    h_bar: float
    mu: float
    count: int


def dual_averaging_init(step_size: float, mu: float | None = None) -> DualAveragingState:
    """Start dual averaging from ``step_size``.

    Parameters
    ----------
    step_size : float
        Initial step size ``eps0``, positive.
    mu : float, optional
        Shrinkage target for ``log(step size)``; default ``log(10 * eps0)``, which Hoffman
        & Gelman (2014, sec. 3.2) choose to favour larger steps, as they are cheaper.

    Returns
    -------
    DualAveragingState
        The initial state.
    """
    if not (step_size > 0 and math.isfinite(step_size)):
        raise InputError(f"step_size: must be positive and finite, got {step_size}")
    if mu is None:
        mu = math.log(10.0 * step_size)
    return DualAveragingState(math.log(step_size), 0.0, 0.0, float(mu), 0)


def dual_averaging_update(
    state: DualAveragingState,
    acceptance: float,
    target_accept: float = 0.8,
    gamma: float = 0.05,
    t0: float = 10.0,
    kappa: float = 0.75,
) -> DualAveragingState:
    """Update the step size after one transition (Hoffman & Gelman 2014, Alg. 5).

    Parameters
    ----------
    state : DualAveragingState
        Current state.
    acceptance : float
        The transition's acceptance statistic; NaN counts as 0 and values are clipped to
        ``[0, 1]``.
    target_accept : float, default 0.8
        Target mean acceptance statistic.
    gamma, t0, kappa : float
        Dual averaging constants (defaults from Hoffman & Gelman 2014).

    Returns
    -------
    DualAveragingState
        The new state; use ``exp(state.log_step)`` as the next step size.
    """
    acceptance = 0.0 if math.isnan(acceptance) else min(max(acceptance, 0.0), 1.0)
    count = state.count + 1
    weight = 1.0 / (count + t0)
    h_bar = (1.0 - weight) * state.h_bar + weight * (target_accept - acceptance)
    log_step = state.mu - math.sqrt(count) / gamma * h_bar
    # Only a density that accepts everything (flat) or nothing drives x this far; the
    # clip keeps exp(x) finite instead of raising OverflowError.
    log_step = min(max(log_step, _LOG_STEP_MIN), _LOG_STEP_MAX)
    eta = count ** (-kappa)
    log_step_avg = eta * log_step + (1.0 - eta) * state.log_step_avg
    return DualAveragingState(log_step, log_step_avg, h_bar, state.mu, count)


def dual_averaging_final(state: DualAveragingState) -> float:
    """Return the adapted step size ``exp(log_step_avg)`` (the iterate if no update yet).

    Parameters
    ----------
    state : DualAveragingState
        State after the last warmup update.

    Returns
    -------
    float
        The step size to sample with.
    """
    if state.count == 0:
        return math.exp(state.log_step)
    return math.exp(state.log_step_avg)


class WelfordState(NamedTuple):
    """Running count, mean and sum of squared deviations (vector or matrix)."""

    count: int
    mean: np.ndarray
    m2: np.ndarray


def welford_init(dim: int, dense: bool = False) -> WelfordState:
    """Start an empty running (co)variance estimate.

    Parameters
    ----------
    dim : int
        Dimension of the draws.
    dense : bool, default False
        Track the full covariance matrix instead of the variances.

    Returns
    -------
    WelfordState
        Empty state.
    """
    m2 = np.zeros((dim, dim)) if dense else np.zeros(dim)
    return WelfordState(0, np.zeros(dim), m2)


def welford_update(state: WelfordState, x: np.ndarray) -> WelfordState:
    """Add one draw.

    Parameters
    ----------
    state : WelfordState
        Current state.
    x : numpy.ndarray
        The draw, shape ``(dim,)``.

    Returns
    -------
    WelfordState
        Updated state.
    """
    count = state.count + 1
    delta = x - state.mean
    mean = state.mean + delta / count
    if state.m2.ndim == 2:
        m2 = state.m2 + np.outer(delta, x - mean)
    else:
        m2 = state.m2 + delta * (x - mean)
    return WelfordState(count, mean, m2)


def welford_final(state: WelfordState, regularize: bool = True) -> np.ndarray:
    """Return the sample (co)variance, by default shrunk as Stan does.

    Parameters
    ----------
    state : WelfordState
        State holding at least two draws.
    regularize : bool, default True
        Apply ``n/(n+5) * cov + 1e-3 * 5/(n+5) * I``, which keeps a short window's
        estimate positive definite and pulls it towards a small isotropic scale.

    Returns
    -------
    numpy.ndarray
        Variances ``(dim,)`` or covariance ``(dim, dim)``.
    """
    n = state.count
    if n < 2:
        raise InputError(f"welford: need at least 2 draws for a variance, got {n}")
    cov = state.m2 / (n - 1.0)
    if not regularize:
        return cov
    shrunk = (n / (n + 5.0)) * cov
    ridge = 1e-3 * (5.0 / (n + 5.0))
    if shrunk.ndim == 2:
        return shrunk + ridge * np.eye(shrunk.shape[0])
    return shrunk + ridge


class Window(NamedTuple):
    """A warmup window ``[start, stop)``; ``kind`` is ``"fast"`` or ``"slow"``."""

    kind: str
    start: int
    stop: int


def window_schedule(
    num_warmup: int, init_buffer: int = 75, term_buffer: int = 50, base_window: int = 25
) -> list[Window]:
    """Return Stan's warmup windows, covering ``range(num_warmup)`` without gaps.

    Parameters
    ----------
    num_warmup : int
        Number of warmup iterations.
    init_buffer, term_buffer, base_window : int
        Initial fast buffer, terminal fast buffer and first slow window length. When they
        do not fit, they become 15%, 10% and the remaining 75% of ``num_warmup``; below 20
        iterations the whole warmup is one fast window (step size only), as in Stan.

    Returns
    -------
    list of Window
        Fast, slow..., fast windows; zero-length windows are omitted.

    Notes
    -----
    A slow window is stretched to the end of the slow phase when the window after it
    (twice as long) would not fit. Stan's ``windowed_adaptation`` does not apply this
    test to the first slow window, so e.g. ``num_warmup=151`` leaves it a final slow
    window of one draw; here every window is tested, giving 75 / 26 / 50 instead. For
    ``num_warmup=1000`` both give 75 / 25, 50, 100, 200, 500 / 50.
    """
    if num_warmup < 0:
        raise InputError(f"num_warmup: must be non-negative, got {num_warmup}")
    if num_warmup < 20:
        return [Window("fast", 0, num_warmup)] if num_warmup else []
    if init_buffer + base_window + term_buffer > num_warmup:
        init_buffer = int(0.15 * num_warmup)
        term_buffer = int(0.1 * num_warmup)
        base_window = num_warmup - init_buffer - term_buffer
    slow_end = num_warmup - term_buffer
    windows = [Window("fast", 0, init_buffer)]
    start, size = init_buffer, base_window
    while start < slow_end:
        # Stretch this window to the end when the next (twice as long) would not fit.
        stop = slow_end if start + 3 * size > slow_end else start + size
        windows.append(Window("slow", start, stop))
        start, size = stop, 2 * size
    windows.append(Window("fast", slow_end, num_warmup))
    return [w for w in windows if w.stop > w.start]


def window_flags(windows: list[Window], num_warmup: int) -> tuple[np.ndarray, np.ndarray]:
    """Per-iteration flags for a schedule.

    Parameters
    ----------
    windows : list of Window
        Output of :func:`window_schedule`.
    num_warmup : int
        Number of warmup iterations.

    Returns
    -------
    in_slow : numpy.ndarray of bool
        Iteration ``i`` lies in a slow window (its draw feeds the covariance estimate).
    slow_end : numpy.ndarray of bool
        Iteration ``i`` is the last of a slow window (update the metric after it).
    """
    in_slow = np.zeros(num_warmup, dtype=bool)
    slow_end = np.zeros(num_warmup, dtype=bool)
    for window in windows:
        if window.kind == "slow":
            in_slow[window.start : window.stop] = True
            slow_end[window.stop - 1] = True
    return in_slow, slow_end


def find_reasonable_step_size(
    rng: np.random.Generator,
    position: np.ndarray,
    logdensity: float,
    grad: np.ndarray,
    logdensity_and_grad: LogDensityAndGrad,
    inv_mass: np.ndarray,
    step_size: float = 1.0,
    max_iter: int = 100,
) -> float:
    """Double or halve a step size until one leapfrog step's acceptance crosses 1/2.

    Hoffman & Gelman (2014), Alg. 4, with a cap on the number of doublings so that a
    flat or pathological density cannot loop for ever. Costs one gradient evaluation per
    trial step size.

    Parameters
    ----------
    rng : numpy.random.Generator
        Source of the momentum draw.
    position, logdensity, grad :
        Current point, its log density and gradient.
    logdensity_and_grad : callable
        ``theta -> (log density, gradient)``.
    inv_mass : numpy.ndarray
        Diagonal or dense inverse mass matrix.
    step_size : float, default 1.0
        Starting guess.
    max_iter : int, default 100
        Maximum number of doublings or halvings.

    Returns
    -------
    float
        The step size.
    """
    momentum = sample_momentum(rng, inv_mass)
    energy0 = -logdensity + kinetic_energy(momentum, inv_mass)

    def log_ratio(eps: float) -> float:
        _, new_momentum, new_logdensity, _ = leapfrog(
            logdensity_and_grad, position, momentum, grad, eps, inv_mass
        )
        value = energy0 - (-new_logdensity + kinetic_energy(new_momentum, inv_mass))
        return value if math.isfinite(value) else -math.inf

    ratio = log_ratio(step_size)
    direction = 1 if ratio > -math.log(2.0) else -1
    for _ in range(max_iter):
        if not direction * ratio > -direction * math.log(2.0):
            break
        new = step_size * 2.0**direction
        if not STEP_MIN <= new <= STEP_MAX:
            break  # a step this small or large is itself the diagnosis (a stalled chain)
        step_size = new
        ratio = log_ratio(step_size)
    return step_size
