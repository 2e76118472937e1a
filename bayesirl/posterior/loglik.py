"""Pointwise log-likelihood of a posterior's draws: per episode (and per step), as ArviZ's
``log_likelihood`` group holds it.

Each draw's quantities go to the evidence model's :meth:`~bayesirl.evidence.Evidence.pointwise`,
so every evidence term that can split its log density by episode supplies its share.
Costs one solve per draw (per demonstrator); the sampler's likelihoods and their warm starts
are not touched.
"""

from __future__ import annotations

import numpy as np

from bayesirl import arviz_compat
from bayesirl.evidence import weights_name

# Variable names in the log_likelihood group. ``episodes`` is the one ArviZ reads by default
# (the file stores only it unless per-step values were asked for: those are chains x draws x
# steps numbers, easily hundreds of MB).
EPISODES, STEPS = "episodes", "steps"


def draw_quantities(posterior, c: int, d: int) -> dict:
    """The evidence model's quantities at draw ``d`` of chain ``c``."""
    beta = (posterior.model.fixed_rationality if posterior.rationality is None
            else float(posterior.rationality[c, d]))
    if posterior.groups is None:  # with any quantity further evidence samples (a judge's)
        return {"weights": posterior.weights[c, d], "rationality": beta,
                **{n: float(x[c, d]) for n, x in getattr(posterior, "extra_draws", {}).items()}}
    w = posterior.groups["demonstrator_weights"][c, d]
    out = {weights_name(i): w[i] for i in range(w.shape[0])}
    out["rationality"] = beta
    return out


def pointwise_log_likelihood(posterior, steps: bool = False) -> dict[str, np.ndarray]:
    """``{"episodes": (C, D, E)}`` and, with ``steps``, ``{"steps": (C, D, N)}``."""
    demos = posterior.model.likelihood.demos
    evidence = posterior.model.evidence
    c, d = posterior.n_chains, posterior.n_draws
    episodes = np.empty((c, d, demos.n_episodes))
    per_step = np.empty((c, d, demos.n_steps)) if steps else None
    for i in range(c):
        for j in range(d):
            ep, st = evidence.pointwise(draw_quantities(posterior, i, j), demos.lengths)
            episodes[i, j] = ep
            if per_step is not None:
                per_step[i, j] = st
    out = {EPISODES: episodes}
    if per_step is not None:
        out[STEPS] = per_step
    return out


def add_log_likelihood(loglik: dict | None, groups: dict, dims: dict) -> None:
    """Put the log_likelihood group into a :func:`~bayesirl.arviz_compat.from_groups` call."""
    if not loglik:
        return
    groups["log_likelihood"] = dict(loglik)
    dims[EPISODES] = ["episode"]
    if STEPS in loglik:
        dims[STEPS] = ["demo_step"]


def read_log_likelihood(data) -> dict | None:
    """The log_likelihood group of a loaded file, or None (files before it existed)."""
    group = arviz_compat.group(data, "log_likelihood")
    if group is None:
        return None
    return {k: np.asarray(group[k].values) for k in (EPISODES, STEPS) if k in group}
