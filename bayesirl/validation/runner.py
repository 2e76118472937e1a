"""Run simulation-based calibration: seeded replications in parallel worker processes.

A *problem* is any object with

* ``names``: tuple of the ranked parameters' names;
* ``simulate(rng) -> (truth (P,), data)``: true parameters from the prior, data given them;
* ``posterior(data, draws, seed) -> PosteriorDraws``: ``(chains, draws, P)`` posterior draws;
* ``describe() -> dict``: settings for the report.

Replication ``r`` takes child ``r`` of ``numpy.random.SeedSequence(seed)``, so its result does
not depend on how many replications run, in which order, or in how many processes.
Following Talts et al. (2018, sec. 5.1) each posterior is thinned by its effective sample
size to ``L`` nearly independent draws; when the ESS is too small for that the posterior is
rerun with twice the draws, up to ``doublings`` times.
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable
from dataclasses import dataclass
from multiprocessing import get_all_start_methods, get_context
from typing import Any, NamedTuple

import numpy as np

from bayesirl import arviz_compat as az
from bayesirl.errors import InputError, SolverError
from bayesirl.threads import one_blas_thread
from bayesirl.validation.ranks import (
    Uniformity,
    choose_bins,
    ranks_of,
    spread_evenly,
    thin,
    unthinned,
)
from bayesirl.validation.ranks import uniformity as chi_square


@dataclass(frozen=True)
class SBCSettings:
    """How each replication's posterior is sampled and reduced to ranks.

    Parameters
    ----------
    n_draws : int
        ``L``, thinned draws per replication; ranks lie in ``0..L``. Choose ``L + 1``
        divisible by the number of bins (e.g. 99 with 20 bins).
    draws : int
        Draws per chain at the first attempt.
    doublings : int
        Reruns with twice the draws allowed when the ESS cannot supply ``L`` thinned draws.
    thin : bool
        Thin by ESS (True, SBC as published). False keeps the last ``L / chains`` draws of
        each chain, unthinned: only for negative controls.
    restarts : int
        Times a posterior run that raises :class:`~bayesirl.InputError` or
        :class:`~bayesirl.SolverError` is rerun on the same data with a fresh sampler seed.
        Each restart is recorded; a replication is never dropped (that would condition the
        true values on the sampler's success and bias the ranks), so when the restarts run
        out the error propagates.
    """

    n_draws: int = 99
    draws: int = 300
    doublings: int = 2
    thin: bool = True
    restarts: int = 0


class Replication(NamedTuple):
    """One replication's truth, thinned draws, ranks and sampler record."""

    index: int
    truth: np.ndarray  # (P,)
    thinned: np.ndarray  # (L, P)
    ranks: np.ndarray  # (P,)
    ess: float  # smallest bulk or tail ESS over parameters (last attempt)
    rhat: float  # largest rank-normalised split R-hat (NaN with one chain)
    divergences: int
    draws: int  # per chain, last attempt
    attempts: int
    short: bool  # ESS stayed below what thinning needs; evenly spread draws were used
    restarts: tuple[str, ...]  # errors after which the sampler was rerun
    seconds: float
    cpu_seconds: float  # this process's CPU time (independent of other load on the machine)


@dataclass
class SBCResult:
    """Output of :func:`run_sbc`."""

    names: tuple[str, ...]
    description: dict[str, str]
    settings: SBCSettings
    seed: int
    replications: list[Replication]
    processes: int
    wall_time: float

    @property
    def ranks(self) -> np.ndarray:
        """``(replications, P)`` ranks of the true values."""
        return np.stack([r.ranks for r in self.replications])

    def bins(self) -> int:
        """Default number of bins (:func:`~bayesirl.validation.ranks.choose_bins`)."""
        return choose_bins(len(self.replications), self.settings.n_draws)

    def tests(self, bins: int | None = None) -> list[Uniformity]:
        """Chi-square uniformity test per parameter."""
        b = self.bins() if bins is None else int(bins)
        ranks = self.ranks
        return [chi_square(n, ranks[:, k], self.settings.n_draws, b)
                for k, n in enumerate(self.names)]

    def passed(self, bins: int | None = None) -> bool:
        """True when no parameter's uniformity is rejected."""
        return all(t.passed for t in self.tests(bins))

    def reranked(self, transform: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
        """Ranks after ``transform((L, P) thinned draws) -> (L, P)``, e.g. a deliberate shift."""
        return np.stack([ranks_of(r.truth, transform(r.thinned)) for r in self.replications])


def _diagnose(draws: np.ndarray) -> tuple[float, float]:
    """Smallest bulk/tail ESS and largest rank R-hat over the parameters of ``draws``."""
    ess, rhat = np.inf, np.nan
    for k in range(draws.shape[2]):
        x = draws[:, :, k]
        ess = min(ess, az.ess(x, method="bulk"), az.ess(x, method="tail"))
        if draws.shape[0] > 1:
            rhat = np.fmax(rhat, az.rhat(x, method="rank"))
    return ess, float(rhat)


def _posterior(problem: Any, data: Any, draws: int, seeds, errors: list[str], limit: int):
    """``problem.posterior`` with restarts on bayesirl's errors, each noted in ``errors``."""
    while True:
        seed = int(next(seeds))
        try:
            return problem.posterior(data, draws, seed)
        except (InputError, SolverError) as exc:
            errors.append(f"{type(exc).__name__}: {exc}")
            if len(errors) > limit:
                raise


def replicate(problem: Any, settings: SBCSettings, index: int,
              seed: np.random.SeedSequence) -> Replication:
    """Run replication ``index`` from its seed (see the module docstring)."""
    t0, c0 = time.perf_counter(), time.process_time()
    data_seed, sampler_seed = seed.spawn(2)
    truth, data = problem.simulate(np.random.default_rng(data_seed))
    seeds = iter(sampler_seed.generate_state(settings.doublings + 1 + settings.restarts))
    errors: list[str] = []
    draws = settings.draws
    for attempt in range(settings.doublings + 1):
        post = _posterior(problem, data, draws, seeds, errors, settings.restarts)
        ess, rhat = _diagnose(post.draws)
        if not settings.thin:
            kept = unthinned(post.draws, settings.n_draws)
            break
        kept = thin(post.draws, settings.n_draws, ess)
        if kept is not None:
            break
        if attempt < settings.doublings:
            draws *= 2
    short = kept is None
    if short:
        kept = spread_evenly(post.draws, settings.n_draws)
    return Replication(index, np.asarray(truth, dtype=float), kept, ranks_of(truth, kept), ess,
                       rhat, post.divergences, draws, attempt + 1, short, tuple(errors),
                       time.perf_counter() - t0, time.process_time() - c0)


_JOB: dict[str, Any] = {}


def _install(problem: Any, settings: SBCSettings) -> None:
    one_blas_thread()  # for the pool worker's life: no spinning BLAS threads (bayesirl.threads)
    _JOB["problem"], _JOB["settings"] = problem, settings


def _work(task: tuple[int, np.random.SeedSequence]) -> Replication:
    return replicate(_JOB["problem"], _JOB["settings"], *task)


def run_sbc(
    problem: Any,
    replications: int,
    seed: int = 0,
    settings: SBCSettings | None = None,
    processes: int | None = None,
    log: Callable[[str], None] | None = None,
) -> SBCResult:
    """Simulation-based calibration of ``problem``'s posterior.

    Parameters
    ----------
    problem : object
        See the module docstring (e.g. :class:`~bayesirl.validation.GridSBC`).
    replications : int
        Number of (truth, data, posterior) replications.
    seed : int
        Root seed; replication ``r`` uses child ``r`` of ``SeedSequence(seed)``.
    settings : SBCSettings, optional
    processes : int, optional
        Worker processes (default ``os.cpu_count()``); 1 runs in this process. Workers are
        forked where the platform can.
    log : callable, optional
        Receives a progress line about every tenth of the run.

    Returns
    -------
    SBCResult
    """
    settings = SBCSettings() if settings is None else settings
    if int(replications) < 1:
        raise InputError(f"replications: expected an integer >= 1; got {replications!r}")
    tasks = list(enumerate(np.random.SeedSequence(int(seed)).spawn(int(replications))))
    n_proc = (os.cpu_count() or 1) if processes is None else int(processes)
    n_proc = max(1, min(n_proc, len(tasks)))
    every = max(1, len(tasks) // 10)
    t0 = time.perf_counter()
    results = []

    def note(rep: Replication) -> None:
        results.append(rep)
        if log is not None and (len(results) % every == 0 or len(results) == len(tasks)):
            log(f"{len(results)}/{len(tasks)} replications, {time.perf_counter() - t0:.0f} s")

    if n_proc == 1:
        for task in tasks:
            note(replicate(problem, settings, *task))
    else:
        ctx = get_context("fork" if "fork" in get_all_start_methods() else "spawn")
        with ctx.Pool(n_proc, initializer=_install, initargs=(problem, settings)) as pool:
            for rep in pool.imap(_work, tasks, chunksize=1):
                note(rep)
    return SBCResult(tuple(problem.names), problem.describe(), settings, int(seed), results,
                     n_proc, time.perf_counter() - t0)
