"""Chains of ``sample`` as Dask tasks: one task per chain on a ``distributed`` cluster.

The pickled problem (the :class:`PosteriorModel` with its likelihood, MDP and
demonstrations) is scattered to every worker once; each chain task receives a reference to
it plus its own seed child, unpickles a fresh, cold copy and runs the same code as a local
chain (:func:`bayesirl.execution.chains.run_job`), so the same seed gives bit-identical
draws. A worker that dies mid-run has its chain rescheduled by the scheduler and rerun from
its seed (the scheduler's ``distributed.scheduler.allowed-failures``, 3 by default, bounds
how often); the chains that finished elsewhere are kept.

Dask is optional: it is imported here, lazily, only when a ``Cluster`` backend is
used (:class:`bayesirl.Cluster`). See the README, "Running chains on a cluster".
"""

from __future__ import annotations

import os
import sys
import time
import uuid
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from typing import Any

import numpy as np

from bayesirl.errors import InputError
from bayesirl.execution.chains import _LIK, ChainRecord, run_job
from bayesirl.execution.interrupt import Stopper
from bayesirl.threads import one_blas_thread

# Seconds to wait for a scheduler to answer before refusing its address.
CONNECT_TIMEOUT = 20.0
# How often the scheduler may lose a chain's worker before it gives up on the chain
# (applies to the "local" cluster, whose scheduler this process owns; a remote scheduler
# uses its own ``distributed.scheduler.allowed-failures`` setting, default 3).
ALLOWED_FAILURES = 3
KEY_PREFIX = "bayesirl-chain"
_SCHEMES = ("tcp://", "tls://", "inproc://", "ucx://", "ws://", "wss://")


def check_address(cluster: Any) -> None:
    """Refuse a ``cluster`` that is not an address string, ``"local"`` or a Client.

    Raises
    ------
    InputError
        Before any work is done (see :class:`bayesirl.execution.backend.Cluster`).
    """
    if isinstance(cluster, str):
        address = cluster.strip()
        if address != "local" and not (address.startswith(_SCHEMES) or _host_port(address)):
            raise InputError(f"cluster: expected 'local', a scheduler address such as "
                             f"'tcp://host:8786', or a distributed.Client; got {cluster!r}")
    elif not _is_client(cluster):
        raise InputError(f"cluster: expected 'local', a scheduler address such as "
                         f"'tcp://host:8786', or a distributed.Client; got "
                         f"{type(cluster).__name__} {cluster!r}")


def _is_client(obj: Any) -> bool:
    try:
        from distributed import Client
    except ImportError:  # without Dask nothing can be a Client
        return False
    return isinstance(obj, Client)


def _host_port(address: str) -> bool:
    host, sep, port = address.rpartition(":")
    return bool(sep and host and port.isdigit() and "/" not in host and " " not in host)


def _distributed():
    try:
        import distributed
    except ImportError as err:
        raise InputError("cluster: needs Dask; install it with "
                         "pip install 'bayesirl[cluster]' (or 'dask[distributed]')") from err
    return distributed


@contextmanager
def connect(cluster: Any, chains: int) -> Iterator[Any]:
    """A ``distributed.Client`` for ``cluster``; closes what it opened.

    ``"local"`` starts a ``LocalCluster`` of ``min(chains, cpu count)`` single-threaded
    worker processes for the run; an address connects to a running scheduler; a ``Client``
    is used as it is and left open.
    """
    distributed = _distributed()
    if not isinstance(cluster, str):
        yield cluster
        return
    if cluster.strip() == "local":
        import dask

        n = max(1, min(int(chains), os.cpu_count() or 1))
        with dask.config.set({"distributed.scheduler.allowed-failures": ALLOWED_FAILURES}):
            with distributed.LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                                          dashboard_address=None) as local:
                with distributed.Client(local) as client:
                    yield client
        return
    try:
        client = distributed.Client(cluster.strip(), timeout=CONNECT_TIMEOUT)
    except (OSError, TimeoutError) as err:
        raise InputError(f"cluster: no Dask scheduler answered at {cluster!r} within "
                         f"{CONNECT_TIMEOUT:g} s (start one with 'dask scheduler' and "
                         f"workers with 'dask worker ADDRESS'): {err}") from err
    try:
        yield client
    finally:
        client.close()


def _worker_version() -> str:
    from bayesirl.version import __version__

    return __version__


def check_workers(client: Any) -> None:
    """Refuse a cluster without workers or whose workers run another bayesirl version."""
    from bayesirl.version import __version__

    try:
        versions = client.run(_worker_version)
    except Exception as err:  # noqa: BLE001 - e.g. ModuleNotFoundError on a worker
        raise InputError(f"cluster: the workers cannot run bayesirl ({err!r}); install "
                         f"bayesirl {__version__} on every worker") from err
    if not versions:
        raise InputError("cluster: the scheduler has no workers; start some with "
                         "'dask worker ADDRESS'")
    other = {w: v for w, v in versions.items() if v != __version__}
    if other:
        raise InputError(f"cluster: workers run another bayesirl version than this process "
                         f"({__version__}): {other}")


def chain_task(blob: bytes, k: int, seed: np.random.SeedSequence,
               settings: dict) -> tuple[ChainRecord, str]:
    """Run chain ``k`` to the end on a worker; return its record and the worker's address."""
    from distributed import get_worker

    # For the worker's life, not a `with` block: chain tasks running side by side in one
    # worker's threads would otherwise undo each other's limit mid-chain. One thread keeps
    # the rounding of a local run (bayesirl.threads); nanny-started workers have it already.
    one_blas_thread()
    record = run_job(blob, k, seed, settings, None, Stopper(), _ignore, None)
    # The likelihood's warm starts matter only for a checkpoint (none on a cluster); leaving
    # them on the worker keeps large problems' value vectors and LU matrices off the wire.
    arrays = {name: a for name, a in record.arrays.items() if not name.startswith(_LIK)}
    return ChainRecord(record.meta, arrays), get_worker().address


def _ignore(kind, k, payload) -> None:
    """Progress rows and states from inside a task are not forwarded (one line per chain)."""


def submit_chains(client: Any, blob: bytes, seeds: Sequence[np.random.SeedSequence],
                  settings: dict) -> tuple[Any, list[Any]]:
    """Scatter ``blob`` to every worker once and submit one task per chain.

    Returns the future of the scattered problem and the chain futures (in chain order);
    task keys are ``bayesirl-chain-{k}-{run id}``.
    """
    # hash=False: a key of its own, so releasing it never touches a concurrent run's copy.
    shared = client.scatter(blob, broadcast=True, hash=False)
    run_id = uuid.uuid4().hex[:12]
    futures = [client.submit(chain_task, shared, k, s, settings, pure=False,
                             key=f"{KEY_PREFIX}-{k}-{run_id}")
               for k, s in enumerate(seeds)]
    return shared, futures


def run_on_cluster(cluster: Any, blob: bytes, seeds: Sequence[np.random.SeedSequence],
                   settings: dict, progress: bool, stream=None) -> list[ChainRecord]:
    """Run every chain as a Dask task; return the final records in chain order.

    Parameters
    ----------
    cluster : str or distributed.Client
        ``"local"``, a scheduler address or a client (see :func:`connect`).
    blob : bytes
        The pickled :class:`PosteriorModel`.
    seeds : sequence of numpy.random.SeedSequence
        Chain ``k``'s seed child.
    settings : dict
        ``sample``'s sampler settings.
    progress : bool
        A line per finished chain on ``stream`` (default stderr) when it is a terminal.
    stream : file, optional
        Where progress lines go.
    """
    out = stream if stream is not None else sys.stderr
    show = progress and getattr(out, "isatty", lambda: False)()
    with connect(cluster, len(seeds)) as client:
        check_workers(client)
        distributed = _distributed()
        shared, futures = submit_chains(client, blob, seeds, settings)
        index = {f.key: k for k, f in enumerate(futures)}
        records: list[ChainRecord | None] = [None] * len(seeds)
        t0 = time.perf_counter()
        try:
            for n, future in enumerate(distributed.as_completed(futures), start=1):
                k = index[future.key]
                records[k], where = future.result()
                if show:
                    out.write(f"chain {k} finished on {where} "
                              f"({records[k].meta['iteration']} iterations, "
                              f"{time.perf_counter() - t0:.1f} s; {n}/{len(seeds)} chains)\n")
                    out.flush()
        finally:
            client.cancel([*futures, shared])
    return records
