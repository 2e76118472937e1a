"""Write a problem file (``[arrays]`` form, arrays in a sibling ``.npz``) from Python objects."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np

from bayesirl.files import atomic_target, write_text
from bayesirl.priors import LogNormal


def toml_value(v) -> str:
    """One TOML value: numbers, strings, booleans, lists and inline tables."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int | np.integer):
        return str(int(v))
    if isinstance(v, float | np.floating):
        x = float(v)
        return repr(x) if math.isfinite(x) else ("nan" if x != x else ("inf" if x > 0 else "-inf"))
    if isinstance(v, str):
        return json.dumps(v)  # a JSON string is a valid TOML basic string
    if isinstance(v, np.ndarray):
        return toml_value(v.tolist())
    if isinstance(v, list | tuple):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{json.dumps(str(k))} = {toml_value(x)}"
                                for k, x in v.items()) + " }"
    raise TypeError(f"no TOML form for {type(v).__name__}")


def toml_table(name: str, values: dict) -> str:
    """``[name]`` followed by ``key = value`` lines (None values are left out)."""
    lines = [f"[{name}]"] + [f"{k} = {toml_value(v)}" for k, v in values.items() if v is not None]
    return "\n".join(lines) + "\n"


def _prior_fields(prior) -> dict:
    fields = {k: (np.asarray(v).tolist()) for k, v in prior.__dict__.items()}
    return {"kind": prior.kind, **fields}


def write_problem(path, mdp, *, action_names=None, prior=None, rationality=1.0, pin=None,
                  q_function: str = "soft", sampler: dict | None = None,
                  title: str = "") -> Path:
    """Write ``mdp`` and the fitting settings as a problem file that reads back identically.

    Parameters
    ----------
    path : str or Path
        The ``.toml`` file; the arrays go to the same name with suffix ``.npz``.
    mdp : TabularMDP
    action_names : sequence of str, optional
    prior : Normal, Laplace or Uniform, optional
    rationality : float or LogNormal
    pin : dict, optional
    q_function : {"soft", "optimal"}
    sampler : dict, optional
        ``chains``, ``draws``, ``warmup``, ``seed``, ``method``, ...
    title : str

    Returns
    -------
    Path
    """
    path = Path(path)
    npz = path.with_suffix(".npz")
    p = mdp.transitions
    arrays = {"transitions_data": p.data, "transitions_indices": p.indices.astype(np.int64),
              "transitions_indptr": p.indptr.astype(np.int64),
              "transitions_n_states": np.int64(mdp.n_states), "features": mdp.features}
    if mdp.start is not None:
        arrays["start"] = mdp.start
    with atomic_target(npz) as tmp, open(tmp, "wb") as fh:
        np.savez(fh, **arrays)
    parts = [f"title = {toml_value(title)}\n"] if title else []
    parts.append(toml_table("model", {"discount": float(mdp.discount), "horizon": mdp.horizon,
                                      "q_function": q_function}))
    parts.append(toml_table("arrays", {
        "npz": npz.name, "feature_names": list(mdp.feature_names),
        "actions": list(action_names) if action_names else None,
        "grid": list(mdp.grid_shape) if mdp.grid_shape else None}))
    if prior is not None:
        parts.append(toml_table("prior", _prior_fields(prior)))
    if isinstance(rationality, LogNormal):
        rat = {"log_mean": float(rationality.mu), "log_sd": float(rationality.sigma),
               "pin": dict(pin or {})}
    else:
        rat = {"value": float(rationality), "pin": dict(pin) if pin else None}
    parts.append(toml_table("rationality", rat))
    if sampler:
        parts.append(toml_table("sampler", sampler))
    return write_text(path, "\n".join(parts))
