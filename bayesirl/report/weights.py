"""Per-feature table and weight-space directions: what the data determine and what they do not."""

from __future__ import annotations

import numpy as np

from bayesirl import arviz_compat as arviz
from bayesirl.report import combinations, verdicts


def sign_word(lo: float, hi: float) -> str:
    """Whether the credible interval settles the sign of a weight.

    Contraction is measured against the prior, so with a broad prior a weight can be "pinned
    down" while its interval still straddles zero; the sign says what a reader usually wants
    to know first (is this feature liked or avoided?).
    """
    if lo > 0:
        return "positive"
    if hi < 0:
        return "negative"
    return "zero" if lo == hi == 0 else "not settled"


def flat_draws(posterior) -> np.ndarray:
    """Weights as ``(chains * draws, F)``."""
    return posterior.weights.reshape(-1, posterior.weights.shape[-1])


def prior_variance(posterior, prior=None) -> np.ndarray:
    """Prior variance of each weight (0 for pinned weights)."""
    prior = posterior.model.prior if prior is None else prior
    var = np.asarray(prior.variance(len(posterior.feature_names)), dtype=float).copy()
    for name in posterior.model.pin:
        var[posterior.feature_names.index(name)] = 0.0
    return var


def weights_table(posterior, level: float = 0.9, prior=None, truth=None,
                  tolerance: float | None = None) -> list[dict]:
    """One row per feature: mean, sd, median, intervals, contraction, verdict, z-score.

    The verdict is read from the interval (:func:`bayesirl.report.verdicts.value_verdict`);
    :func:`mark_groups` later marks the weights the data determine only in combination.
    Contraction ``1 - Var_post / Var_prior`` is a column, not the verdict.
    """
    draws = flat_draws(posterior)
    var_prior = prior_variance(posterior, prior)
    lo, hi = 0.5 * (1 - level), 0.5 * (1 + level)
    rows = []
    for i, name in enumerate(posterior.feature_names):
        x = draws[:, i]
        pinned = name in posterior.model.pin
        sd = float(x.std(ddof=1))
        row = {
            "feature": name,
            "mean": float(x.mean()),
            "sd": sd,
            "median": float(np.median(x)),
            "interval": [float(np.quantile(x, lo)), float(np.quantile(x, hi))],
            "hdi": list(arviz.hdi(x, level)) if not pinned
            else [float(x[0]), float(x[0])],
            "prior_sd": float(np.sqrt(var_prior[i])),
            "pinned": pinned,
        }
        row["sign"] = sign_word(*row["interval"])
        if pinned:
            row["contraction"], row["verdict"] = None, "pinned by assumption"
        else:
            row["contraction"] = float(1.0 - sd**2 / var_prior[i])
            row["verdict"] = verdicts.value_verdict(*row["interval"], tolerance)
        if truth is not None:
            row["truth"] = float(truth[i])
            row["z_score"] = None if pinned or sd == 0 else float((x.mean() - truth[i]) / sd)
        rows.append(row)
    return rows


def free_draws(posterior, prior=None):
    """Draws, names and prior variances of the free (not pinned) weights."""
    names = posterior.feature_names
    free = [i for i, n in enumerate(names) if n not in posterior.model.pin]
    return (flat_draws(posterior)[:, free], [names[i] for i in free],
            prior_variance(posterior, prior)[free])


def directions(posterior, level: float = 0.9, prior=None, tolerance=None) -> list[dict]:
    """Directions in weight space as short rounded combinations (see
    :func:`bayesirl.report.combinations.directions`)."""
    return combinations.directions(*free_draws(posterior, prior), level, tolerance)


def groups(posterior, dirs: list[dict], structural: list[dict], level: float = 0.9,
           prior=None, tolerance=None) -> list[dict]:
    """Groups of weights determined only in combination, with what is determined (see
    :func:`bayesirl.report.combinations.identified_groups`)."""
    return combinations.identified_groups(*free_draws(posterior, prior), dirs, structural,
                                          level, tolerance)


def mark_groups(table: list[dict], found: list[dict]) -> None:
    """Override the verdict of weights the data leave undetermined on their own."""
    for g in found:
        word = verdicts.COMBINATION_ONLY if len(g["features"]) > 1 else verdicts.NOT_IDENTIFIED
        for row in table:
            if row["feature"] in g["features"] and not row["pinned"]:
                row["verdict"] = word
