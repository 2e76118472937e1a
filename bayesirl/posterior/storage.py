"""Posterior files: the problem (MDP, demonstrations) as constant_data, written atomically."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import scipy.sparse as sp

from bayesirl import arviz_compat
from bayesirl.errors import InputError
from bayesirl.evidence.records import term_from_record, term_record
from bayesirl.files import atomic_target
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.model import Demonstrations, TabularMDP
from bayesirl.posterior.groups import Pooling, make_model
from bayesirl.posterior.model import PosteriorModel
from bayesirl.priors import from_json

FORMAT = "bayesirl-posterior/1"


def problem_arrays(model: PosteriorModel) -> tuple[dict, dict]:
    """Arrays describing the MDP and the demonstrations, with their dimension names."""
    lik = model.likelihood
    mdp, demos = lik.mdp, lik.demos
    p = mdp.transitions
    states = [s for s, _ in demos.episodes]
    actions = [a for _, a in demos.episodes]
    arrays = {
        "transition_indptr": np.asarray(p.indptr, dtype=np.int64),
        "transition_indices": np.asarray(p.indices, dtype=np.int64),
        "transition_data": np.asarray(p.data, dtype=np.float64),
        "features": np.asarray(mdp.features),
        "demo_states": np.concatenate(states).astype(np.int64),
        "demo_actions": np.concatenate(actions).astype(np.int64),
        "demo_state_counts": np.asarray([len(s) for s in states], dtype=np.int64),
        "demo_action_counts": np.asarray([len(a) for a in actions], dtype=np.int64),
    }
    fdims = ["state", "feature"] if mdp.state_features else ["state", "action", "feature"]
    dims = {
        "transition_indptr": ["transition_row_ptr"],
        "transition_indices": ["transition_nnz"],
        "transition_data": ["transition_nnz"],
        "features": fdims,
        "demo_states": ["demo_state_pos"],
        "demo_actions": ["demo_step"],
        "demo_state_counts": ["episode"],
        "demo_action_counts": ["episode"],
    }
    if mdp.start is not None:
        arrays["start"] = np.asarray(mdp.start)
        dims["start"] = ["state"]
    if demos.demonstrators is not None:
        arrays["demo_demonstrators"] = np.asarray(demos.demonstrators, dtype=str)
        dims["demo_demonstrators"] = ["episode"]
    for i, term in enumerate(getattr(model, "extra", ())):  # evidence beside the demos
        for name, a in term_record(term)[0].items():
            arrays[f"evidence{i}_{name}"] = a
            dims[f"evidence{i}_{name}"] = [f"evidence{i}_{name}_{j}" for j in range(a.ndim)]
    return arrays, dims


def problem_meta(model: PosteriorModel) -> dict:
    """Scalars of the problem (JSON-ready)."""
    lik = model.likelihood
    mdp = lik.mdp
    return {"n_states": mdp.n_states, "n_actions": mdp.n_actions, "discount": mdp.discount,
            "horizon": mdp.horizon, "feature_names": list(mdp.feature_names), "q": lik.q_function,
            "tol": lik.tol, "gradient_rtol": getattr(lik, "gradient_rtol", None),
            "max_newton_steps": getattr(lik, "max_newton_steps", None),
            "max_linear_iterations": getattr(lik, "max_linear_iterations", None),
            "likelihood_rationality": lik.rationality,
            "grid_shape": list(mdp.grid_shape) if mdp.grid_shape else None,
            # absent without further evidence, so older runs' fingerprints stay the same
            **({"evidence": [term_record(t)[1] for t in model.extra]}
               if getattr(model, "extra", ()) else {})}


# The demonstrations are the observations (ArviZ's observed_data); the MDP is constant_data.
OBSERVED = ("demo_states", "demo_actions", "demo_state_counts", "demo_action_counts",
            "demo_demonstrators")


def split_observed(arrays: dict) -> tuple[dict, dict]:
    """``(constant_data, observed_data)`` parts of :func:`problem_arrays`' arrays."""
    return ({k: v for k, v in arrays.items() if k not in OBSERVED},
            {k: v for k, v in arrays.items() if k in OBSERVED})


def rebuild_model(const, meta: dict, observed=None) -> PosteriorModel:
    """Inverse of :func:`problem_arrays` + :func:`problem_meta`.

    ``observed`` is the observed_data group; files of release 0.1.0 kept the
    demonstrations in constant_data, which is read when ``observed`` lacks them.
    """
    demo = observed if observed is not None and "demo_states" in observed else const
    if meta.get("format") != FORMAT:
        raise InputError(f"posterior file: unknown format {meta.get('format')!r}; "
                         f"expected {FORMAT!r}")
    pm = meta["problem"]
    n_s, n_a = pm["n_states"], pm["n_actions"]
    p = sp.csr_matrix((const["transition_data"].values, const["transition_indices"].values,
                       const["transition_indptr"].values), shape=(n_s * n_a, n_s))
    start = const["start"].values if "start" in const else None
    mdp = TabularMDP(p, const["features"].values, discount=pm["discount"],
                     horizon=pm["horizon"], start=start, feature_names=pm["feature_names"],
                     grid_shape=pm.get("grid_shape"))
    s_cut = np.cumsum(demo["demo_state_counts"].values)[:-1]
    a_cut = np.cumsum(demo["demo_action_counts"].values)[:-1]
    who = (None if "demo_demonstrators" not in demo
           else [str(x) for x in demo["demo_demonstrators"].values])
    demos = Demonstrations.from_arrays(np.split(demo["demo_states"].values, s_cut),
                                       np.split(demo["demo_actions"].values, a_cut), who)
    lik = BoltzmannLikelihood(mdp, demos, rationality=pm["likelihood_rationality"],
                              q_function=pm["q"],
                              tol=pm["tol"], **_solver_settings(pm))
    spec = meta["model"]
    pooling = Pooling.from_spec(spec["pooling"]) if "pooling" in spec else None
    extra = []
    for i, term_meta in enumerate(pm.get("evidence", [])):
        prefix = f"evidence{i}_"
        arrays = {k[len(prefix):]: const[k].values for k in const if k.startswith(prefix)}
        extra.append(term_from_record(mdp, arrays, term_meta,
                                      make_prior=lambda d: from_json(json.dumps(d))))
    return make_model(lik, pooling=pooling, extra=extra, **PosteriorModel.parse_spec(spec))


def _solver_settings(pm: dict) -> dict:
    # Absent from older files and from likelihood wrappers without the setting: the default.
    keys = ("gradient_rtol", "max_newton_steps", "max_linear_iterations")
    return {k: pm[k] for k in keys if pm.get(k) is not None}


def write_netcdf(idata, path: Path) -> Path:
    """Write ``idata`` into a temporary file beside ``path``, then rename."""
    with atomic_target(path) as tmp:
        arviz_compat.to_netcdf(idata, tmp)
    return Path(path)
