"""The report's "Does the model reproduce the demonstrations?" section: posterior
predictive checks in plain words, with a map of the states where the recorded choices fall
outside the 95% predictive band (grid problems).

Renders the plain record of :func:`bayesirl.modelfit.predictive.predictive_check`.
"""

from __future__ import annotations

from html import escape

import numpy as np
from matplotlib.figure import Figure

from bayesirl.report import palette
from bayesirl.report.html_parts import figure, num, table
from bayesirl.report.plots import style_axes

SECTION_ID = "model-fit"
TITLE = "Does the model reproduce the demonstrations?"


def verdict(check) -> list[str]:
    """Plain-words findings: where the model misses and what that usually means."""
    flagged = check.flagged
    visited = int((check.visits > 0).sum())
    if not flagged:
        return ["Demonstrations replicated from the posterior look like the recorded ones on "
                "every check below (choices per state, feature counts per episode, outcomes). "
                "That does not prove the model right: these checks miss misfits they do not "
                "look at, and small ones."]
    out = []
    if "choices" in flagged:
        out.append(
            f"At {check.recorded['choices']} of {visited} visited states the recorded choices "
            f"fall outside the 95% band of the replicated ones (about "
            f"{check.expected_missed:.1f} would by chance). The model does not reproduce the "
            "demonstrator's choices there: that usually means a feature the demonstrator "
            "cares about is missing, the demonstrator changed over the episodes, or the "
            "dynamics are wrong near those states.")
    for key in (k for k in flagged if k.startswith("feature:")):
        name, rec, (lo, hi) = key.split(":", 1)[1], check.recorded[key], check.band[key]
        more = "more" if rec > hi else "less"
        out.append(
            f"Episodes collect {more} {name} than the replicates ({rec:.3g} per episode "
            f"against a 95% band of {lo:.3g} to {hi:.3g}): usually a demonstrator who is not "
            f"the same throughout, a rationality or discount that does not fit, or a missing "
            f"feature that goes with {name}.")
    if "outcome" in flagged:
        rec, (lo, hi) = check.recorded["outcome"], check.band["outcome"]
        out.append(
            f"{rec:.0%} of the recorded episodes reach an absorbing state, against {lo:.0%} "
            f"to {hi:.0%} in the replicates: usually wrong dynamics (how often moves fail), a "
            "goal the features do not describe, or episodes selected or cut by their outcome.")
    out.append("The intervals above are conditional on this model; read them with that in "
               "mind, and compare alternatives with bayesirl compare.")
    return out


def as_dict(check) -> dict:
    """JSON-ready numbers of the check (for summary.json)."""
    return {"replicates": check.replicates, "flagged": check.flagged,
            "p_values": check.p_values, "recorded": check.recorded,
            "band": {k: list(v) for k, v in check.band.items()},
            "missed_states": np.flatnonzero(check.missed_states).tolist(),
            "expected_missed": check.expected_missed, "verdict": verdict(check)}


def miss_map(check, grid_shape) -> Figure | None:
    """Grid map: visited cells, and those where recorded choices left the 95% band."""
    if grid_shape is None:
        return None
    rows, cols = grid_shape
    n = rows * cols
    visits = check.visits[:n].reshape(rows, cols)
    missed = check.missed_states[:n].reshape(rows, cols)
    fig = Figure(figsize=(6.0, max(2.8, 4.6 * rows / cols + 0.8)))
    ax = fig.add_subplot(1, 1, 1)
    im = ax.imshow(np.log1p(visits), cmap=palette.VISITS_MAP, origin="upper",
                   interpolation="nearest", vmin=0)
    fig.colorbar(im, ax=ax, shrink=0.85, label="log(1 + recorded visits)")
    r, c = np.nonzero(missed)
    ax.scatter(c, r, marker="X", s=110, color=palette.MISSED, edgecolor="white", lw=1.2,
               label="choices outside the 95% band")
    ax.set_title("states where the model does not reproduce the recorded choices", fontsize=10)
    ax.set_xlabel("column", fontsize=8)
    ax.set_ylabel("row", fontsize=8)
    if r.size:
        ax.legend(fontsize=7, loc="lower left", framealpha=0.85)
    style_axes(ax)
    fig.tight_layout()
    return fig


def render(report) -> str:
    """The HTML section, or an empty string when the report carries no check."""
    check = getattr(report, "predictive", None)
    if check is None:
        return ""
    words = "".join(f"<p>{escape(w)}</p>" for w in verdict(check))
    rows = []
    for key, p in check.p_values.items():
        lo, hi = check.band[key]
        what = {"choices": "states with choices outside the 95% band",
                "outcome": "share of episodes reaching an absorbing state"}.get(
            key, f"{key.split(':', 1)[-1]} per episode")
        rows.append([what, num(check.recorded[key]), f"{num(lo)} to {num(hi)}", num(p),
                     "flagged" if key in check.flagged else "fits"])
    note = (f'<p class="note">{check.replicates} replicated data sets, one per posterior draw: '
            "the same start states and lengths as the recorded episodes (choices per state are "
            "replicated at the recorded states). A check is flagged when its posterior "
            "predictive p-value is below 0.05 divided by the number of checks (Bonferroni, "
            "common practice).</p>")
    grid = None
    post = getattr(report, "posterior", None)
    if post is not None:
        grid = post.model.likelihood.mdp.grid_shape
    fig = miss_map(check, grid)
    body = (words + table(["statistic", "recorded", "replicates (95%)", "p-value", ""], rows,
                          "lrrrl") + note)
    if fig is not None:
        body += figure(fig, "grid map of states where recorded choices fall outside the band",
                       "Grey: how often the demonstrations visit each cell; red crosses: "
                       "cells where the recorded action counts fall outside the 95% band of "
                       "the replicated ones.", "")
    return f'<section id="{SECTION_ID}"><h2>{escape(TITLE)}</h2>{body}</section>'
