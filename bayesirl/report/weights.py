"""Per-feature table and weight-space directions: what the data moved and what they did not."""

from __future__ import annotations

import numpy as np
from scipy.linalg import eigh

from bayesirl import arviz_compat as arviz
from bayesirl.report.structural import describe

# Verdict words from the contraction 1 - Var_post / Var_prior (Schad, Betancourt & Vasishth
# 2021 use contraction to judge what the data inform). The cut-offs are our own common-practice
# choice, not a standard: they split "the data did almost all the work" from "the prior still
# dominates".
CONTRACTION_VERDICTS = ((0.9, "pinned down"), (0.5, "narrowed"), (0.1, "loosely constrained"),
                        (-np.inf, "left open"))
# A direction whose posterior variance is at least this fraction of its prior variance (that
# is, contraction <= 0.1) is reported as undetermined.
UNDETERMINED_RATIO = 0.9


def verdict(contraction: float) -> str:
    """Verdict word for a contraction value."""
    for cut, word in CONTRACTION_VERDICTS:
        if contraction >= cut:
            return word
    return CONTRACTION_VERDICTS[-1][1]


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


def weights_table(posterior, level: float = 0.9, prior=None, truth=None) -> list[dict]:
    """One row per feature: mean, sd, median, intervals, contraction, verdict, z-score."""
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
            row["verdict"] = verdict(row["contraction"])
        if truth is not None:
            row["truth"] = float(truth[i])
            row["z_score"] = None if pinned or sd == 0 else float((x.mean() - truth[i]) / sd)
        rows.append(row)
    return rows


def directions(posterior, level: float = 0.9, prior=None) -> list[dict]:
    """Generalised eigen-directions of the posterior covariance against the prior's.

    Solves ``Cov_post v = r Cov_prior v`` over the free weights; ``r`` is the fraction of the
    prior variance left along ``v``. Directions are scaled so the largest coefficient is 1.
    """
    names = posterior.feature_names
    free = [i for i, n in enumerate(names) if n not in posterior.model.pin]
    draws = flat_draws(posterior)[:, free]
    cov_post = np.atleast_2d(np.cov(draws, rowvar=False))
    cov_prior = np.diag(prior_variance(posterior, prior)[free])
    ratios, vecs = eigh(cov_post, cov_prior)
    lo, hi = 0.5 * (1 - level), 0.5 * (1 + level)
    out = []
    for r, v in sorted(zip(ratios, vecs.T, strict=True), key=lambda t: -t[0]):
        v = v / v[np.argmax(np.abs(v))]
        v[np.abs(v) < 0.05] = 0.0  # readable: drop features that barely take part
        combo = {names[i]: round(float(c), 3) for i, c in zip(free, v, strict=True) if c != 0}
        proj = draws @ v
        interval = [float(np.quantile(proj, lo)), float(np.quantile(proj, hi))]
        undetermined = r >= UNDETERMINED_RATIO
        text = describe(combo)
        out.append({
            "combination": combo,
            "variance_ratio": float(r),
            "verdict": "undetermined" if undetermined else "determined",
            "interval": interval,
            "text": (f"{text} is undetermined (the data left {r:.0%} of its prior variance)"
                     if undetermined else
                     f"{text} is pinned to [{interval[0]:.3g}, {interval[1]:.3g}]"),
        })
    return out
