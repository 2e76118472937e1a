"""``sample``: chains in parallel processes, each with its own warm-started likelihood."""

from __future__ import annotations

import os
import pickle
import queue as queue_mod
import time
from concurrent.futures import ProcessPoolExecutor
from multiprocessing import get_context

import numpy as np

from bayesirl.errors import InputError
from bayesirl.posterior.model import PosteriorModel
from bayesirl.posterior.posterior import Posterior
from bayesirl.posterior.progress import ChainProgress
from bayesirl.sampler import run_chain

# Stan's initialisation: uniform on (-2, 2) in the unconstrained space (common practice).
INIT_RADIUS = 2.0
_INIT_TRIES = 100


def _initial_point(model: PosteriorModel, rng: np.random.Generator) -> np.ndarray:
    for _ in range(_INIT_TRIES):
        theta = rng.uniform(-INIT_RADIUS, INIT_RADIUS, size=model.dim)
        value, grad = model(theta)
        if np.isfinite(value) and np.all(np.isfinite(grad)):
            return theta
    raise InputError(f"no finite log-posterior found in {_INIT_TRIES} initial points")


def _run_one(blob: bytes, chain: int, seed: np.random.SeedSequence, settings: dict, sink=None):
    """One chain from a pickled model (a fresh, cold likelihood, as in a worker process)."""
    model = pickle.loads(blob)
    init_seed, chain_seed = seed.spawn(2)
    theta0 = _initial_point(model, np.random.default_rng(init_seed))
    total = settings["draws"] + settings["warmup"]
    every = max(1, total // 200)
    divergent = 0

    def callback(i, info):
        nonlocal divergent
        divergent += int(getattr(info, "divergent", False))
        if sink is not None and (i % every == 0 or i == total - 1):
            sink(chain, i + 1, float(getattr(info, "step_size", np.nan)), divergent)

    t0 = time.perf_counter()
    density = model.logdensity if settings["method"] == "random-walk" else model
    result = run_chain(
        density, theta0, settings["draws"], settings["warmup"], chain_seed,
        method=settings["method"], dense_mass=settings["dense_mass"],
        target_accept=settings["target_accept"], max_depth=settings["max_depth"],
        callback=callback,
    )
    return result, time.perf_counter() - t0


def _worker(blob, chain, seed, settings, q):
    sink = None if q is None else (lambda *row: q.put(row))
    return _run_one(blob, chain, seed, settings, sink)


def _check(chains, draws, warmup, method) -> None:
    for name, v, low in (("chains", chains, 1), ("draws", draws, 1), ("warmup", warmup, 0)):
        if int(v) != v or v < low:
            raise InputError(f"{name}: expected an integer >= {low}; got {v!r}")
    if method not in ("nuts", "random-walk"):
        raise InputError(f"method: expected 'nuts' or 'random-walk'; got {method!r}")


def sample(
    likelihood,
    prior=None,
    chains: int = 4,
    draws: int = 1000,
    warmup: int = 1000,
    seed: int = 0,
    method: str = "nuts",
    progress: bool = True,
    rationality=None,
    pin: dict | None = None,
    dense_mass: bool = False,
    target_accept: float | None = None,
    max_depth: int = 10,
    processes: int | None = None,
) -> Posterior:
    """Sample the posterior over reward weights (and the rationality when it has a prior).

    Parameters
    ----------
    likelihood : BoltzmannLikelihood
    prior : Normal, Laplace or Uniform, optional
        Prior on the weights (scalars or one value per feature); default ``Normal(0, 5)``.
    chains, draws, warmup : int
        Draws are kept after ``warmup`` adaptation iterations, per chain.
    seed : int
        Chain ``k`` uses child ``k`` of ``numpy.random.SeedSequence(seed)``: the same seed
        gives the same draws whether chains run in parallel or one after another.
    method : {"nuts", "random-walk"}
    progress : bool
        One line per chain on a terminal (never when output is not a terminal).
    rationality : None, float or LogNormal
        Fixed (None: the likelihood's) or sampled with this prior; then ``pin`` one weight.
    pin : dict, optional
        ``{feature name: value}`` weights held fixed (sets the scale when beta is sampled;
        its sign is an assumption you make).
    dense_mass : bool
        Adapt a dense rather than diagonal mass matrix.
    target_accept, max_depth
        NUTS settings (defaults 0.8 and 10).
    processes : int, optional
        Worker processes; default ``min(chains, cpu count)``; 1 runs in this process.

    Returns
    -------
    Posterior
    """
    _check(chains, draws, warmup, method)
    model = PosteriorModel(likelihood, prior, rationality, pin)
    settings = {"draws": int(draws), "warmup": int(warmup), "method": method,
                "dense_mass": bool(dense_mass), "target_accept": target_accept,
                "max_depth": int(max_depth)}
    seeds = np.random.SeedSequence(seed).spawn(int(chains))
    blob = pickle.dumps(model)
    n_proc = min(int(chains), os.cpu_count() or 1) if processes is None else int(processes)
    bar = ChainProgress(int(chains), int(draws) + int(warmup), enabled=progress)
    t0 = time.perf_counter()
    if n_proc <= 1:
        results = [_run_one(blob, k, s, settings, bar.update) for k, s in enumerate(seeds)]
    else:
        results = _run_parallel(blob, seeds, settings, n_proc, bar)
    bar.close()
    posterior = Posterior.from_chains(
        model, [r for r, _ in results], settings, seed=int(seed),
        wall_time=time.perf_counter() - t0, chain_times=[t for _, t in results],
    )
    posterior.warn()  # every run is checked; failures are printed, never silent
    return posterior


def _run_parallel(blob, seeds, settings, n_proc, bar):
    # fork where the platform has it: workers inherit the imported, compiled modules and the
    # caller's script needs no ``if __name__ == "__main__"`` guard (spawn re-imports it).
    # OpenBLAS registers fork handlers, and we start no numba thread pools.
    ctx = get_context("fork" if "fork" in _methods() else "spawn")
    manager = ctx.Manager() if bar.enabled else None
    q = manager.Queue() if manager else None
    try:
        with ProcessPoolExecutor(max_workers=n_proc, mp_context=ctx) as pool:
            futures = [pool.submit(_worker, blob, k, s, settings, q) for k, s in enumerate(seeds)]
            while not all(f.done() for f in futures):
                _drain(q, bar)
                time.sleep(0.05)
            _drain(q, bar)
            return [f.result() for f in futures]
    finally:
        if manager is not None:
            manager.shutdown()


def _methods() -> list[str]:
    from multiprocessing import get_all_start_methods

    return get_all_start_methods()


def _drain(q, bar) -> None:
    if q is None:
        return
    while True:
        try:
            bar.update(*q.get_nowait())
        except queue_mod.Empty:
            return
