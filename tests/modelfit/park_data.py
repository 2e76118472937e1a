"""Data sets simulated from the park scenario (invented numbers) by a known demonstrator."""

from __future__ import annotations

import numpy as np

import bayesirl as bi
from bayesirl.kernels import sample_episodes
from bayesirl.likelihood.pointwise import log_policy

EPISODES, LENGTH = 20, 12


def without(mdp, name: str) -> bi.TabularMDP:
    keep = [i for i, n in enumerate(mdp.feature_names) if n != name]
    return bi.TabularMDP(mdp.transitions, mdp.features[:, keep], discount=mdp.discount,
                         feature_names=[mdp.feature_names[i] for i in keep],
                         grid_shape=mdp.grid_shape)


def simulate_from(mdp, q: str, w, seed: int) -> bi.Demonstrations:
    """Episodes from the park's start cell under a soft or optimal Boltzmann demonstrator."""
    rng = np.random.default_rng(seed)
    policy = np.exp(log_policy(mdp, q, np.asarray(w, float), 1.0)[0])[None]
    dyn = mdp.dynamics
    states, actions = sample_episodes(dyn.indptr, dyn.indices, dyn.data,
                                      np.ascontiguousarray(policy),
                                      np.zeros(EPISODES, dtype=np.int64), LENGTH,
                                      rng.random((EPISODES, LENGTH, 2)))
    return bi.Demonstrations.from_arrays(list(states), list(actions))
