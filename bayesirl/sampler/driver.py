"""One chain advanced an iteration at a time, with its whole state as plain records.

:func:`~bayesirl.sampler.run_chain` loops over :meth:`Chain.advance`; the posterior layer
drives the same loop itself so that it can stop between iterations, save the state and
continue later with exactly the draws an uninterrupted run gives. Everything that carries
over from one iteration to the next is in the immutable :class:`ChainState` plus the
generator's bit-generator state; :meth:`Chain.to_record` turns both (and the draws so far)
into JSON-ready scalars and NumPy arrays, :meth:`Chain.from_record` turns them back.

:meth:`Chain.advance` is all-or-nothing: if the log density raises part-way through an
iteration (for instance to stop at once on a signal), the state, the generator and the
evaluation count are as they were before it, so the iteration can be run again. Anything
the log density keeps between calls (warm starts) is the caller's to roll back.
"""

from __future__ import annotations

import math
from typing import Any, NamedTuple

import numpy as np

from bayesirl.errors import InputError
from bayesirl.sampler.adaptation import (
    DualAveragingState,
    WelfordState,
    dual_averaging_final,
    dual_averaging_init,
    dual_averaging_update,
    welford_final,
    welford_init,
    welford_update,
    window_flags,
    window_schedule,
)
from bayesirl.sampler.integrators import LogDensityAndGrad
from bayesirl.sampler.transitions import (
    DEFAULT_TARGET,
    STATS,
    ChainResult,
    Counted,
    Recorder,
    check_args,
    nuts_kernel,
    rwm_kernel,
)

__all__ = ["Chain", "ChainSettings", "ChainState"]


class ChainSettings(NamedTuple):
    """What a chain is asked to do; fixed for its whole life."""

    method: str = "nuts"
    draws: int = 1000
    warmup: int = 1000
    dense_mass: bool = False
    target_accept: float | None = None  # None: 0.8 for NUTS, 0.234 for the random walk
    max_depth: int = 10


class ChainState(NamedTuple):
    """Everything carried from one iteration to the next (besides the generator).

    ``step_size`` is the last step size found by the search during warmup (used only when
    there is no warmup; warmup steps use ``exp(averager.log_step)``) and the adapted step
    size once warmup is over. ``n_evals`` counts log-density calls so far.
    """

    iteration: int  # iterations completed, warmup first
    kernel: Any  # NUTSState or RWMState
    step_size: float
    averager: DualAveragingState
    welford: WelfordState
    metric: np.ndarray
    n_evals: int


def _checked_metric(metric: np.ndarray, dim: int, dense: bool) -> np.ndarray:
    metric = np.array(metric, dtype=float)
    shape = (dim, dim) if dense else (dim,)
    ok = metric.shape == shape and bool(np.all(np.isfinite(metric)))
    if ok:
        ok = bool(np.all(np.linalg.eigvalsh(metric) > 0) if dense else np.all(metric > 0))
    if not ok:
        raise InputError(f"metric: expected a positive-definite {shape} inverse mass matrix; "
                         f"got shape {metric.shape}")
    return metric


class Chain:
    """A chain between iterations: create with :meth:`start` or :meth:`from_record`.

    Parameters
    ----------
    logdensity_and_grad : callable
        ``theta -> (log density, gradient)`` (the random walk also accepts a float).
    settings : ChainSettings
    rng : numpy.random.Generator
        Advanced by every iteration.
    dim : int
        Length of the position.
    """

    def __init__(self, logdensity_and_grad: LogDensityAndGrad, settings: ChainSettings,
                 rng: np.random.Generator, dim: int) -> None:
        target = settings.target_accept
        if target is None:
            target = DEFAULT_TARGET.get(settings.method, 0.8)
        settings = settings._replace(target_accept=float(target), draws=int(settings.draws),
                                     warmup=int(settings.warmup))
        check_args(settings.method, settings.draws, settings.warmup, settings.target_accept)
        self.settings, self.rng, self.dim = settings, rng, dim
        self._counted = Counted(logdensity_and_grad)
        if settings.method == "nuts":
            self.kernel = nuts_kernel(self._counted, settings.max_depth)
        else:
            self.kernel = rwm_kernel(self._counted, max(dim, 1))
        self._warm = Recorder(settings.warmup, dim)
        self._kept = Recorder(settings.draws, dim)
        self._in_slow, self._slow_end = window_flags(window_schedule(settings.warmup),
                                                     settings.warmup)
        self.state: ChainState | None = None

    @classmethod
    def start(cls, logdensity_and_grad: LogDensityAndGrad, initial_position: np.ndarray,
              settings: ChainSettings, seed_or_rng, *, metric: np.ndarray | None = None,
              evals_before: int = 0) -> Chain:
        """Evaluate the start and search the first step size (this uses the generator).

        Parameters
        ----------
        logdensity_and_grad : callable
        initial_position : numpy.ndarray
            Shape ``(dim,)``, with a finite log density.
        settings : ChainSettings
        seed_or_rng : int, numpy.random.SeedSequence or numpy.random.Generator
        metric : numpy.ndarray, optional
            Initial inverse mass matrix (``(dim,)``, or ``(dim, dim)`` with ``dense_mass``),
            e.g. from a Pathfinder approximation; default the identity. Warmup's slow
            windows replace it as usual.
        evals_before : int, default 0
            Density calls already spent on this chain's start (counted in ``n_evals``).

        Returns
        -------
        Chain
            At iteration 0.
        """
        position = np.array(initial_position, dtype=float)
        dim = position.shape[0] if position.ndim == 1 else 0
        chain = cls(logdensity_and_grad, settings, np.random.default_rng(seed_or_rng), dim)
        chain._counted.calls = int(evals_before)
        kernel = chain.kernel
        state = kernel.init(position)
        if metric is None:
            metric = np.eye(dim) if settings.dense_mass else np.ones(dim)
        else:
            metric = _checked_metric(metric, dim, settings.dense_mass)
        step_size = kernel.initial_step_size(chain.rng, state, metric, 1.0)
        averager = dual_averaging_init(step_size, math.log(kernel.mu_factor * step_size))
        chain.state = ChainState(0, state, step_size, averager,
                                 welford_init(dim, settings.dense_mass), metric,
                                 chain._counted.calls)
        return chain

    @property
    def total(self) -> int:
        """Warmup plus kept iterations."""
        return self.settings.warmup + self.settings.draws

    @property
    def done(self) -> bool:
        """Every iteration has run."""
        return self.state.iteration >= self.total

    def advance(self) -> Any:
        """Run the next iteration and return its info (all or nothing, see the module)."""
        s = self.state
        if s.iteration >= self.total:
            raise InputError(f"chain: all {self.total} iterations have already run")
        saved = self.rng.bit_generator.state
        try:
            if s.iteration < self.settings.warmup:
                new, info = self._warmup_step(s)
            else:
                new, info = self._sampling_step(s)
        except BaseException:
            self.rng.bit_generator.state = saved
            self._counted.calls = s.n_evals
            raise
        self.state = new
        return info

    def _warmup_step(self, s: ChainState) -> tuple[ChainState, Any]:
        # Stan's windowed adaptation (see bayesirl.sampler.chain for the sources).
        i, kernel, cfg = s.iteration, self.kernel, self.settings
        state, info = kernel.step(self.rng, s.kernel, math.exp(s.averager.log_step), s.metric)
        averager = dual_averaging_update(s.averager, info.acceptance, cfg.target_accept)
        self._warm.record(i, state, info)
        welford, metric, step_size = s.welford, s.metric, s.step_size
        if self._in_slow[i]:
            welford = welford_update(welford, state.position)
        if self._slow_end[i]:
            metric = welford_final(welford)
            welford = welford_init(self.dim, cfg.dense_mass)
            if kernel.restart:
                step_size = kernel.initial_step_size(
                    self.rng, state, metric, math.exp(averager.log_step)
                )
                averager = dual_averaging_init(
                    step_size, math.log(kernel.mu_factor * step_size)
                )
        if i == cfg.warmup - 1:
            step_size = dual_averaging_final(averager)
        return ChainState(i + 1, state, step_size, averager, welford, metric,
                          self._counted.calls), info

    def _sampling_step(self, s: ChainState) -> tuple[ChainState, Any]:
        state, info = self.kernel.step(self.rng, s.kernel, s.step_size, s.metric)
        self._kept.record(s.iteration - self.settings.warmup, state, info)
        return s._replace(iteration=s.iteration + 1, kernel=state,
                          n_evals=self._counted.calls), info

    # -- results and records -----------------------------------------------------------
    def _counts(self) -> tuple[int, int]:
        it, warmup = self.state.iteration, self.settings.warmup
        return min(it, warmup), max(0, it - warmup)

    def current_step_size(self) -> float:
        """The adapted step size, or during warmup the one the next iteration would use."""
        s = self.state
        if s.iteration >= self.settings.warmup:
            return float(s.step_size)
        return math.exp(s.averager.log_step)

    def result(self) -> ChainResult:
        """Draws and statistics so far (all of them once :attr:`done`)."""
        n_warm, n_kept = self._counts()
        draws, stats = self._kept.head(n_kept)
        warm_draws, warm_stats = self._warm.head(n_warm)
        return ChainResult(draws, stats, self.current_step_size(), self.state.metric.copy(),
                           warm_draws, warm_stats, self._counted.calls, self.settings.method)

    def to_record(self) -> tuple[dict, dict[str, np.ndarray]]:
        """The whole state: JSON-ready scalars and arrays (floats are kept in arrays).

        Returns
        -------
        meta : dict
            Integers, the method and the bit generator's state.
        arrays : dict of str to numpy.ndarray
        """
        s = self.state
        n_warm, n_kept = self._counts()
        a = s.averager
        arrays = {
            "scalars": np.array([s.step_size, s.kernel.logdensity, a.log_step,
                                 a.log_step_avg, a.h_bar, a.mu], dtype=float),
            "position": np.asarray(s.kernel.position, dtype=float),
            "welford_mean": s.welford.mean, "welford_m2": s.welford.m2, "metric": s.metric,
        }
        if hasattr(s.kernel, "grad"):
            arrays["grad"] = np.asarray(s.kernel.grad, dtype=float)
        for prefix, rec, n in (("warm", self._warm, n_warm), ("kept", self._kept, n_kept)):
            draws, stats = rec.head(n)
            arrays[f"{prefix}_draws"] = draws
            arrays.update({f"{prefix}_{key}": v for key, v in stats.items()})
        meta = {"method": self.settings.method, "iteration": s.iteration, "dim": self.dim,
                "averager_count": a.count, "welford_count": s.welford.count,
                "n_evals": s.n_evals, "rng": self.rng.bit_generator.state}
        return meta, arrays

    @classmethod
    def from_record(cls, logdensity_and_grad: LogDensityAndGrad, settings: ChainSettings,
                    meta: dict, arrays: dict[str, np.ndarray]) -> Chain:
        """Inverse of :meth:`to_record`: the chain exactly where it was.

        Parameters
        ----------
        logdensity_and_grad : callable
            The same density the chain was started with (in the same warm-start state, if
            it keeps one, for bit-identical continuation).
        settings : ChainSettings
            The settings it was started with.
        meta, arrays
            From :meth:`to_record`.

        Returns
        -------
        Chain
        """
        if meta["method"] != settings.method:
            raise InputError(f"chain record: method {meta['method']!r} differs from "
                             f"{settings.method!r}")
        rng_state = meta["rng"]
        rng = np.random.Generator(getattr(np.random, rng_state["bit_generator"])())
        rng.bit_generator.state = rng_state
        chain = cls(logdensity_and_grad, settings, rng, int(meta["dim"]))
        step_size, logdensity, log_step, log_step_avg, h_bar, mu = arrays["scalars"].tolist()
        fields = {"position": arrays["position"].copy(), "logdensity": logdensity}
        if "grad" in arrays:
            fields["grad"] = arrays["grad"].copy()
        kernel_state = chain.kernel.state_type(**fields)
        averager = DualAveragingState(log_step, log_step_avg, h_bar, mu,
                                      int(meta["averager_count"]))
        welford = WelfordState(int(meta["welford_count"]), arrays["welford_mean"].copy(),
                               arrays["welford_m2"].copy())
        chain._counted.calls = int(meta["n_evals"])
        for prefix, rec in (("warm", chain._warm), ("kept", chain._kept)):
            rec.fill(arrays[f"{prefix}_draws"], {k: arrays[f"{prefix}_{k}"] for k in STATS})
        chain.state = ChainState(int(meta["iteration"]), kernel_state, step_size, averager,
                                 welford, arrays["metric"].copy(), int(meta["n_evals"]))
        return chain
