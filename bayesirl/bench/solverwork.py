"""Solver work per gradient: Newton steps and Krylov mat-vecs of the value and adjoint solves.

Read from the likelihood's own cumulative counters (``lik.work``, see
``bayesirl.likelihood.soft.new_work``): the difference over a walk of gradients, per gradient.
Problems small enough for the dense Newton path count one "mat-vec" per Newton step and no
adjoint solves.
"""

from __future__ import annotations

import time

import numpy as np

from bayesirl.errors import InputError


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
        ``gradients``, ``seconds_per_gradient`` (median), ``source`` ("lik.work"),
        per-gradient means of the numeric fields of ``lik.work`` (``newton_steps``,
        ``value_matvecs``, ``adjoint_solves``, ``adjoint_matvecs``, ``cold_retries``), and
        ``dense`` (True when the problem takes the dense Newton path, no Krylov solve).
    """
    rng = np.random.default_rng(seed)
    w = np.array(centre, dtype=float)
    lik.evaluate(w)
    steps = w + np.cumsum(scale * rng.standard_normal((points, w.size)), axis=0)
    before = _numbers(getattr(lik, "work", None))
    if before is None:
        raise InputError("solver profile: the likelihood offers no work counters (lik.work)")
    times = [_timed(lik, x) for x in steps]
    after = _numbers(lik.work)
    per = {k: (after[k] - before.get(k, 0.0)) / points for k in after}
    dense = lik.mdp.dynamics.dense is not None
    return {"gradients": points, "seconds_per_gradient": float(np.median(times)),
            "source": "lik.work", "dense": dense, **per}


def _timed(lik, w) -> float:
    t0 = time.perf_counter()
    lik.evaluate(w)
    return time.perf_counter() - t0
