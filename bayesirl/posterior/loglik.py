"""Pointwise log-likelihood of a posterior's draws: per episode (and per step) and per
comparison answer, as ArviZ's ``log_likelihood`` group holds it.

Each draw's quantities go to the evidence model's :meth:`~bayesirl.evidence.Evidence.pointwise`,
so every evidence term that can split its log density by episode supplies its share.
Costs one solve per draw (per demonstrator); the terms' warm starts are restored afterwards,
so a model's later evaluations do not depend on whether its pointwise values were taken.
"""

from __future__ import annotations

import numpy as np

from bayesirl import arviz_compat
from bayesirl.errors import InputError
from bayesirl.evidence import weights_name

# Variable names in the log_likelihood group. ``episodes`` holds every episode: the
# demonstrations (observed_data's episodes, in order), then the episodes with unrecorded parts
# (each partial-episode term's, in term order). ``comparisons`` holds one value per answer of
# the comparison terms: observations of another kind, so PSIS-LOO reads one variable or the
# other, never both together (bayesirl.modelfit). ``steps`` is stored only when asked for:
# chains x draws x steps numbers, easily hundreds of MB.
EPISODES, STEPS, COMPARISONS = "episodes", "steps", "comparisons"
# (Files before the partial episodes named the steps' dimension demo_step; read by name.)
DIMS = {EPISODES: "episode", STEPS: "episode_step", COMPARISONS: "comparison"}


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
    """``{"episodes": (C, D, E)}``, with comparisons ``"comparisons": (C, D, K)`` and, with
    ``steps``, ``"steps": (C, D, N)``.

    Raises InputError for ``steps`` when an episode has a gap of unrecorded states (its
    hidden states tie its steps together, so they are not observations of their own).
    """
    demos = posterior.model.likelihood.demos
    evidence = posterior.model.evidence
    c, d = posterior.n_chains, posterior.n_draws
    parts: dict[str, list] = {}
    snapshot = evidence.warm_start()
    try:
        for i in range(c):
            for j in range(d):
                split = evidence.pointwise(draw_quantities(posterior, i, j), demos.lengths)
                if steps and split.step is None:
                    raise InputError("log-likelihood per step: an episode has a gap of "
                                     "unrecorded states, whose steps are not observations of "
                                     "their own; ask for per-episode values only")
                for name, x in ((EPISODES, split.episode), (COMPARISONS, split.answers),
                                (STEPS, split.step if steps else None)):
                    if x is not None:
                        parts.setdefault(name, []).append(x)
    finally:
        evidence.restore_warm_start(snapshot)
    if not parts:  # no draws
        return {EPISODES: np.empty((c, d, demos.n_episodes))}
    return {name: np.asarray(x).reshape(c, d, -1) for name, x in parts.items()}


def observation_counts(model) -> dict[str, int]:
    """How many values each variable has per draw: episodes (demonstrations and episodes with
    unrecorded parts) and, with comparison terms, answers."""
    out = {EPISODES: model.likelihood.demos.n_episodes}
    for term in getattr(model, "extra", ()):
        if hasattr(term, "answer_log_probabilities"):  # a comparison term
            out[COMPARISONS] = out.get(COMPARISONS, 0) + len(term)
        else:  # a partial-episode term
            out[EPISODES] += term.episodes.n_episodes
    return out


def is_current(loglik: dict | None, model) -> bool:
    """Whether ``loglik`` covers every observation of ``model`` (files written before the
    episodes with unrecorded parts and the comparisons had pointwise values do not)."""
    if not loglik:
        return False
    counts = observation_counts(model)
    return all(name in loglik and loglik[name].shape[-1] == n for name, n in counts.items())


def add_log_likelihood(loglik: dict | None, groups: dict, dims: dict) -> None:
    """Put the log_likelihood group into a :func:`~bayesirl.arviz_compat.from_groups` call."""
    if not loglik:
        return
    groups["log_likelihood"] = dict(loglik)
    dims.update({name: [DIMS[name]] for name in loglik})


def read_log_likelihood(data) -> dict | None:
    """The log_likelihood group of a loaded file, or None (files before it existed)."""
    group = arviz_compat.group(data, "log_likelihood")
    if group is None:
        return None
    return {k: np.asarray(group[k].values) for k in DIMS if k in group}
