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
from bayesirl.resources import MEASURABLE_Z

if TYPE_CHECKING:
    from matplotlib.figure import Figure

# The map stays readable with this many numbered markers; the table lists them all.
MAP_TOP = 5
NO_GAIN = "no measurable gain"
TABLE_TOP = 15
FIELDS = ("candidate", "gain", "stderr", "target_sd", "target_reduction", "kind", "state",
          "step", "current_sd", "cumulative_gain", "cumulative_stderr", "p_best",
          "rank_interval", "settled", "gain_estimate", "measurable", "p_same", "demonstrator")
FLOATS = ("gain", "stderr", "target_sd", "target_reduction", "current_sd", "cumulative_gain",
          "cumulative_stderr", "p_best", "gain_estimate", "p_same")


def _finite(x) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


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
        for f in FLOATS:
            rec[f] = _finite(rec[f])  # undefined (no target, not a pick) is null
        for f in ("state", "step"):
            rec[f] = None if rec[f] is None else int(rec[f])
        rec["rank_interval"] = [int(x) for x in rec["rank_interval"] or ()] or None
        rec["settled"] = None if rec["settled"] is None else bool(rec["settled"])
        if rec["gain"] is not None:  # older files and hand-made records: the raw estimate
            rec["gain_estimate"] = rec["gain"] if rec["gain_estimate"] is None else \
                rec["gain_estimate"]
            rec["gain"] = max(rec["gain"], 0.0)
            rec["measurable"] = gain_text(rec) != NO_GAIN
        if not isinstance(rec["candidate"], str):
            rec["candidate"] = int(rec["candidate"])
        rec["demonstrator"] = str(rec["demonstrator"]) if rec["demonstrator"] else None
        out.append(rec)
    return out


def gain_text(rec: dict) -> str:
    """The gain for a reader: never negative, "no measurable gain" when within noise."""
    gain, se = rec.get("gain"), rec.get("stderr") or 0.0
    estimate = rec.get("gain_estimate")
    gain = gain if estimate is None else estimate
    if gain is None or gain - MEASURABLE_Z * se <= 0.0:
        return NO_GAIN
    return f"{gain:.3g} \u00b1 {se:.2g}"


def cumulative_text(rec: dict) -> str:
    """The batch's gain so far (picks 1..step), or a dash for the rest of the ranking."""
    total, se = rec.get("cumulative_gain"), rec.get("cumulative_stderr") or 0.0
    if not rec.get("step") or total is None:
        return "\u2013"
    return gain_text({"gain": total, "stderr": se})


def describe_candidate(rec: dict, grid_shape=None, earlier=()) -> str:
    """A candidate in the problem's own terms: a cell as (row, col) on a grid, else a state.

    ``earlier`` are the records ranked above (a walk from a cell already in the batch is
    "another walk from ...": a second, independent demonstration from the same start).
    With several demonstrators it ends with whose demonstration it is.
    """
    text = _describe_where(rec, grid_shape, earlier)
    who = rec.get("demonstrator")
    return f"{text}, by {who}" if who else text


def _describe_where(rec: dict, grid_shape, earlier) -> str:
    state = rec.get("state")
    if state is None and isinstance(rec.get("candidate"), int):
        state = rec["candidate"]
    if state is None:
        return str(rec.get("candidate"))
    where = f"state {state}"
    if grid_shape is not None and state < grid_shape[0] * grid_shape[1]:
        where = "cell (row {}, col {})".format(*divmod(int(state), int(grid_shape[1])))
    if rec.get("kind") == "query":
        return f"ask which move at {where}"
    again = any(e.get("state") == state and e.get("kind") == "start" and e.get("step")
                and e.get("demonstrator") == rec.get("demonstrator") for e in earlier)
    return f"{'another' if again else 'a'} walk from {where}"


def ranking_sentence(records: list[dict]) -> str:
    """Whether each greedy pick is settled, in words."""
    settled, unsettled = [], []
    for r in records:
        if not r.get("step") or r.get("p_best") is None:
            continue
        lo, hi = r.get("rank_interval") or (1, 1)
        ranks = f"rank {lo}" if lo == hi else f"ranks {lo}\u2013{hi}"
        again = ("" if r.get("p_same") is None else
                 f", another seed picks it again with probability {r['p_same']:.2f}")
        item = (f"pick {r['step']} is the best with probability {r['p_best']:.2f}{again} "
                f"({ranks})")
        (settled if r.get("settled") else unsettled).append(item)
    if not settled and not unsettled:
        return ""
    if not unsettled:
        return "Ranking settled: " + ", ".join(settled) + "."
    return ("Ranking not settled: " + ", ".join(unsettled + settled) + " (rank intervals at "
            "90%). Candidates with gains close to a pick's are as good a choice; more outer "
            "samples (--outer) sharpen the ranking.")


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

    from bayesirl.report import maps, palette
    from bayesirl.report.plots import style_axes

    summary = maps.map_summary(posterior, level)
    if summary is None or not records:
        return None
    mean = summary["mean"]
    rows, cols = mean.shape
    fig = Figure(figsize=(6.5, max(3.0, 5.0 * rows / cols + 0.8)))
    ax = fig.add_subplot(1, 1, 1)
    top = float(np.max(np.abs(mean))) or 1.0
    im = ax.imshow(mean, cmap=palette.REWARD_MAP, vmin=-top, vmax=top, origin="upper",
                   interpolation="nearest")
    fig.colorbar(im, ax=ax, shrink=0.85, label="posterior-mean reward (reward units)")
    # A state suggested twice (a second walk from there) gets one marker with both ranks.
    marks: dict = {}
    for rank, rec in enumerate(records[:MAP_TOP], start=1):
        cell = _cell_of(rec, rows, cols)
        if cell is not None:
            marks.setdefault((cell, rec.get("kind")), []).append(str(rank))
    for ((r, c), kind), ranks in marks.items():
        # Squares ask for one action, circles for a whole demonstration.
        ax.scatter(c, r, s=260 * len(ranks), marker="s" if kind == "query" else "o",
                   facecolor="white", edgecolor=palette.MARKER_EDGE, lw=1.5, zorder=3)
        ax.text(c, r, ",".join(ranks), ha="center", va="center", fontsize=8, zorder=4)
    ax.set_title("where to demonstrate next: top suggestions (1 = first)", fontsize=10)
    ax.set_xlabel("column", fontsize=8)
    ax.set_ylabel("row", fontsize=8)
    ax.set_xlim(-0.5, cols - 0.5)
    ax.set_ylim(rows - 0.5, -0.5)
    style_axes(ax)
    fig.tight_layout()
    return fig


def _fmt(x) -> str:
    return "\u2013" if x is None or (isinstance(x, float) and math.isnan(x)) else f"{x:.3g}"


def table_rows(records: list[dict], grid_shape=None, top: int = TABLE_TOP):
    """Header and rows of the suggestions table (shared by the page and the terminal)."""
    target = any(r.get("target_sd") is not None for r in records)
    head = ["rank", "suggestion", "batch gain so far", "gain (nats)"]
    head += ["target sd now", "expected target sd after"] if target else []
    rows = []
    for k, r in enumerate(records[:top], start=1):
        label = describe_candidate(r, grid_shape, records[:k - 1])
        step = f"batch pick {r['step']}" if r.get("step") else str(k)
        row = [step, label, cumulative_text(r), gain_text(r)]
        if target:
            row += [_fmt(r.get("current_sd")), _fmt(r.get("target_sd"))]
        rows.append(row)
    return head, rows


def render_text(records: list[dict], grid_shape=None, top: int = TABLE_TOP) -> str:
    """The suggestions as a terminal table with the ranking sentence below it."""
    head, rows = table_rows(records, grid_shape, top)
    widths = [max(len(str(x)) for x in col) for col in zip(head, *rows, strict=True)]
    lines = ["  ".join(str(x).ljust(w) for x, w in zip(line, widths, strict=True)).rstrip()
             for line in [head, *rows]]
    sentence = ranking_sentence(records)
    return "\n".join(lines + ([sentence] if sentence else []))


def render(report) -> str:
    """The HTML section, or an empty string when the report carries no suggestions."""
    from bayesirl.report.html_parts import figure, table  # plotting loads on first use

    records = getattr(report, "suggestions", None) or []
    if not records:
        return ""
    post = report.posterior
    grid = None if post is None else post.model.likelihood.mdp.grid_shape
    head, rows = table_rows(records, grid)
    picks = sum(1 for r in records if (r.get("step") or 0) > 0)
    words = ("Expected information gain about the weights (nats, \u00b1 its Monte-Carlo "
             "standard error) of one more walk, or of one more answer to \"which move here?\". "
             f"The first {picks} rows are a batch chosen together: each gain is given the "
             "simulated outcomes of the picks above it, and \"batch gain so far\" adds them up. "
             "A gain within two standard errors of zero is shown as no measurable gain.")
    if any(r.get("demonstrator") for r in records):
        words += (" Each row ends with whose demonstration it is. Every gain is the "
                  "information about the model's parameters (population and present "
                  "demonstrators), so the rows compare; for a new demonstrator what the "
                  "demonstration tells about that person alone is not counted.")
    diag = getattr(report, "diagnostics", None) or {}
    warn = ("" if diag.get("trustworthy", True) else
            '<p class="fail">The sampler diagnostics failed: these suggestions rest on draws '
            "that may not represent the posterior.</p>")
    fig = None if post is None else suggestion_map(post, records, report.level)
    body = (warn + f"<p>{escape(words)}</p>" + table(head, rows, "ll")
            + f"<p>{escape(ranking_sentence(records))}</p>"
            + figure(fig, "grid map with the top suggestions numbered",
                     "Posterior-mean reward per cell; numbered markers are the top "
                     "suggestions (circle: a walk from there, square: one question).",
                     "Only grid problems get a map of the suggestions."))
    return f'<section id="suggestions"><h2>Suggested demonstrations</h2>{body}</section>'
