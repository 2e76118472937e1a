"""Several demonstrators in words and numbers: population, spread, each demonstrator.

Plain JSON-ready records (``demonstrator_summary``) and a text table (``render``) from a
Posterior whose ``groups`` are set; consumers (run folders, reports) take the record and
never the model. Intervals are equal-tailed at ``level``.
"""

from __future__ import annotations

import numpy as np


def _row(x: np.ndarray, level: float) -> dict:
    lo, hi = np.percentile(x, [50 * (1 - level), 50 * (1 + level)])
    return {"mean": float(x.mean()), "sd": float(x.std(ddof=1)), "lower": float(lo),
            "upper": float(hi)}


def demonstrator_summary(posterior, level: float = 0.9) -> dict | None:
    """Population weights and spread (partial pooling) and each demonstrator's weights.

    Returns None for a posterior of one pooled demonstrator.
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
    rows = {}
    for k, who in enumerate(g["demonstrators"]):
        own = demos.subset(episodes[who])
        rows[who] = {"episodes": own.n_episodes, "steps": own.n_steps,
                     "weights": {n: _row(g["demonstrator_weights"][..., k, i], level)
                                 for i, n in enumerate(names)}}
    out["demonstrators"] = rows
    return out


def render(record: dict) -> str:
    """The record as a text table (one block per feature)."""
    level = record["level"]
    head = f"{'':<22}{'mean':>9}{'sd':>8}   {f'{level:.0%} interval':>20}"
    lines = [f"{len(record['demonstrators'])} demonstrators, pooling {record['pooling']!r}"]
    for name in record["features"]:
        lines += ["", f"{name}", head]
        if "population" in record:
            lines.append(_line("population mean", record["population"][name]))
            lines.append(_line("spread (sd across)", record["spread"][name]))
        for who, r in record["demonstrators"].items():
            lines.append(_line(f"{who} ({r['steps']} steps)", r["weights"][name]))
    return "\n".join(lines)


def _line(label: str, r: dict) -> str:
    span = f"[{r['lower']:.3f}, {r['upper']:.3f}]"
    return f"{label[:21]:<22}{r['mean']:9.3f}{r['sd']:8.3f}   {span:>20}"
