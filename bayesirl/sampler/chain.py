"""Run one chain: windowed warmup adaptation, then sampling with the adapted settings.

Warmup follows Stan's windowed adaptation (Stan Reference Manual, MCMC sampling chapter,
automatic parameter tuning): dual averaging of the step size throughout; in the slow
windows the draws feed a Welford (co)variance estimate that becomes the new metric at each
window's end, after which the step size is re-initialised and dual averaging restarted.
The same windows tune random-walk Metropolis: the metric is then the proposal covariance
shape (the adaptive Metropolis of Haario et al. 2001, updated per window rather than per
draw) and the step size is the proposal scale, tuned towards acceptance 0.234 (Roberts,
Gelman & Gilks 1997) by one dual averaging run that is not restarted (see _rwm_kernel).

Everything returned is plain NumPy arrays and Python scalars, so a result pickles for
transfer between processes.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any, NamedTuple

import numpy as np

from bayesirl.errors import InputError
from bayesirl.sampler import nuts, rwm
from bayesirl.sampler.adaptation import (
    dual_averaging_final,
    dual_averaging_init,
    dual_averaging_update,
    find_reasonable_step_size,
    welford_final,
    welford_init,
    welford_update,
    window_flags,
    window_schedule,
)
from bayesirl.sampler.integrators import LogDensityAndGrad

__all__ = ["ChainResult", "run_chain"]

METHODS = ("nuts", "random-walk")
_DEFAULT_TARGET = {"nuts": 0.8, "random-walk": 0.234}
# Per-draw statistics: name -> (dtype, value when the kernel does not define it).
_STATS = {
    "step_size": (float, math.nan),
    "tree_depth": (np.int64, 0),
    "n_steps": (np.int64, 0),
    "divergent": (bool, False),
    "acceptance": (float, math.nan),
    "energy": (float, math.nan),
    "logdensity": (float, math.nan),
    "accepted": (bool, True),
}


class ChainResult(NamedTuple):
    """Output of :func:`run_chain`.

    Attributes
    ----------
    draws : numpy.ndarray
        Post-warmup draws, shape ``(draws, dim)``.
    stats : dict of str to numpy.ndarray
        Per-draw ``step_size, tree_depth, n_steps, divergent, acceptance, energy,
        logdensity, accepted``. ``n_steps`` counts gradient (NUTS) or density (random
        walk) evaluations. For the random walk ``tree_depth`` is 0, ``divergent`` False and
        ``energy`` NaN; for NUTS ``accepted`` is True.
    step_size : float
        Adapted step size (NUTS) or proposal scale (random walk).
    inv_mass : numpy.ndarray
        Adapted inverse mass matrix (NUTS) or proposal covariance shape (random walk; the
        proposal covariance is ``step_size**2 * inv_mass``), 1-D if diagonal.
    warmup_draws : numpy.ndarray
        Warmup draws, shape ``(warmup, dim)``.
    warmup_stats : dict of str to numpy.ndarray
        As ``stats``, for the warmup iterations.
    n_evals : int
        Total calls of the log density, including initialisation and step-size search.
    method : str
        ``"nuts"`` or ``"random-walk"``.
    """

    draws: np.ndarray
    stats: dict[str, np.ndarray]
    step_size: float
    inv_mass: np.ndarray
    warmup_draws: np.ndarray
    warmup_stats: dict[str, np.ndarray]
    n_evals: int
    method: str


class _Kernel(NamedTuple):
    init: Callable[[np.ndarray], Any]
    step: Callable[[np.random.Generator, Any, float, np.ndarray], tuple[Any, Any]]
    # (rng, state, metric, current step size) -> step size to restart adaptation from
    initial_step_size: Callable[[np.random.Generator, Any, np.ndarray, float], float]
    mu_factor: float  # dual averaging shrinks log step size towards log(mu_factor * eps0)
    restart: bool  # restart the step-size search and dual averaging after a metric update


def _nuts_kernel(logdensity_and_grad: LogDensityAndGrad, max_depth: int) -> _Kernel:
    def step(rng, state, step_size, metric):
        return nuts.step(rng, state, logdensity_and_grad, step_size, metric, max_depth)

    def initial(rng, state, metric, guess):
        return find_reasonable_step_size(
            rng, state.position, state.logdensity, state.grad, logdensity_and_grad, metric,
            guess,
        )

    # mu_factor 10: Hoffman & Gelman (2014) bias towards larger, cheaper steps. Restart
    # after each metric update, as Stan does: the old step size fits the old metric.
    return _Kernel(lambda x: nuts.init(x, logdensity_and_grad), step, initial, 10.0, True)


def _rwm_kernel(logdensity_fn: LogDensityAndGrad, dim: int) -> _Kernel:
    def step(rng, state, step_size, metric):
        return rwm.step(rng, state, logdensity_fn, step_size, metric)

    def initial(rng, state, metric, guess):
        # Relative to a covariance estimate the optimal scale is known; no search needed.
        return rwm.optimal_scale(dim)

    # mu_factor 1: a random walk's cost does not fall with larger steps, so shrink
    # towards the theoretical optimum instead. No restart: the scale is relative to the
    # covariance estimate, so its optimum barely moves when the estimate improves, and a
    # single draw's acceptance is so noisy that 50 terminal iterations would leave the
    # averaged scale off by a factor of up to 2 (seen in testing).
    return _Kernel(lambda x: rwm.init(x, logdensity_fn), step, initial, 1.0, False)


class _Counted:
    """Wrap the log density to count its calls (the cost that matters)."""

    def __init__(self, fn: Callable[[np.ndarray], Any]) -> None:
        self.fn, self.calls = fn, 0

    def __call__(self, theta: np.ndarray) -> Any:
        self.calls += 1
        return self.fn(theta)


class _Recorder:
    """Preallocated per-iteration draws and statistics."""

    def __init__(self, n: int, dim: int) -> None:
        self.draws = np.empty((n, dim))
        self.stats = {key: np.full(n, fill, dtype=dtype) for key, (dtype, fill) in _STATS.items()}

    def record(self, i: int, state: Any, info: Any) -> None:
        self.draws[i] = state.position
        for key in _STATS:
            if key == "logdensity":
                self.stats[key][i] = state.logdensity
            elif hasattr(info, key):
                self.stats[key][i] = getattr(info, key)


def _warmup(
    kernel: _Kernel,
    state: Any,
    rng: np.random.Generator,
    recorder: _Recorder,
    dense: bool,
    target_accept: float,
    callback: Callable[[int, Any], None] | None,
) -> tuple[Any, float, np.ndarray]:
    n_warmup, dim = recorder.draws.shape
    metric = np.eye(dim) if dense else np.ones(dim)
    step_size = kernel.initial_step_size(rng, state, metric, 1.0)
    averager = dual_averaging_init(step_size, math.log(kernel.mu_factor * step_size))
    in_slow, slow_end = window_flags(window_schedule(n_warmup), n_warmup)
    welford = welford_init(dim, dense)
    for i in range(n_warmup):
        state, info = kernel.step(rng, state, math.exp(averager.log_step), metric)
        averager = dual_averaging_update(averager, info.acceptance, target_accept)
        recorder.record(i, state, info)
        if callback is not None:
            callback(i, info)
        if in_slow[i]:
            welford = welford_update(welford, state.position)
        if slow_end[i]:
            metric = welford_final(welford)
            welford = welford_init(dim, dense)
            if kernel.restart:
                step_size = kernel.initial_step_size(
                    rng, state, metric, math.exp(averager.log_step)
                )
                averager = dual_averaging_init(
                    step_size, math.log(kernel.mu_factor * step_size)
                )
    if n_warmup == 0:
        return state, step_size, metric
    return state, dual_averaging_final(averager), metric


def _check_args(method: str, draws: int, warmup: int, target_accept: float) -> None:
    if method not in METHODS:
        raise InputError(f"method: expected one of {METHODS}, got {method!r}")
    if draws < 0 or warmup < 0:
        raise InputError(f"draws, warmup: must be non-negative, got {draws}, {warmup}")
    if not 0.0 < target_accept < 1.0:
        raise InputError(f"target_accept: must lie in (0, 1), got {target_accept}")


def run_chain(
    logdensity_and_grad: LogDensityAndGrad,
    initial_position: np.ndarray,
    draws: int,
    warmup: int,
    seed_or_rng: int | np.random.Generator | np.random.SeedSequence,
    method: str = "nuts",
    dense_mass: bool = False,
    target_accept: float | None = None,
    max_depth: int = 10,
    callback: Callable[[int, Any], None] | None = None,
) -> ChainResult:
    """Adapt during ``warmup`` iterations, then draw ``draws`` samples.

    Parameters
    ----------
    logdensity_and_grad : callable
        ``theta -> (log density, gradient)``; ``-inf`` or NaN marks an invalid point
        (a divergence for NUTS, a rejection for the random walk).
    initial_position : numpy.ndarray
        Starting point, shape ``(dim,)``, with a finite log density.
    draws, warmup : int
        Numbers of kept and of warmup iterations.
    seed_or_rng : int, numpy.random.SeedSequence or numpy.random.Generator
        Seed for a new generator, or a generator to draw from (it is advanced).
    method : {"nuts", "random-walk"}
        Transition kernel.
    dense_mass : bool, default False
        Adapt a dense rather than diagonal metric.
    target_accept : float, optional
        Target mean acceptance statistic; default 0.8 for NUTS (Stan's default) and 0.234
        for the random walk (Roberts, Gelman & Gilks 1997).
    max_depth : int, default 10
        NUTS maximum tree depth.
    callback : callable, optional
        ``callback(i, info)`` after iteration ``i`` (0-based, warmup first, then draws).

    Returns
    -------
    ChainResult
        Draws, per-draw statistics and the adapted settings.
    """
    if target_accept is None:
        target_accept = _DEFAULT_TARGET.get(method, 0.8)
    _check_args(method, draws, warmup, target_accept)
    rng = np.random.default_rng(seed_or_rng)
    counted = _Counted(logdensity_and_grad)
    position = np.array(initial_position, dtype=float)
    dim = position.shape[0] if position.ndim == 1 else 0
    if method == "nuts":
        kernel = _nuts_kernel(counted, max_depth)
    else:
        kernel = _rwm_kernel(counted, max(dim, 1))
    warm, kept = _Recorder(warmup, dim), _Recorder(draws, dim)
    state = kernel.init(position)
    state, step_size, metric = _warmup(
        kernel, state, rng, warm, dense_mass, target_accept, callback
    )
    for i in range(draws):
        state, info = kernel.step(rng, state, step_size, metric)
        kept.record(i, state, info)
        if callback is not None:
            callback(warmup + i, info)
    return ChainResult(
        kept.draws, kept.stats, float(step_size), metric, warm.draws, warm.stats,
        counted.calls, method,
    )
