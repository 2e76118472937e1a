"""One chain of ``sample``, stoppable and resumable: the same code in-process and in workers.

A chain is started (initial point, first step-size search) or restored from a
:class:`ChainRecord`, then advanced one iteration at a time. After every completed
iteration the likelihood's warm starts are marked; when a stop arrives mid-iteration the
driver rolls the iteration back and the warm starts return to the mark, so the saved
record is exactly the state between two iterations of an uninterrupted run.
"""

from __future__ import annotations

import math
import pickle
import signal
import time
from collections.abc import Callable
from typing import NamedTuple

import numpy as np

from bayesirl.errors import InputError, SolverError
from bayesirl.execution import interrupt
from bayesirl.execution.interrupt import Guarded, Stopper, StopRequested
from bayesirl.posterior.model import PosteriorModel
from bayesirl.sampler import ChainResult, pathfinder
from bayesirl.sampler.driver import Chain, ChainSettings

# Stan's initialisation: uniform on (-2, 2) in the unconstrained space (common practice).
INIT_RADIUS = 2.0
_INIT_TRIES = 100
_LIK = "lik."  # prefix of the likelihood's warm-start arrays in a record

# Set by tests only (inherited by forked workers): see interrupt.StopHook.
TEST_STOP: interrupt.StopHook | None = None


class ChainRecord(NamedTuple):
    """A chain's saved state: JSON-ready ``meta`` and named ``arrays``."""

    meta: dict
    arrays: dict[str, np.ndarray]


def chain_settings(settings: dict) -> ChainSettings:
    """The driver's settings from ``sample``'s settings dict."""
    return ChainSettings(settings["method"], settings["draws"], settings["warmup"],
                         settings["dense_mass"], settings["target_accept"],
                         settings["max_depth"])


def initial_point(density: Callable, dim: int, rng: np.random.Generator,
                  solver_failures: Callable[[], int] | None = None) -> np.ndarray:
    """A uniform draw on ``(-2, 2)^dim`` with a finite log density and gradient.

    Raises :class:`SolverError` when the soft Bellman solve failed at every try (counted by
    ``solver_failures``), else :class:`InputError` (the density is -inf there: the prior's
    support or the data).
    """
    before = solver_failures() if solver_failures else 0
    for _ in range(_INIT_TRIES):
        theta = rng.uniform(-INIT_RADIUS, INIT_RADIUS, size=dim)
        value, grad = density(theta)
        if np.isfinite(value) and np.all(np.isfinite(grad)):
            return theta
    failed = (solver_failures() - before) if solver_failures else 0
    if failed:
        raise SolverError(
            f"no initial point: the soft Bellman solve failed at {failed} of {_INIT_TRIES} "
            f"points drawn uniformly in (-{INIT_RADIUS:g}, {INIT_RADIUS:g}) per parameter. "
            "Try larger [solver] max_newton_steps or max_linear_iterations, a looser [solver] "
            "tol, features rescaled to order 1, or a smaller discount")
    raise InputError(f"no finite log-posterior found in {_INIT_TRIES} initial points")


def _never(theta):
    raise InputError("a chain rebuilt for its results cannot evaluate a density")


def result_of(record: ChainRecord, settings: dict) -> ChainResult:
    """The draws and statistics in a record (all of them if the chain finished)."""
    arrays = {k: v for k, v in record.arrays.items() if not k.startswith(_LIK)}
    return Chain.from_record(_never, chain_settings(settings), record.meta, arrays).result()


class _Warm:
    """Mark and roll back the model's warm starts (a no-op for likelihoods without them)."""

    def __init__(self, model: PosteriorModel) -> None:
        # the evidence model: every term's warm starts (the likelihood's, for one term)
        self.model, self.lik = model, getattr(model, "evidence", model.likelihood)
        self.able = hasattr(self.lik, "warm_start")
        self.mark()

    def mark(self) -> None:
        self._mark = self.lik.warm_start() if self.able else None
        self._failures = self.model.solver_failures

    def rollback(self) -> None:
        if self.able:
            self.lik.restore_warm_start(self._mark)
        self.model.solver_failures = self._failures

    def arrays(self) -> dict[str, np.ndarray]:
        if not self.able:
            return {}
        return {_LIK + k: v for k, v in self.lik.warm_start_arrays().items()}

    def load(self, arrays: dict[str, np.ndarray]) -> None:
        own = {k[len(_LIK):]: v for k, v in arrays.items() if k.startswith(_LIK)}
        if self.able and own:
            self.lik.load_warm_start_arrays(own)


def _record(chain: Chain, warm: _Warm, elapsed: float) -> ChainRecord:
    meta, arrays = chain.to_record()
    arrays.update(warm.arrays())
    meta.update(solver_failures=warm.model.solver_failures, elapsed=elapsed, done=chain.done)
    return ChainRecord(meta, arrays)


def _open(model, saved, seed, cfg, guard, stopper, start: str = "uniform") -> Chain:
    if saved is not None:
        arrays = {k: v for k, v in saved.arrays.items() if not k.startswith(_LIK)}
        chain = Chain.from_record(guard, cfg, saved.meta, arrays)
        _Warm(model).load(saved.arrays)
        model.solver_failures = int(saved.meta["solver_failures"])
        return chain
    init_seed, chain_seed = seed.spawn(2)
    # The initial point is searched with the full density (as before checkpoints existed).
    init_rng = np.random.default_rng(init_seed)
    full = Guarded(model, stopper)
    theta0 = initial_point(full, model.dim, init_rng, lambda: model.solver_failures)
    if start == "pathfinder":  # the same generator goes on to the path's ELBO draws
        theta0, metric, used = pathfinder.initial_state(
            full, theta0, init_rng, dense=cfg.dense_mass,
            logdensity=Guarded(model.logdensity, stopper))
        return Chain.start(guard, theta0, cfg, chain_seed, metric=metric, evals_before=used)
    return Chain.start(guard, theta0, cfg, chain_seed)


def run_job(blob: bytes, k: int, seed: np.random.SeedSequence, settings: dict,
            saved: ChainRecord | None, stopper: Stopper, emit: Callable,
            interval: float | None) -> ChainRecord | None:
    """Run chain ``k`` until it finishes or a stop is requested; return its record.

    ``emit(kind, k, payload)`` receives ``"progress"`` rows ``(done, step size,
    divergences)`` and, every ``interval`` seconds, ``"state"`` records. Returns None when
    the stop came before the chain's first iteration boundary (nothing to keep).
    """
    model = pickle.loads(blob)  # a fresh, cold likelihood, as in a worker process
    hook = TEST_STOP if TEST_STOP is not None and TEST_STOP.chain == k else None
    density = model.logdensity if settings["method"] == "random-walk" else model
    guard = Guarded(density, stopper, hook.evaluation if hook else None)
    cfg = chain_settings(settings)
    t0, before = time.perf_counter(), float(saved.meta["elapsed"]) if saved else 0.0
    try:
        chain = _open(model, saved, seed, cfg, guard, stopper,
                      settings.get("start", "uniform"))
    except StopRequested:
        return None
    warm = _Warm(model)
    every = max(1, chain.total // 200)
    so_far = chain.result()
    divergent = int(so_far.warmup_stats["divergent"].sum() + so_far.stats["divergent"].sum())
    last = time.monotonic()
    while not chain.done and not stopper.stopped:
        try:
            info = chain.advance()
        except StopRequested:
            warm.rollback()
            break
        warm.mark()
        i = chain.state.iteration
        divergent += int(getattr(info, "divergent", False))
        if i % every == 1 % every or i == chain.total:
            emit("progress", k, (i, float(getattr(info, "step_size", math.nan)), divergent))
        if hook is not None and hook.iteration == i:
            stopper.request(signal.SIGINT)
        if interval is not None and time.monotonic() - last > interval:
            emit("state", k, _record(chain, warm, before + time.perf_counter() - t0))
            last = time.monotonic()
    # The bar shows where the chain really stopped, not its last throttled update.
    emit("progress", k, (chain.state.iteration, chain.current_step_size(), divergent))
    return _record(chain, warm, before + time.perf_counter() - t0)
