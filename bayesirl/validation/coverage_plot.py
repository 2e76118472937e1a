"""The README figure of :mod:`bayesirl.validation.coverage`, drawn from its JSON record only.

Left: each model's coverage of the population mean with its exact 95% binomial interval
and the band a calibrated posterior's count falls in 99% of the time. Right: how far each
replication's interval misses or holds the truth, against the true spread (where the
pooled model's misses come from is visible there; the figure states no conclusion).
"""

from __future__ import annotations

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from scipy import stats

_COLOURS = {"mu, pooled": "#c44e52", "mu, partial": "#4c72b0", "spread, partial": "#8172b2"}


def coverage_figure(record: dict) -> Figure:
    """Two panels from ``record`` (see the module docstring)."""
    n, level = record["replications"], record["level"]
    fig = Figure(figsize=(8.4, 3.4), dpi=100, layout="constrained")
    FigureCanvasAgg(fig)
    left, right = fig.subplots(1, 2, width_ratios=[1, 1.6])
    lo, hi = stats.binom.ppf([0.005, 0.995], n, level) / n
    left.axhspan(lo, hi, color="0.88", lw=0)
    left.axhline(level, color="0.4", lw=0.8)
    names = list(record["models"])
    for i, name in enumerate(names):
        m = record["models"][name]
        err = [[m["rate"] - m["ci95"][0]], [m["ci95"][1] - m["rate"]]]
        left.errorbar([i], [m["rate"]], yerr=err, fmt="o", color=_COLOURS.get(name, "k"),
                      capsize=4)
        left.annotate(f"{m['covered']}/{m['of']}", (i, m["ci95"][0]), textcoords="offset "
                      "points", xytext=(0, -12), ha="center", fontsize=8)
    left.set_xticks(range(len(names)))
    left.set_xticklabels([s.replace(", ", "\n") for s in names], fontsize=8)
    left.set_xlim(-0.6, len(names) - 0.4)
    left.set_ylim(0, 1.02)
    left.set_ylabel(f"coverage of {level:.0%} intervals", fontsize=8)
    left.set_title(f"{n} replications; grey: 99% band if calibrated", fontsize=8)
    _misses(right, record)
    fig.suptitle("10 demonstrators who differ: is the population mean inside the interval?",
                 fontsize=9)
    return fig


def _misses(ax, record: dict) -> None:
    """Signed distance of the truth outside each interval (0 inside), against the spread."""
    names = record["names"]
    j_spread = names.index("spread, partial")
    tau = np.array([r["truth"][j_spread] for r in record["runs"]])
    for name in ("mu, pooled", "mu, partial"):
        j = names.index(name)
        truth = np.array([r["truth"][j] for r in record["runs"]])
        iv = np.array([r["intervals"][j] for r in record["runs"]])
        miss = np.where(truth < iv[:, 0], truth - iv[:, 0],
                        np.where(truth > iv[:, 1], truth - iv[:, 1], 0.0))
        shift = -0.01 if name == "mu, pooled" else 0.01
        ax.scatter(tau, miss + shift * (miss == 0), s=10, alpha=0.7,
                   color=_COLOURS[name], label=name.replace("mu, ", ""))
    ax.axhline(0, color="0.4", lw=0.8)
    ax.set_xlabel("true spread tau of the demonstrators' weights", fontsize=8)
    ax.set_ylabel("truth outside the interval by\n(0: inside)", fontsize=8)
    ax.legend(fontsize=8, frameon=False)
    ax.set_title("how far the truth lies outside each interval, by true spread", fontsize=8)
