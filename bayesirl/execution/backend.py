"""Where the work runs: one backend type per place, shared by ``sample`` and ``suggest``.

- :class:`Serial`: this process, one chain after another.
- :class:`Processes`: forked worker processes on this machine (chains only; the default of
  ``sample``).
- :class:`Cluster`: Dask tasks on a ``distributed`` cluster (chains, and the designer's
  policy solves and scoring).

Settings that cannot go together are separate types rather than flags: a number of worker
processes belongs to :class:`Processes`, a scheduler to :class:`Cluster`, and only the
local backends keep checkpoints. Every backend runs the same chain code
(:func:`bayesirl.execution.chains.run_job`) on the same seed children, so the draws are the
same bits wherever they run.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any, NamedTuple, Protocol, runtime_checkable

import numpy as np

from bayesirl.errors import InputError
from bayesirl.execution import cluster as dask_cluster
from bayesirl.execution.chains import ChainRecord, run_job
from bayesirl.execution.interrupt import Stopper
from bayesirl.execution.parallel import run_parallel
from bayesirl.threads import one_blas_thread


class ChainJob(NamedTuple):
    """Everything a backend needs to run the chains of one ``sample`` call."""

    blob: bytes  # the pickled PosteriorModel; each chain unpickles a fresh, cold copy
    seeds: list[np.random.SeedSequence]  # chain k's seed child
    settings: dict  # sampler settings (draws, warmup, method, ...)
    saved: list[ChainRecord | None]  # records to resume from (None: start fresh)
    on_message: Callable[[str, int, Any], None]  # progress rows, states, final records
    interval: float | None  # seconds between state records (None: no checkpoint)
    progress: bool  # progress lines on a terminal
    close: Callable[[], None]  # called when the chains are done (closes the progress bar)


class ChainsDone(NamedTuple):
    """The final records (None for a chain that did not run) and the stopping signal."""

    records: list[ChainRecord | None]
    signum: int | None


@runtime_checkable
class Backend(Protocol):
    """The execution backend role: where ``sample``'s chains and ``suggest``'s work run."""

    def check(self, *, checkpoint: bool) -> None:
        """Refuse, before any work, a setting this backend cannot honour."""

    def run_chains(self, job: ChainJob) -> ChainsDone:
        """Run every chain of ``job``; stop cleanly on SIGINT/SIGTERM where supported."""

    def session(self, tasks: int) -> Any:
        """A context manager giving a ``distributed.Client`` for task work, or None to run
        the work in this process."""


def _run_here(job: ChainJob, n_proc: int) -> ChainsDone:
    """Chains in this process (``n_proc <= 1``) or in forked workers, stoppable by signals."""
    with Stopper() as stopper, one_blas_thread():
        try:
            if n_proc <= 1:
                records = _serial(job, stopper)
            else:
                records = run_parallel(job.blob, job.seeds, job.settings, job.saved, n_proc,
                                       stopper, job.on_message, job.interval)
        finally:
            job.close()
    return ChainsDone(records, stopper.signum)


def _serial(job: ChainJob, stopper: Stopper) -> list[ChainRecord | None]:
    records = list(job.saved)
    for k, s in enumerate(job.seeds):
        if stopper.stopped:
            break
        record = run_job(job.blob, k, s, job.settings, job.saved[k], stopper, job.on_message,
                         job.interval)
        if record is not None:
            records[k] = record
            job.on_message("final", k, (record, stopper.stopped, stopper.signum))
    return records


@contextmanager
def _nothing() -> Iterator[None]:
    yield None


@dataclass(frozen=True)
class Serial:
    """Run in this process: chains one after another, the designer's work in one pass."""

    def check(self, *, checkpoint: bool) -> None:
        """Every setting is supported."""

    def run_chains(self, job: ChainJob) -> ChainsDone:
        """The chains one after another in this process."""
        return _run_here(job, 1)

    def session(self, tasks: int) -> Any:
        """No client: the work runs here."""
        return _nothing()


@dataclass(frozen=True)
class Processes:
    """Chains in forked worker processes on this machine (chain ``k`` to worker ``k % n``).

    Parameters
    ----------
    n : int, optional
        Worker processes; default ``min(chains, cpu count)``. One runs in this process.
    """

    n: int | None = None

    def __post_init__(self) -> None:
        ok = isinstance(self.n, int | np.integer) and not isinstance(self.n, bool)
        if self.n is not None and (not ok or self.n < 1):
            raise InputError(f"Processes: n must be an integer >= 1 or None; got {self.n!r}")

    def check(self, *, checkpoint: bool) -> None:
        """Every setting is supported."""

    def workers(self, chains: int) -> int:
        """How many worker processes run ``chains`` chains."""
        return min(int(chains), os.cpu_count() or 1) if self.n is None else int(self.n)

    def run_chains(self, job: ChainJob) -> ChainsDone:
        """The chains in worker processes (in this process when one worker is asked for)."""
        return _run_here(job, self.workers(len(job.seeds)))

    def session(self, tasks: int) -> Any:
        """Refused: only chains run in worker processes."""
        raise InputError("Processes(): only sample's chains run in worker processes; run "
                         "the designer with Serial() (this process) or Cluster('local')")


@dataclass(frozen=True)
class Cluster:
    """Dask tasks on a ``distributed`` cluster (needs ``bayesirl[cluster]``).

    Parameters
    ----------
    where : str or distributed.Client
        ``"local"`` (a ``LocalCluster`` of processes for the call, closed afterwards), a
        scheduler address (``"tcp://host:8786"``) or a ``distributed.Client`` (left open).
        No checkpoints: a chain whose worker dies is rerun from its seed; Ctrl-C cancels
        the tasks and keeps nothing. See the README, "Running chains on a cluster".
    """

    where: Any = "local"

    def __post_init__(self) -> None:
        dask_cluster.check_address(self.where)

    def check(self, *, checkpoint: bool) -> None:
        """Refuse checkpoints (not supported on a cluster yet)."""
        if checkpoint:
            raise InputError("cluster: checkpoints are not supported on a cluster yet; drop "
                             "checkpoint=/resume= (or run with a local backend)")

    def run_chains(self, job: ChainJob) -> ChainsDone:
        """One task per chain; a line per finished chain when ``job.progress``."""
        try:
            records = dask_cluster.run_on_cluster(self.where, job.blob, job.seeds,
                                                  job.settings, job.progress)
        finally:
            job.close()
        return ChainsDone(list(records), None)

    @contextmanager
    def session(self, tasks: int) -> Iterator[Any]:
        """A connected client whose workers run this version of bayesirl."""
        with dask_cluster.connect(self.where, tasks) as client:
            dask_cluster.check_workers(client)
            yield client


def backend_of(backend: Any, default: Backend) -> Backend:
    """``backend`` checked against the role (``default`` for None), else InputError."""
    if backend is None:
        return default
    if not isinstance(backend, Serial | Processes | Cluster) and not isinstance(backend,
                                                                                 Backend):
        raise InputError(f"backend: expected bayesirl.Serial(), bayesirl.Processes(n) or "
                         f"bayesirl.Cluster(address); got {type(backend).__name__} "
                         f"{backend!r}")
    return backend
