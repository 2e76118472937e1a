"""``sample_cut``: the reward posterior with the dynamics' uncertainty carried in.

The "cut" posterior: dynamics are drawn from their posterior given the logged transitions
alone, the reward posterior is sampled under each draw, and the runs are pooled. The reward
evidence (the demonstrators' choices) does not update the dynamics. docs/dynamics.md gives
the assumptions and why the full joint posterior is not sampled.

Seeds: ``SeedSequence(seed)`` has two children, one for the dynamics draws and one whose
children give each run's chain seed (run ``d`` gets child ``d``; the plug-in fit child
``D``). The dynamics are drawn in this process before any chain starts, so the same seed
gives the same draws on every backend.
"""

from __future__ import annotations

import time
from typing import TYPE_CHECKING

import numpy as np

from bayesirl.errors import InputError
from bayesirl.execution.run import sample
from bayesirl.posterior.dynamics import CutPosterior

if TYPE_CHECKING:
    import scipy.sparse as sp

    from bayesirl.likelihood import BoltzmannLikelihood
    from bayesirl.model.transitions import DynamicsPosterior

__all__ = ["draw_dynamics", "sample_cut", "under"]


def draw_dynamics(dynamics: DynamicsPosterior, n: int, seed: int) -> list[sp.csr_matrix]:
    """The ``n`` dynamics draws of a cut fit with ``seed`` (``(S*A, S)`` CSR each)."""
    rng = np.random.default_rng(np.random.SeedSequence(int(seed)).spawn(2)[0])
    return [dynamics.draw(rng) for _ in range(int(n))]


def run_seeds(n: int, seed: int) -> list[int]:
    """The ``sample`` seed of each of the ``n`` runs, then of the plug-in fit."""
    children = np.random.SeedSequence(int(seed)).spawn(2)[1].spawn(int(n) + 1)
    return [int(c.generate_state(1)[0]) for c in children]


def under(likelihood: BoltzmannLikelihood, transitions) -> BoltzmannLikelihood:
    """The same likelihood (demonstrations, rationality, solver settings) under other
    transitions."""
    from bayesirl.likelihood import BoltzmannLikelihood

    mdp = likelihood.mdp
    new = type(mdp)(transitions, mdp.features, discount=mdp.discount, horizon=mdp.horizon,
                    start=mdp.start, feature_names=mdp.feature_names,
                    grid_shape=mdp.grid_shape)
    beta = (likelihood.rationality_prior if likelihood.rationality_prior is not None
            else likelihood.rationality)
    return BoltzmannLikelihood(
        new, likelihood.demos, rationality=beta, q_function=likelihood.q_function,
        tol=likelihood.tol, gradient_rtol=likelihood.gradient_rtol,
        max_newton_steps=likelihood.max_newton_steps,
        max_linear_iterations=likelihood.max_linear_iterations)


def sample_cut(
    likelihood: BoltzmannLikelihood,
    prior=None,
    *,
    dynamics: DynamicsPosterior,
    dynamics_draws: int = 8,
    plug_in: bool = True,
    seed: int = 0,
    **options,
) -> CutPosterior:
    """Sample the cut posterior: the reward posterior under each of ``dynamics_draws``
    draws of the dynamics, pooled.

    Parameters
    ----------
    likelihood : BoltzmannLikelihood
        Its demonstrations, rationality and solver settings are used under every draw (its
        own transitions are not).
    prior : the weights' prior, as for :func:`bayesirl.execution.sample`
    dynamics : DynamicsPosterior
        The dynamics' posterior given the logged transitions
        (:class:`bayesirl.model.transitions.DynamicsPosterior`).
    dynamics_draws : int
        How many dynamics draws (at least 2; the variance split needs several, and its
        between-draw part is itself estimated from them).
    plug_in : bool
        Also fit under the posterior-mean dynamics: the intervals without dynamics
        uncertainty, shown beside the pooled ones.
    seed : int
        See the module docstring.
    **options
        Passed to :func:`bayesirl.execution.sample` for every run (``chains``, ``draws``,
        ``warmup``, ``backend``, ``rationality``, ``pin``, ``dense_mass``, ...). Each run's
        chains are tasks on the backend; the runs go one after another. No ``checkpoint``,
        further ``evidence`` terms or ``pooling`` other than pooled yet.

    Returns
    -------
    CutPosterior
    """
    for key in ("checkpoint", "resume", "evidence"):
        if options.get(key):
            raise InputError(f"sample_cut: {key}= is not supported with uncertain dynamics yet")
    pooling = options.get("pooling")
    if getattr(pooling, "kind", pooling) not in (None, "pooled"):
        raise InputError("sample_cut: only pooled demonstrators with uncertain dynamics yet")
    n = int(dynamics_draws)
    if n < 2:
        raise InputError(f"dynamics_draws: expected an integer >= 2; got {dynamics_draws!r}")
    t0 = time.perf_counter()
    seeds = run_seeds(n, seed)
    runs = [sample(under(likelihood, p), prior, seed=seeds[d], **options)
            for d, p in enumerate(draw_dynamics(dynamics, n, seed))]
    plug = None
    if plug_in:
        plug = sample(under(likelihood, dynamics.mean()), prior, seed=seeds[n], **options)
    return CutPosterior(runs, plug, dynamics, int(seed), time.perf_counter() - t0)
