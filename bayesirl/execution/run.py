"""``sample``: chains in parallel processes, each with its own warm-started likelihood.

With ``checkpoint`` the run can be interrupted (SIGINT, SIGTERM) and resumed to exactly the
draws of an uninterrupted run; see docs/checkpoints.md for the design.
"""

from __future__ import annotations

import pickle
import time
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from bayesirl.errors import InputError
from bayesirl.execution import checkpoint as ckpt
from bayesirl.execution.backend import Backend, ChainJob, Processes, backend_of
from bayesirl.execution.partial import Book, finish
from bayesirl.execution.progress import ChainProgress
from bayesirl.posterior.groups import make_model
from bayesirl.resources import check_sampling

if TYPE_CHECKING:
    from bayesirl.evidence import EvidenceTerm
    from bayesirl.likelihood import BoltzmannLikelihood
    from bayesirl.posterior import Posterior
    from bayesirl.posterior.groups import Pooling
    from bayesirl.priors import LogNormal, Prior

# Seconds between checkpoint writes (and between state reports from workers).
CHECKPOINT_EVERY = 2.0

__all__ = ["sample"]

def _whole(name: str, v, low: int) -> int:
    """An integer argument (a whole float such as 1e3 is accepted), else InputError."""
    ok = isinstance(v, int | np.integer) and not isinstance(v, bool | np.bool_)
    if isinstance(v, float | np.floating) and np.isfinite(v) and float(v).is_integer():
        ok = True
    if not ok or v < low:
        raise InputError(f"{name}: expected an integer >= {low}; got {v!r}")
    return int(v)


STARTS = ("uniform", "pathfinder")


def _check(likelihood, prior, chains, draws, warmup, method, seed, max_depth,
           target_accept, start="uniform") -> None:
    if likelihood is None or not hasattr(likelihood, "mdp") or not hasattr(likelihood,
                                                                            "evaluate"):
        raise InputError(f"likelihood: expected a BoltzmannLikelihood; got "
                         f"{type(likelihood).__name__}")
    if prior is not None and not all(hasattr(prior, m) for m in ("params", "log_density")):
        raise InputError(f"prior: expected a prior object such as bayesirl.Normal(0, 5) or "
                         f"None; got {prior!r}")
    n = {k: _whole(k, v, low) for k, v, low in (("chains", chains, 1), ("draws", draws, 1),
                                                 ("warmup", warmup, 0), ("seed", seed, 0),
                                                 ("max_depth", max_depth, 1))}
    if method not in ("nuts", "random-walk"):
        raise InputError(f"method: expected 'nuts' or 'random-walk'; got {method!r}")
    if not isinstance(start, str) or start not in STARTS:
        raise InputError(f"start: expected one of {STARTS}; got {start!r}")
    if target_accept is not None:
        ok = isinstance(target_accept, int | float | np.floating) and not isinstance(
            target_accept, bool)
        if not ok or not 0.0 < float(target_accept) < 1.0:
            raise InputError(f"target_accept: expected a number in (0, 1) or None; got "
                             f"{target_accept!r}")
    n_params = len(likelihood.mdp.feature_names) + 1  # weights and perhaps the rationality
    check_sampling(n["chains"], n["draws"], n["warmup"], n_params)


def sample(
    likelihood: BoltzmannLikelihood,
    prior: Prior | None = None,
    *,
    chains: int = 4,
    draws: int = 1000,
    warmup: int = 1000,
    seed: int = 0,
    method: str = "nuts",
    progress: bool = True,
    rationality: float | LogNormal | None = None,
    pin: Mapping[str, float] | None = None,
    dense_mass: bool = False,
    target_accept: float | None = None,
    max_depth: int = 10,
    backend: Backend | None = None,
    checkpoint: str | Path | None = None,
    resume: bool = False,
    pooling: str | Pooling | None = None,
    evidence: Sequence[EvidenceTerm] = (),
    start: str = "uniform",
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
        One line per chain on a terminal (never when output is not a terminal); on a
        ``Cluster``, a line as each chain finishes.
    rationality : None, float or LogNormal
        Fixed, or sampled with this prior (then ``pin`` one weight); None: the likelihood's
        own (a number, or a prior given to ``BoltzmannLikelihood(rationality=)``).
    pin : dict, optional
        ``{feature name: value}`` weights held fixed (sets the scale when beta is sampled;
        its sign is an assumption you make).
    dense_mass : bool
        Adapt a dense rather than diagonal mass matrix.
    target_accept, max_depth
        NUTS settings (defaults 0.8 and 10).
    backend : Serial, Processes or Cluster, optional
        Where the chains run (:mod:`bayesirl.execution.backend`): ``Processes()`` (the
        default: ``min(chains, cpu count)`` worker processes; ``Processes(1)`` runs in this
        process), ``Serial()`` (this process) or ``Cluster("local" | address | client)``
        (one Dask task per chain; no checkpoint). The same seed gives the same draws on
        every backend.
    checkpoint : str or Path, optional
        File (``.npz``) that receives every chain's full sampler state every few seconds
        and when the run stops or ends; written atomically. Without ``resume`` an existing
        file is replaced by the new run's.
    resume : bool
        Continue from ``checkpoint`` (which must exist and come from a run with the same
        problem, prior, seed, chains and settings): the result is bit-identical to an
        uninterrupted run. A finished checkpoint returns its posterior at once.
    pooling : {"pooled", "separate", "partial"} or Pooling, optional
        How episodes of different demonstrators (``Demonstrations(..., demonstrators=)``)
        share a reward; default ``"pooled"``: one reward for every episode. ``"partial"``:
        each demonstrator's weights around a population mean with a sampled per-feature
        spread (see :class:`bayesirl.posterior.groups.Pooling`).
    evidence : sequence of evidence terms, optional
        Evidence beside the demonstrations: ``bayesirl.evidence.PartialTerm`` (episodes with
        unrecorded actions or states), ``ComparisonTerm`` (answers between episodes), each
        with a fixed judge rationality. Pooled only.
    start : {"uniform", "pathfinder"}
        Where each chain starts. ``"uniform"`` (the default): a point drawn uniformly on
        ``(-2, 2)`` per parameter, identity mass matrix. ``"pathfinder"``: from that point,
        one Pathfinder path (L-BFGS plus normal approximations, the best by ELBO; see
        docs/pathfinder.md) per chain; the chain starts at a draw from the best
        approximation with its covariance (or the diagonal) as the initial mass matrix, so
        a shorter ``warmup`` can reach the same diagnostics. Its density calls are counted
        in ``settings["adapted"][k]["n_evals"]``.

    Returns
    -------
    Posterior

    Raises
    ------
    bayesirl.Interrupted
        On SIGINT or SIGTERM: sampling stops within about a second, the state is saved to
        ``checkpoint`` (if given), and the exception carries ``.posterior`` with the draws
        so far (``complete=False``: chains still in warmup or not started are left out,
        ``settings["chains_kept"]`` lists the others, each cut to the shortest; zero draws
        if every chain is still in warmup) and ``.checkpoint``. The previous signal handlers are
        back in place when it is raised.
    InputError
        Bad arguments, or a checkpoint that is missing or belongs to another run.
    """
    _check(likelihood, prior, chains, draws, warmup, method, seed, max_depth, target_accept,
           start)
    chains, draws, warmup, seed = int(chains), int(draws), int(warmup), int(seed)
    where = backend_of(backend, Processes())
    where.check(checkpoint=checkpoint is not None or bool(resume))
    if resume and checkpoint is None:
        raise InputError("resume=True needs checkpoint=PATH, the file to resume from")
    model = make_model(likelihood, prior, rationality, pin, pooling, extra=evidence)
    settings = {"draws": int(draws), "warmup": int(warmup), "method": method,
                "dense_mass": bool(dense_mass), "target_accept": target_accept,
                "max_depth": int(max_depth)}
    if start != "uniform":  # absent for the default, so earlier runs' records still match
        settings["start"] = start
    seeds = np.random.SeedSequence(seed).spawn(int(chains))
    path = None if checkpoint is None else Path(checkpoint)
    run = ckpt.identity(model, settings, seed, chains) if path is not None else None
    saved = ckpt.load(path, run) if resume else [None] * int(chains)
    bar = ChainProgress(int(chains), int(draws) + int(warmup), enabled=progress)
    book = Book(path, run, saved, bar, CHECKPOINT_EVERY)
    job = ChainJob(pickle.dumps(model), seeds, settings, saved, book.on_message,
                   CHECKPOINT_EVERY if path is not None else None, bool(progress), bar.close)
    t0 = time.perf_counter()
    done = where.run_chains(job)
    return finish(model, done.records, settings, int(seed), time.perf_counter() - t0, book,
                  done.signum)
