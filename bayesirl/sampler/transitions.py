"""The parts a chain is built from: transition kernels, evaluation counting, recording.

Split out of :mod:`bayesirl.sampler.chain` so that the step-by-step driver
(:mod:`bayesirl.sampler.driver`) and :func:`~bayesirl.sampler.run_chain` share them.
Everything a :class:`ChainResult` holds is plain NumPy arrays and Python scalars, so a
result pickles for transfer between processes.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any, NamedTuple

import numpy as np

from bayesirl.errors import InputError
from bayesirl.sampler import nuts, rwm
from bayesirl.sampler.adaptation import find_reasonable_step_size
from bayesirl.sampler.integrators import LogDensityAndGrad

METHODS = ("nuts", "random-walk")
DEFAULT_TARGET = {"nuts": 0.8, "random-walk": 0.234}
# Per-draw statistics: name -> (dtype, value when the kernel does not define it).
STATS = {
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
    """Output of :func:`~bayesirl.sampler.run_chain`.

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


class Kernel(NamedTuple):
    """A transition kernel with what warmup needs to know about it."""

    init: Callable[[np.ndarray], Any]
    step: Callable[[np.random.Generator, Any, float, np.ndarray], tuple[Any, Any]]
    # (rng, state, metric, current step size) -> step size to restart adaptation from
    initial_step_size: Callable[[np.random.Generator, Any, np.ndarray, float], float]
    mu_factor: float  # dual averaging shrinks log step size towards log(mu_factor * eps0)
    restart: bool  # restart the step-size search and dual averaging after a metric update
    state_type: type  # NUTSState or RWMState, to rebuild a saved state


def nuts_kernel(logdensity_and_grad: LogDensityAndGrad, max_depth: int) -> Kernel:
    """NUTS with step-size search and restarts after each metric update."""

    def step(rng, state, step_size, metric):
        return nuts.step(rng, state, logdensity_and_grad, step_size, metric, max_depth)

    def initial(rng, state, metric, guess):
        return find_reasonable_step_size(
            rng, state.position, state.logdensity, state.grad, logdensity_and_grad, metric,
            guess,
        )

    # mu_factor 10: Hoffman & Gelman (2014) bias towards larger, cheaper steps. Restart
    # after each metric update, as Stan does: the old step size fits the old metric.
    return Kernel(lambda x: nuts.init(x, logdensity_and_grad), step, initial, 10.0, True,
                  nuts.NUTSState)


def rwm_kernel(logdensity_fn: LogDensityAndGrad, dim: int) -> Kernel:
    """Random-walk Metropolis, its scale tuned by one unrestarted dual averaging run."""

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
    return Kernel(lambda x: rwm.init(x, logdensity_fn), step, initial, 1.0, False,
                  rwm.RWMState)


class Counted:
    """Wrap the log density to count its calls (the cost that matters)."""

    def __init__(self, fn: Callable[[np.ndarray], Any], calls: int = 0) -> None:
        self.fn, self.calls = fn, calls

    def __call__(self, theta: np.ndarray) -> Any:
        self.calls += 1
        return self.fn(theta)


class Recorder:
    """Preallocated per-iteration draws and statistics."""

    def __init__(self, n: int, dim: int) -> None:
        self.draws = np.empty((n, dim))
        self.stats = {key: np.full(n, fill, dtype=dtype) for key, (dtype, fill) in STATS.items()}

    def record(self, i: int, state: Any, info: Any) -> None:
        """Store iteration ``i``'s position and statistics."""
        self.draws[i] = state.position
        for key in STATS:
            if key == "logdensity":
                self.stats[key][i] = state.logdensity
            elif hasattr(info, key):
                self.stats[key][i] = getattr(info, key)

    def head(self, n: int) -> tuple[np.ndarray, dict[str, np.ndarray]]:
        """Copies of the first ``n`` rows."""
        return self.draws[:n].copy(), {k: v[:n].copy() for k, v in self.stats.items()}

    def fill(self, draws: np.ndarray, stats: dict[str, np.ndarray]) -> None:
        """Put saved rows back at the start."""
        n = len(draws)
        self.draws[:n] = draws
        for key, (dtype, _) in STATS.items():
            self.stats[key][:n] = np.asarray(stats[key], dtype=dtype)


def check_args(method: str, draws: int, warmup: int, target_accept: float) -> None:
    """Validate a chain's settings."""
    if method not in METHODS:
        raise InputError(f"method: expected one of {METHODS}, got {method!r}")
    if draws < 0 or warmup < 0:
        raise InputError(f"draws, warmup: must be non-negative, got {draws}, {warmup}")
    if not 0.0 < target_accept < 1.0:
        raise InputError(f"target_accept: must lie in (0, 1), got {target_accept}")
