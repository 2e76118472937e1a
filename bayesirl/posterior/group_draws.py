"""Draws of several demonstrators' weights: assembling, naming, ArviZ variables, summary rows.

Kept apart from :mod:`bayesirl.posterior.posterior` so the one-demonstrator object reads as
before; every function is a no-op (or empty) when ``groups`` is None.
"""

from __future__ import annotations

import numpy as np


def group_draws(model, thetas: np.ndarray) -> dict:
    """``thetas`` ``(C, D, dim)`` of a GroupModel -> the ``groups`` dict of a Posterior."""
    c, d, _ = thetas.shape
    g, f = model.n_groups, len(model.feature_names)
    weights = np.empty((c, d, g, f))
    spread = np.empty((c, d, f)) if model.partial else None
    own = np.empty((c, d, g)) if getattr(model, "_rat", None) is not None else None
    for i in range(c):
        for j in range(d):
            q = model.draw(thetas[i, j])
            weights[i, j] = q["weights"]
            if spread is not None:
                spread[i, j] = q["spread"]
            if own is not None:
                own[i, j] = q["rationalities"]
    out = {"demonstrators": list(model.group_names), "demonstrator_weights": weights,
           "pooling": model.pooling.kind}
    if spread is not None:
        out["spread"] = spread
    if own is not None:
        out["demonstrator_rationality"] = own
    return out


def group_names(groups: dict | None, features) -> tuple[str, ...]:
    """Flattened names of the group variables for ``features`` (ArviZ order)."""
    if groups is None:
        return ()
    spread = tuple(f"spread[{n}]" for n in features) if "spread" in groups else ()
    own = (tuple(f"rationality[{who}]" for who in groups["demonstrators"])
           if "demonstrator_rationality" in groups else ())
    return (spread + tuple(f"{n}[{who}]" for who in groups["demonstrators"] for n in features)
            + own)


def group_columns(groups: dict | None) -> list[np.ndarray]:
    """``(C, D)`` series in the order of :func:`group_names` over all features."""
    if groups is None:
        return []
    cols = []
    if "spread" in groups:
        cols += [groups["spread"][..., i] for i in range(groups["spread"].shape[-1])]
    w = groups["demonstrator_weights"]
    cols += [w[..., k, i] for k in range(w.shape[2]) for i in range(w.shape[3])]
    if "demonstrator_rationality" in groups:
        r = groups["demonstrator_rationality"]
        cols += [r[..., k] for k in range(r.shape[2])]
    return cols


def group_heading(groups: dict | None) -> list[str]:
    """A line saying what the first weight rows are, for the summary table."""
    if groups is None:
        return []
    n = len(groups["demonstrators"])
    if groups["pooling"] == "partial":
        return [f"(partial pooling of {n} demonstrators: weight rows are the population mean,"
                " spread[.] its per-feature spread, name[who] each demonstrator's weights)"]
    return [f"(separate rewards for {n} demonstrators: weight rows are the mean of their "
            "weights, name[who] each demonstrator's weights)"]


def add_groups(groups: dict | None, post: dict, dims: dict, coords: dict) -> None:
    """Add the group variables to an ``az.from_dict`` call's arguments."""
    if groups is None:
        return
    if "spread" in groups:
        post["spread"] = groups["spread"]
        dims["spread"] = ["feature"]
    post["demonstrator_weights"] = groups["demonstrator_weights"]
    dims["demonstrator_weights"] = ["demonstrator", "feature"]
    if "demonstrator_rationality" in groups:
        post["demonstrator_rationality"] = groups["demonstrator_rationality"]
        dims["demonstrator_rationality"] = ["demonstrator"]
    coords["demonstrator"] = list(groups["demonstrators"])


def read_groups(post) -> dict | None:
    """Inverse of :func:`add_groups` on a loaded ``idata.posterior``."""
    if "demonstrator_weights" not in post:
        return None
    out = {"demonstrators": [str(x) for x in post["demonstrator"].values],
           "demonstrator_weights": post["demonstrator_weights"].values,
           "pooling": "partial" if "spread" in post else "separate"}
    if "spread" in post:
        out["spread"] = post["spread"].values
    if "demonstrator_rationality" in post:
        out["demonstrator_rationality"] = post["demonstrator_rationality"].values
    return out
