"""Bookkeeping of a run's chain records: periodic checkpoint writes and the final result.

``finish`` turns the records into the Posterior, or, when a chain did not reach the end,
into the partial posterior carried by :class:`bayesirl.Interrupted`.
"""

from __future__ import annotations

import math
import signal
import time
from pathlib import Path

import numpy as np

from bayesirl.errors import Interrupted
from bayesirl.execution import checkpoint as ckpt
from bayesirl.execution.chains import ChainRecord, result_of
from bayesirl.posterior.posterior import Posterior
from bayesirl.sampler import ChainResult
from bayesirl.sampler.transitions import STATS


class Book:
    """The latest record of every chain; writes the checkpoint at most every ``every`` s."""

    def __init__(self, path: Path | None, run: dict | None, records, bar, every: float) -> None:
        self.path, self.run, self.bar, self.every = path, run, bar, every
        self.records = list(records)
        self._last = time.monotonic()

    def on_message(self, kind: str, k: int, payload) -> None:
        """Handle a progress row, a periodic state or a chain's final record."""
        if kind == "progress":
            self.bar.update(k, *payload)
            return
        if kind == "state":
            self.records[k] = payload
        elif kind == "final" and payload[0] is not None:
            self.records[k] = payload[0]
        else:
            return
        if self.path is not None and time.monotonic() - self._last > self.every:
            self.write(complete=False)

    def write(self, complete: bool) -> None:
        """Save every record now (nothing without a checkpoint path)."""
        if self.path is not None:
            ckpt.save(self.path, self.run, self.records, complete)
            self._last = time.monotonic()


def _empty(dim: int, method: str) -> ChainResult:
    """A chain that has not started: no draws."""
    stats = {key: np.empty(0, dtype=dtype) for key, (dtype, _) in STATS.items()}
    return ChainResult(np.empty((0, dim)), stats, math.nan, np.ones(dim), np.empty((0, dim)),
                       dict(stats), 0, method)


def finish(model, records: list[ChainRecord | None], settings: dict, seed: int,
           wall_time: float, book: Book, signum: int | None) -> Posterior:
    """Write the final checkpoint; return the Posterior or raise Interrupted."""
    complete = all(r is not None and r.meta["done"] for r in records)
    book.records = list(records)
    book.write(complete)
    results = [result_of(r, settings) if r is not None else _empty(model.dim,
                                                                      settings["method"])
               for r in records]
    times = [float(r.meta["elapsed"]) if r is not None else 0.0 for r in records]
    # Likelihood evaluations whose solve failed (treated as divergences or rejections).
    settings = {**settings, "solver_failures": [
        int(r.meta.get("solver_failures", 0)) if r is not None else 0 for r in records]}
    if complete:
        posterior = Posterior.from_chains(model, results, settings, seed=seed,
                                          wall_time=wall_time, chain_times=times)
        posterior.warn()  # every run is checked; failures are printed, never silent
        return posterior
    # Chains still in warmup (or not started, as in a serial run) are left out; the others
    # are cut to the shortest, since a Posterior holds equally long chains.
    kept = [k for k, r in enumerate(results) if len(r.draws)] or list(range(len(results)))
    n = min(len(results[k].draws) for k in kept)
    cut = [results[k]._replace(draws=results[k].draws[:n],
                               stats={s: v[:n] for s, v in results[k].stats.items()})
           for k in kept]
    done = [int(r.meta["iteration"]) if r is not None else 0 for r in records]
    partial = Posterior.from_chains(
        model, cut, {**settings, "iterations_done": done, "chains_kept": kept}, seed=seed,
        wall_time=wall_time, chain_times=[times[k] for k in kept], complete=False)
    raise Interrupted(_message(signum, n, kept, settings, done, book.path), partial,
                      book.path, signum)


def _message(signum, n, kept, settings, done, path) -> str:
    name = signal.Signals(signum).name if signum else "a stop request"
    total = settings["warmup"] + settings["draws"]
    where = (f"state saved to {path}; continue with sample(..., checkpoint={str(path)!r}, "
             "resume=True)" if path is not None else "no checkpoint was requested")
    kept = (f"{n} of {settings['draws']} draws kept in {len(kept)} chain(s)" if n else
            "no draws kept yet (every chain is still in warmup)")
    return (f"sampling stopped by {name} after {min(done)}-{max(done)} of {total} iterations "
            f"per chain; {kept}; {where}")
