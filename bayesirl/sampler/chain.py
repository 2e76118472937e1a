"""Run one chain: windowed warmup adaptation, then sampling with the adapted settings.

Warmup follows Stan's windowed adaptation (Stan Reference Manual, MCMC sampling chapter,
automatic parameter tuning): dual averaging of the step size throughout; in the slow
windows the draws feed a Welford (co)variance estimate that becomes the new metric at each
window's end, after which the step size is re-initialised and dual averaging restarted.
The same windows tune random-walk Metropolis: the metric is then the proposal covariance
shape (the adaptive Metropolis of Haario et al. 2001, updated per window rather than per
draw) and the step size is the proposal scale, tuned towards acceptance 0.234 (Roberts,
Gelman & Gilks 1997) by one dual averaging run that is not restarted (see
``transitions.rwm_kernel``).

Everything returned is plain NumPy arrays and Python scalars, so a result pickles for
transfer between processes. The loop itself lives in :mod:`bayesirl.sampler.driver`, which
can also stop between iterations and continue from a saved state.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from bayesirl.sampler.driver import Chain, ChainSettings
from bayesirl.sampler.integrators import LogDensityAndGrad
from bayesirl.sampler.transitions import METHODS, ChainResult

__all__ = ["METHODS", "ChainResult", "run_chain"]


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
    settings = ChainSettings(method, draws, warmup, dense_mass, target_accept, max_depth)
    chain = Chain.start(logdensity_and_grad, initial_position, settings, seed_or_rng)
    while not chain.done:
        i = chain.state.iteration
        info = chain.advance()
        if callback is not None:
            callback(i, info)
    return chain.result()
