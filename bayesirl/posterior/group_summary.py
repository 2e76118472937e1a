"""Several demonstrators in words and numbers: population, spread, each demonstrator.

Plain JSON-ready records (``demonstrator_summary``) and a text table (``render``) from a
Posterior whose ``groups`` are set; consumers (run folders, reports) take the record and
never the model. Intervals are equal-tailed at ``level``.
"""

from __future__ import annotations

import numpy as np

# Differences between demonstrators' weights smaller than this count as agreement in the
# heterogeneity verdict (a region of practical equivalence, Kruschke 2018, "Rejecting or
# accepting parameter values in Bayesian estimation"). 0.1 is our choice for features of
# unit scale: it moves an action's log-odds by at most 0.1 x rationality per unit of feature
# difference. Callers may pass another value.
NEGLIGIBLE_SPREAD = 0.1
# Seed offset of the new-demonstrator draws (so they do not reuse the run's own stream).
_NEW_SEED = 16


def heterogeneity(spread: np.ndarray, names, level: float = 0.9,
                  negligible: float = NEGLIGIBLE_SPREAD, pinned=()) -> dict[str, str]:
    """Per-feature verdict from the spread's equal-tailed interval at ``level``.

    ``"differ"`` when the whole interval lies above ``negligible``, ``"agree"`` when it lies
    below it, ``"unclear"`` otherwise; ``"pinned"`` for pinned features (no spread).
    """
    lo_q, hi_q = 50 * (1 - level), 50 * (1 + level)
    out = {}
    for i, name in enumerate(names):
        if name in pinned:
            out[name] = "pinned"
            continue
        lo, hi = np.percentile(spread[..., i], [lo_q, hi_q])
        out[name] = "differ" if lo > negligible else "agree" if hi < negligible else "unclear"
    return out


def verdict_sentence(verdicts: dict[str, str], negligible: float = NEGLIGIBLE_SPREAD) -> str:
    """Plain words, e.g. "demonstrators clearly differ on shade; they agree (within 0.1)
    on mud; the data cannot tell for slope"."""
    by = {v: [n for n, x in verdicts.items() if x == v] for v in ("differ", "agree",
                                                                    "unclear")}
    parts = []
    if by["differ"]:
        parts.append(f"demonstrators clearly differ on {', '.join(by['differ'])}")
    if by["agree"]:
        parts.append(f"they agree (within {negligible:g}) on {', '.join(by['agree'])}")
    if by["unclear"]:
        parts.append(f"the data cannot tell whether they differ on {', '.join(by['unclear'])}")
    return "; ".join(parts) or "no sampled features"


def new_demonstrator(population: np.ndarray, spread: np.ndarray, seed: int) -> np.ndarray:
    """Draws of a new demonstrator's weights, ``mu + tau * z`` with fresh ``z ~ N(0, 1)``
    per posterior draw (the posterior predictive of the population model)."""
    rng = np.random.default_rng([int(seed), _NEW_SEED])
    return population + spread * rng.standard_normal(population.shape)


def _row(x: np.ndarray, level: float) -> dict:
    lo, hi = np.percentile(x, [50 * (1 - level), 50 * (1 + level)])
    return {"mean": float(x.mean()), "sd": float(x.std(ddof=1)), "lower": float(lo),
            "upper": float(hi)}


def demonstrator_summary(posterior, level: float = 0.9,
                         negligible: float = NEGLIGIBLE_SPREAD,
                         with_alone: bool = True) -> dict | None:
    """Population weights and spread (partial pooling) and each demonstrator's weights.

    With partial pooling also the weights to expect from a new demonstrator and a
    heterogeneity verdict per feature (see :func:`heterogeneity`) and, unless
    ``with_alone`` is False, each demonstrator's estimate from their own episodes alone
    (``demonstrators[who]["alone"]``, see :mod:`bayesirl.posterior.alone`), which shows the
    shrinkage. Returns None for a posterior of one pooled demonstrator.
    """
    g = posterior.groups
    if g is None:
        return None
    names = posterior.feature_names
    demos = posterior.model.likelihood.demos
    episodes = demos.groups()
    out = {"pooling": g["pooling"], "level": level, "features": list(names)}
    if g["pooling"] == "partial":
        out["population"] = {n: _row(posterior.weights[..., i], level)
                             for i, n in enumerate(names)}
        out["spread"] = {n: _row(g["spread"][..., i], level) for i, n in enumerate(names)}
        new = new_demonstrator(posterior.weights, g["spread"], posterior.seed)
        out["new_demonstrator"] = {n: _row(new[..., i], level) for i, n in enumerate(names)}
        verdicts = heterogeneity(g["spread"], names, level, negligible,
                                 pinned=tuple(posterior.model.pin))
        out["heterogeneity"] = {"negligible": negligible, "verdicts": verdicts,
                                "sentence": verdict_sentence(verdicts, negligible)}
    alone = {}
    if g["pooling"] == "partial" and with_alone:
        from bayesirl.posterior.alone import METHOD, alone_estimates

        alone = alone_estimates(posterior.model, level)
        out["alone_method"] = METHOD
    rows = {}
    for k, who in enumerate(g["demonstrators"]):
        own = demos.subset(episodes[who])
        rows[who] = {"episodes": own.n_episodes, "steps": own.n_steps,
                     "weights": {n: _row(g["demonstrator_weights"][..., k, i], level)
                                 for i, n in enumerate(names)}}
        if who in alone:
            rows[who]["alone"] = alone[who]
        if "demonstrator_rationality" in g:
            rows[who]["rationality"] = _row(g["demonstrator_rationality"][..., k], level)
    out["demonstrators"] = rows
    if "demonstrator_rationality" in g and posterior.rationality is not None:
        out["population_rationality"] = _row(np.asarray(posterior.rationality), level)
    return out


def render(record: dict) -> str:
    """The record as a text table (one block per feature)."""
    level = record["level"]
    head = f"{'':<22}{'mean':>9}{'sd':>8}   {f'{level:.0%} interval':>20}"
    lines = [f"{len(record['demonstrators'])} demonstrators, pooling {record['pooling']!r}"]
    if "heterogeneity" in record:
        lines.append(record["heterogeneity"]["sentence"] + f" (at the {level:.0%} level)")
    own = [(who, r["rationality"]) for who, r in record["demonstrators"].items()
           if "rationality" in r]
    if own:
        lines += ["", "rationality of each demonstrator (around the population's)",
                  head] + [_line(who, r) for who, r in own]
    for name in record["features"]:
        lines += ["", f"{name}", head]
        if "population" in record:
            lines.append(_line("population mean", record["population"][name]))
            lines.append(_line("spread (sd across)", record["spread"][name]))
            lines.append(_line("a new demonstrator", record["new_demonstrator"][name]))
        for who, r in record["demonstrators"].items():
            lines.append(_line(f"{who} ({r['steps']} steps)", r["weights"][name]))
            own = r.get("alone", {})
            if name in own:
                lines.append(_line("  alone (Laplace)", own[name]))
            elif "failed" in own and name == record["features"][0]:
                lines.append(f"  alone: {own['failed']}")
    return "\n".join(lines)


def _line(label: str, r: dict) -> str:
    span = f"[{r['lower']:.3f}, {r['upper']:.3f}]"
    return f"{label[:21]:<22}{r['mean']:9.3f}{r['sd']:8.3f}   {span:>20}"
