"""Chains in worker processes that stop cleanly on a signal and hand their state back.

Each worker runs its share of the chains (chain ``k`` goes to worker ``k % n``) and sends
messages on one queue: progress rows, periodic ``state`` records, a ``final`` record per
chain, an ``error`` if a chain raised, and ``bye`` as its last message. The parent reads
the queue until every worker said bye, forwards a stop (its own signal, or a worker that
stopped) to the workers as SIGTERM, and always joins them, so no worker is left behind as
an orphan or a zombie. Workers never let an exception escape (no tracebacks on the
terminal); an error travels to the parent, which raises it.
"""

from __future__ import annotations

import os
import pickle
import queue as queue_mod
import signal
import time
import traceback
from multiprocessing import get_all_start_methods, get_context

from bayesirl.execution.chains import run_job
from bayesirl.execution.interrupt import Stopper
from bayesirl.threads import one_blas_thread

_POLL = 0.05  # seconds between checks of the stop flag while waiting for messages
_GRACE = 10.0  # seconds workers get to stop after being told, before they are killed


def _worker(w, jobs, blob, settings, saved, stopper, q, interval) -> None:
    def emit(kind, chain, payload):
        q.put((kind, chain, payload))

    try:
        stopper.ensure_installed()
        one_blas_thread()  # for the worker's life (bayesirl.threads: 5x at 10^5 states)
        for k, seed in jobs:
            if stopper.stopped:
                break
            record = run_job(blob, k, seed, settings, saved[k], stopper, emit, interval)
            q.put(("final", k, (record, stopper.stopped, stopper.signum)))
    except BaseException as exc:  # noqa: BLE001 - everything goes to the parent
        q.put(("error", w, _portable(exc)))
    finally:
        if stopper.stopped and os.getppid() != stopper.parent:
            q.cancel_join_thread()  # the parent is gone: nobody will read the queue
        q.put(("bye", w, None))


def _portable(exc: BaseException) -> BaseException:
    try:
        pickle.loads(pickle.dumps(exc))
        return exc
    except Exception:  # noqa: BLE001 - an unpicklable exception becomes its traceback
        return RuntimeError("".join(traceback.format_exception(exc)))


def run_parallel(blob, seeds, settings, saved, n_proc, stopper: Stopper, on_message,
                 interval):
    """Run the chains in ``n_proc`` workers; ``on_message(kind, k, payload)`` sees every
    message. Returns the final records (None for chains that did not run)."""
    ctx = get_context("fork" if "fork" in get_all_start_methods() else "spawn")
    q = ctx.Queue()
    jobs = [[(k, s) for k, s in enumerate(seeds) if k % n_proc == w] for w in range(n_proc)]
    procs = [ctx.Process(target=_worker, daemon=True, name=f"bayesirl-chain-worker-{w}",
                         args=(w, jobs[w], blob, settings, saved, stopper, q, interval))
             for w in range(n_proc)]
    finals, errors, byes = dict(enumerate(saved)), [], set()
    told = None
    try:
        for p in procs:
            p.start()
        while len(byes) < n_proc:
            if stopper.stopped and told is None:
                told = time.monotonic()
                _tell(procs)
            message = _next(q, procs, byes)
            if message is None:
                if told is not None and time.monotonic() - told > _GRACE:
                    break
                continue
            kind, k, payload = message
            if kind == "bye":
                byes.add(k)
            elif kind == "error":
                errors.append(payload)
                stopper.request()
            elif kind == "final":
                record, stopped, signum = payload
                if record is not None:
                    finals[k] = record
                if stopped:
                    stopper.request(signum)
            on_message(kind, k, payload)
    finally:
        _reap(procs)
        q.close()
        q.join_thread()
    if errors:
        raise errors[0]
    return [finals[k] for k in range(len(seeds))]


def _tell(procs) -> None:
    for p in procs:
        if p.is_alive():
            try:
                os.kill(p.pid, signal.SIGTERM)
            except ProcessLookupError:
                pass


def _next(q, procs, byes):
    """The next message, or None after a quiet poll; raises if a worker died silently."""
    try:
        return q.get(timeout=_POLL)
    except queue_mod.Empty:
        pass
    for w, p in enumerate(procs):
        if w not in byes and p.exitcode is not None:
            # Its last messages may still be in the pipe: one more look before giving up.
            try:
                return q.get(timeout=1.0)
            except queue_mod.Empty:
                raise RuntimeError(f"chain worker {w} died (exit code {p.exitcode})") from None
    return None


def _reap(procs) -> None:
    for p in procs:
        if p.pid is None:
            continue
        p.join(timeout=2.0)
        if p.is_alive():
            p.kill()  # SIGKILL: SIGTERM would only set the worker's stop flag again
            p.join()
