"""Rank histograms with the binomial band of Talts et al. (2018), written as PNG files.

Matplotlib's object API with the Agg canvas: no pyplot, no global backend switch.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from bayesirl.files import atomic_target
from bayesirl.validation.ranks import BAND_LEVEL, binomial_band
from bayesirl.validation.runner import SBCResult

# Report files are readable by everyone (mkstemp creates them 0600).


def rank_figure(result: SBCResult, bins: int | None = None, title: str = "") -> Figure:
    """One histogram of binned ranks per parameter, with the per-bin binomial band.

    Parameters
    ----------
    result : SBCResult
    bins : int, optional
        Default :meth:`SBCResult.bins`.
    title : str

    Returns
    -------
    matplotlib.figure.Figure
    """
    b = result.bins() if bins is None else int(bins)
    tests = result.tests(b)
    n_rep = len(result.replications)
    lo, hi = binomial_band(n_rep, b, BAND_LEVEL)
    fig = Figure(figsize=(3.2 * len(tests), 3.0), dpi=100, layout="constrained")
    FigureCanvasAgg(fig)
    axes = np.atleast_1d(fig.subplots(1, len(tests), sharey=True))
    edges = np.arange(b + 1)
    for ax, test in zip(axes, tests, strict=True):
        ax.fill_between(edges, lo, hi, color="0.85")
        ax.axhline(test.expected, color="0.5", lw=0.8)
        ax.bar(edges[:-1] + 0.5, test.counts, width=1.0, color="#4c72b0", edgecolor="white",
               alpha=0.8)
        for bound in (lo, hi):
            ax.axhline(bound, color="0.4", lw=0.8, ls="--")
        ax.set_xlim(0, b)
        verdict = "pass" if test.passed else "FAIL"
        ax.set_title(f"{test.name}: p = {test.p_value:.3f} ({verdict})", fontsize=9)
        ax.set_xlabel(f"rank bin (L = {result.settings.n_draws}, {b} bins)", fontsize=8)
    axes[0].set_ylabel(f"replications (of {n_rep})", fontsize=8)
    note = (f"grey, dashed: central {BAND_LEVEL:.0%} band of one bin's count under uniformity "
            f"(Binomial({n_rep}, 1/{b})); solid line: expected count")
    fig.suptitle(f"{title}\n{note}" if title else note, fontsize=9)
    return fig


def save_png(fig: Figure, path: Path) -> Path:
    """Write ``fig`` to a temporary PNG beside ``path``, then rename it over ``path``."""
    with atomic_target(path) as tmp:
        fig.savefig(tmp, format="png")
    return Path(path)
