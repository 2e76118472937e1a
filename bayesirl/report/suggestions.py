"""The report's suggestions section: where extra demonstrations would help most.

The report takes the designer's output as plain records (``bayesirl.suggest`` returns them;
this module never imports the designer), shows them as a table and, for grid problems, marks
the top suggestions on the map of posterior-mean reward.
"""

from __future__ import annotations

import math
from html import escape
from typing import TYPE_CHECKING

import numpy as np

from bayesirl.errors import InputError

if TYPE_CHECKING:
    from matplotlib.figure import Figure

# The map stays readable with this many numbered markers; the table lists them all.
MAP_TOP = 5
TABLE_TOP = 15
FIELDS = ("candidate", "gain", "stderr", "target_sd", "target_reduction", "kind", "state",
          "step")


def as_records(suggestions) -> list[dict]:
    """Plain JSON-ready records from ``suggest``'s output (named tuples or dicts)."""
    if suggestions is None:
        return []
    out = []
    for k, item in enumerate(suggestions):
        row = item._asdict() if hasattr(item, "_asdict") else item
        if not isinstance(row, dict) or not {"candidate", "gain", "stderr"} <= set(row):
            raise InputError(f"suggestions[{k}]: expected a record from bayesirl.suggest with "
                             f"fields candidate, gain, stderr; got {item!r}")
        rec = {f: row.get(f) for f in FIELDS}
        for f in ("gain", "stderr", "target_sd", "target_reduction"):
            rec[f] = None if rec[f] is None else float(rec[f])
        for f in ("state", "step"):
            rec[f] = None if rec[f] is None else int(rec[f])
        if not isinstance(rec["candidate"], str):
            rec["candidate"] = int(rec["candidate"])
        out.append(rec)
    return out


def _cell_of(rec, rows: int, cols: int):
    state = rec.get("state")
    if state is None and isinstance(rec["candidate"], int):
        state = rec["candidate"]
    if state is None or state >= rows * cols:
        return None
    return divmod(int(state), cols)


def suggestion_map(posterior, records: list[dict], level: float) -> Figure | None:
    """Posterior-mean reward per cell with the top suggestions as numbered markers."""
    # Plotting is imported here: ambiguity() (and `bayesirl check`) need only as_records.
    from matplotlib.figure import Figure

    from bayesirl.report import maps
    from bayesirl.report.plots import style_axes

    summary = maps.map_summary(posterior, level)
    if summary is None or not records:
        return None
    mean = summary["mean"]
    rows, cols = mean.shape
    fig = Figure(figsize=(6.5, max(3.0, 5.0 * rows / cols + 0.8)))
    ax = fig.add_subplot(1, 1, 1)
    top = float(np.max(np.abs(mean))) or 1.0
    im = ax.imshow(mean, cmap="RdBu", vmin=-top, vmax=top, origin="upper",
                   interpolation="nearest")
    fig.colorbar(im, ax=ax, shrink=0.85, label="posterior-mean reward")
    # A state suggested twice (a second walk from there) gets one marker with both ranks.
    marks: dict = {}
    for rank, rec in enumerate(records[:MAP_TOP], start=1):
        cell = _cell_of(rec, rows, cols)
        if cell is not None:
            marks.setdefault((cell, rec.get("kind")), []).append(str(rank))
    for ((r, c), kind), ranks in marks.items():
        # Squares ask for one action, circles for a whole demonstration.
        ax.scatter(c, r, s=260 * len(ranks), marker="s" if kind == "query" else "o",
                   facecolor="white", edgecolor="#111111", lw=1.5, zorder=3)
        ax.text(c, r, ",".join(ranks), ha="center", va="center", fontsize=8, zorder=4)
    ax.set_title("top suggestions (1 = first)", fontsize=10)
    ax.set_xlim(-0.5, cols - 0.5)
    ax.set_ylim(rows - 0.5, -0.5)
    style_axes(ax)
    fig.tight_layout()
    return fig


def _fmt(x) -> str:
    return "\u2013" if x is None or (isinstance(x, float) and math.isnan(x)) else f"{x:.3g}"


def render(report) -> str:
    """The HTML section, or an empty string when the report carries no suggestions."""
    from bayesirl.report.html import figure, table  # html imports this module at load

    records = getattr(report, "suggestions", None) or []
    if not records:
        return ""
    rows = [[k, str(r["candidate"]), r.get("kind") or "", _fmt(r["gain"]), _fmt(r["stderr"]),
             _fmt(r.get("target_sd")), _fmt(r.get("target_reduction"))]
            for k, r in enumerate(records[:TABLE_TOP], start=1)]
    head = ["rank", "candidate", "kind", "gain (nats)", "Monte-Carlo se",
            "expected target sd", "sd reduction"]
    picks = sum(1 for r in records if (r.get("step") or 0) > 0)
    words = ("Expected information gain about the weights of one more demonstration (start) "
             "or one more answer (query) at each candidate. "
             f"The first {picks} rows are a greedy batch: each gain is given the simulated "
             "outcomes of the rows above it.")
    fig = None if report.posterior is None else suggestion_map(report.posterior, records,
                                                               report.level)
    body = (f"<p>{escape(words)}</p>" + table(head, rows, "ll")
            + figure(fig, "grid map with the top suggestions numbered",
                     "Posterior-mean reward per cell; numbered markers are the top "
                     "suggestions (circle: a demonstration from there, square: one query).",
                     "Only grid problems get a map of the suggestions."))
    return f'<section id="suggestions"><h2>Suggested demonstrations</h2>{body}</section>'
