"""Forest plot of several demonstrators' weights, from the plain record of
:func:`bayesirl.posterior.group_summary.demonstrator_summary` (never from the model).

One panel per feature: each demonstrator's partially pooled mean and interval, the population
mean's interval as a band, a new demonstrator's predictive interval, and the heterogeneity
verdict in the panel title. With partial pooling each demonstrator also has a thin grey
line just above: the estimate from their own episodes alone (Laplace approximation, see
:mod:`bayesirl.posterior.alone`), so the shrinkage towards the population is the distance
between the grey and the black mark.
"""

from __future__ import annotations

from matplotlib.figure import Figure

from bayesirl.report import palette
from bayesirl.report.plots import INK, POSTERIOR, PRIOR, WEIGHT_UNITS, style_axes

# The alone estimate's row offset and colour (a thin grey line above the pooled one).
_ALONE = 0.3
ALONE = palette.ALONE
_WORDS = {"differ": "demonstrators differ", "agree": "demonstrators agree",
          "unclear": "cannot tell", "pinned": "pinned"}


def forest_figure(record: dict) -> Figure:
    """The figure (matplotlib, Agg-safe); save with ``fig.savefig(path)``."""
    names = record["features"]
    who = list(record["demonstrators"])
    rows = who + (["new demonstrator"] if "new_demonstrator" in record else [])
    fig = Figure(figsize=(3.2 * len(names), 0.5 * len(rows) + 1.6), dpi=96)
    verdicts = record.get("heterogeneity", {}).get("verdicts", {})
    for i, name in enumerate(names):
        ax = fig.add_subplot(1, len(names), i + 1)
        style_axes(ax)
        if "population" in record:
            pop = record["population"][name]
            ax.axvspan(pop["lower"], pop["upper"], color=POSTERIOR, alpha=0.15, lw=0,
                       label="population mean")
            ax.axvline(pop["mean"], color=POSTERIOR, lw=1)
        for k, label in enumerate(rows):
            r = (record["new_demonstrator"][name] if label == "new demonstrator"
                 else record["demonstrators"][label]["weights"][name])
            colour = PRIOR if label == "new demonstrator" else INK
            y = len(rows) - 1 - k
            ax.plot([r["lower"], r["upper"]], [y, y], color=colour, lw=1.5)
            ax.plot([r["mean"]], [y], "o", color=colour, ms=4,
                    mfc="white" if label == "new demonstrator" else colour)
            own = record["demonstrators"].get(label, {}).get("alone", {}).get(name)
            if own is not None:
                ax.plot([own["lower"], own["upper"]], [y + _ALONE, y + _ALONE], color=ALONE,
                        lw=1)
                ax.plot([own["mean"]], [y + _ALONE], "s", color=ALONE, ms=3, mfc="white")
        ax.set_yticks(range(len(rows)))
        ax.set_yticklabels(rows[::-1] if i == 0 else [])
        ax.set_xlabel(f"weight ({WEIGHT_UNITS})", fontsize=8)
        ax.set_ylabel("demonstrator", fontsize=8)
        word = _WORDS.get(verdicts.get(name, ""), "")
        ax.set_title(f"{name}" + (f"\n{word}" if word else ""), fontsize=9, color=INK)
    alone = any("alone" in r for r in record["demonstrators"].values())
    note = ("\nblack: partially pooled; grey, above: from their own episodes alone"
            if alone else "")
    fig.suptitle(f"weights per demonstrator, {record['level']:.0%} intervals "
                 f"(pooling {record['pooling']}){note}", fontsize=9, color=INK)
    fig.tight_layout()
    return fig
