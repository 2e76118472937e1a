"""Demonstrations sampled from the soft-optimal policy (for tests, demos and design)."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import ArrayLike

from bayesirl.errors import InputError
from bayesirl.model.demos import Demonstrations
from bayesirl.model.validate import distribution

if TYPE_CHECKING:
    from bayesirl.model.mdp import TabularMDP


def simulate(
    mdp: TabularMDP,
    weights: ArrayLike,
    *,
    episodes: int,
    length: int,
    rationality: float = 1.0,
    seed: int | np.random.Generator = 0,
    start: int | Sequence[float] | np.ndarray | None = None,
) -> Demonstrations:
    """Sample ``episodes`` episodes of ``length`` actions from the Boltzmann-rational policy.

    Parameters
    ----------
    mdp : TabularMDP
    weights : array ``(F,)``
    episodes, length : int
        With a finite horizon ``length`` may not exceed it.
    rationality : float
        The inverse temperature ``beta``.
    seed : int or numpy.random.Generator
    start : None, int or array ``(S,)``
        A fixed start state, a start distribution, or None for ``mdp.start`` (uniform when
        the model has none).

    Returns
    -------
    Demonstrations
        Each episode holds ``length + 1`` states.
    """
    if int(episodes) < 1 or int(length) < 1:
        raise InputError(f"simulate: episodes and length must be >= 1; got {episodes}, {length}")
    if mdp.horizon is not None and length > mdp.horizon:
        raise InputError(f"simulate: length {length} exceeds the horizon {mdp.horizon}")
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
    policy = mdp.soft_policy(weights, rationality)
    if policy.ndim == 2:
        policy = policy[None]
    starts = _start_states(mdp, start, int(episodes), rng)
    uniforms = rng.random((int(episodes), int(length), 2))
    dyn = mdp.dynamics
    from bayesirl.kernels import sample_episodes  # numba loads on first use

    states, actions = sample_episodes(
        dyn.indptr, dyn.indices, dyn.data, np.ascontiguousarray(policy), starts, int(length),
        uniforms,
    )
    return Demonstrations.from_arrays(list(states), list(actions))


def _start_states(mdp, start, n: int, rng: np.random.Generator) -> np.ndarray:
    if start is not None and np.ndim(start) == 0:
        s = int(start)
        if not 0 <= s < mdp.n_states:
            raise InputError(f"simulate: start state {s} is not in 0..{mdp.n_states - 1}")
        return np.full(n, s, dtype=np.int64)
    if start is not None:
        dist = distribution(start, mdp.n_states, "simulate: start")
    elif mdp.start is not None:
        dist = mdp.start
    else:
        dist = np.full(mdp.n_states, 1.0 / mdp.n_states)
    return rng.choice(mdp.n_states, size=n, p=dist).astype(np.int64)
