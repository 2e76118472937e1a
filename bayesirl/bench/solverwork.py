"""Solver work per gradient: Newton steps and Krylov mat-vecs of the value and adjoint solves.

The likelihood has no counters of its own (yet): when it offers ``lik.work`` the profile
reads that, otherwise it counts the calls of ``solve_discounted`` made by the soft Newton
solver and by the likelihood's adjoint, by replacing the name in those two modules for the
duration of the profile only. Each call returns ``(x, mat-vecs)``; its ``what=`` says which
solve it was. Problems small enough for the dense Newton path make no such calls.
"""

from __future__ import annotations

import time
from contextlib import contextmanager

import numpy as np

import bayesirl.likelihood.soft as lik_soft
import bayesirl.solver.soft as solver_soft

_NEWTON, _ADJOINT = "soft Newton step", "likelihood adjoint"


@contextmanager
def counting_solves():
    """Count ``solve_discounted`` calls and mat-vecs per ``what=``, restoring on exit.

    Yields
    ------
    dict
        ``newton_steps``, ``value_matvecs``, ``adjoint_solves``, ``adjoint_matvecs``,
        updated as the solves run.
    """
    counts = {"newton_steps": 0, "value_matvecs": 0, "adjoint_solves": 0, "adjoint_matvecs": 0}
    original_solver, original_lik = solver_soft.solve_discounted, lik_soft.solve_discounted

    def counted(original):
        def solve(*args, **kwargs):
            x, used = original(*args, **kwargs)
            what = kwargs.get("what")
            if what == _NEWTON:
                counts["newton_steps"] += 1
                counts["value_matvecs"] += int(used)
            elif what == _ADJOINT:
                counts["adjoint_solves"] += 1
                counts["adjoint_matvecs"] += int(used)
            return x, used
        return solve

    solver_soft.solve_discounted = counted(original_solver)
    lik_soft.solve_discounted = counted(original_lik)
    try:
        yield counts
    finally:
        solver_soft.solve_discounted = original_solver
        lik_soft.solve_discounted = original_lik


def _numbers(work) -> dict | None:
    """Numeric fields of a counter object (mapping, named tuple, dataclass or plain object);
    None when it has none (then the profile counts by itself)."""
    if work is None:
        return None
    if hasattr(work, "_asdict"):
        work = work._asdict()
    elif not isinstance(work, dict):
        try:
            work = vars(work)
        except TypeError:
            return None
    out = {k: float(v) for k, v in work.items()
           if isinstance(v, (int, float, np.number)) and not isinstance(v, bool)}
    return out or None


def profile(lik, centre: np.ndarray, scale: np.ndarray | float, points: int = 20,
            seed: int = 0) -> dict:
    """Solver work per gradient along a random walk of ``points`` steps around ``centre``.

    Parameters
    ----------
    lik : BoltzmannLikelihood
        Warmed up by one evaluation at ``centre`` before counting starts.
    centre : array (F,)
        Start of the walk (e.g. the posterior mean).
    scale : array (F,) or float
        Standard deviation of each step (e.g. a tenth of the posterior sd), like the moves
        between a sampler's consecutive gradients.
    points, seed : int
        Number of counted gradients and the walk's seed.

    Returns
    -------
    dict
        ``gradients``, ``seconds_per_gradient`` (median), ``source`` ("lik.work" or
        "wrapped solve_discounted"), per-gradient means of the counters (when wrapping:
        ``newton_steps``, ``value_matvecs``, ``adjoint_solves`` and ``adjoint_matvecs``;
        from ``lik.work``: its numeric fields), and ``dense`` (True when the problem takes
        the dense Newton path and no Krylov solve is made).
    """
    rng = np.random.default_rng(seed)
    w = np.array(centre, dtype=float)
    lik.evaluate(w)
    steps = w + np.cumsum(scale * rng.standard_normal((points, w.size)), axis=0)
    before = _numbers(getattr(lik, "work", None))
    times = []
    if before is not None:
        for x in steps:
            times.append(_timed(lik, x))
        after = _numbers(lik.work)
        totals = {k: after[k] - before.get(k, 0.0) for k in after}
        source = "lik.work"
    else:
        with counting_solves() as totals:
            for x in steps:
                times.append(_timed(lik, x))
        source = "wrapped solve_discounted"
    per = {k: v / points for k, v in totals.items()}
    dense = lik.mdp.dynamics.dense is not None
    return {"gradients": points, "seconds_per_gradient": float(np.median(times)),
            "source": source, "dense": dense, **per}


def _timed(lik, w) -> float:
    t0 = time.perf_counter()
    lik.evaluate(w)
    return time.perf_counter() - t0
