"""Figures of the HTML report, drawn on matplotlib's Agg canvas and returned as PNG data URIs.

Figures are built with :class:`matplotlib.figure.Figure` directly rather than through pyplot,
so rendering a report never touches the global figure registry or the user's backend.
"""

from __future__ import annotations

import base64
import io
from itertools import combinations

import numpy as np
from matplotlib.figure import Figure
from scipy import stats

from bayesirl.report import palette
from bayesirl.report.palette import INK, POSTERIOR, PRIOR, TRUTH
from bayesirl.report.weights import flat_draws

__all__ = ["INK", "POSTERIOR", "PRIOR", "TRUTH"]  # re-exported: figures import them from here
# Axis labels shared by the figures: a weight multiplies a feature value to give reward.
WEIGHT_UNITS = "reward per unit of feature"
DPI = 96
# Scatter plots thin to this many evenly spaced draws: more points only overplot.
MAX_SCATTER = 1500


def data_uri(fig: Figure) -> str:
    """Encode a figure as a ``data:image/png;base64,...`` URI.

    Parameters
    ----------
    fig : matplotlib.figure.Figure

    Returns
    -------
    str
    """
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, bbox_inches="tight", facecolor="white")
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


def style_axes(ax) -> None:
    """The report's axis style: no top or right spine, small ticks in the ink colour."""
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.tick_params(labelsize=8, colors=INK)
    ax.title.set_color(INK)


def _legend_above(fig: Figure, ax, title: str) -> None:
    """The figure's title and one legend for all panels, in a strip above them."""
    handles, labels = ax.get_legend_handles_labels()
    fig.suptitle(title, fontsize=10, color=INK)
    fig.tight_layout(rect=(0, 0, 1, 0.9 if len(fig.axes) <= 4 else 0.94))
    fig.legend(handles, labels, loc="upper center", bbox_to_anchor=(0.5, 0.95),
               ncol=len(labels), fontsize=8, frameon=False)


def _grid(n: int, width: float = 3.0, height: float = 2.4, max_cols: int = 4):
    cols = min(max_cols, n)
    rows = -(-n // cols)
    fig = Figure(figsize=(width * cols, height * rows))
    return fig, [fig.add_subplot(rows, cols, k + 1) for k in range(n)]


def prior_pdf(prior, n: int, i: int, x: np.ndarray) -> np.ndarray | None:
    """Density of coordinate ``i`` of an ``n``-vector prior at ``x`` (None if unknown kind).

    Parameters
    ----------
    prior : Normal, Laplace or Uniform
    n : int
        Length of the weight vector (scalar parameters broadcast to it).
    i : int
        Coordinate.
    x : array

    Returns
    -------
    array or None
    """
    kind = getattr(prior, "kind", None)
    if kind not in ("normal", "laplace", "uniform"):
        return None
    a, b = (p[i] for p in prior.params(n))
    if kind == "normal":
        return stats.norm.pdf(x, a, b)
    if kind == "laplace":
        return stats.laplace.pdf(x, a, b)
    return stats.uniform.pdf(x, a, b - a)


def _span(x: np.ndarray, extra=()) -> tuple[float, float]:
    ends = [*np.quantile(x, [0.002, 0.998]), *extra]
    lo, hi = min(ends), max(ends)
    pad = 0.25 * (hi - lo) if hi > lo else 1.0
    return float(lo - pad), float(hi + pad)


def marginals(posterior, table: list[dict], level: float) -> Figure | None:
    """Histogram of each free weight's draws with its interval and the prior density.

    Parameters
    ----------
    posterior : Posterior
    table : list of dict
        ``report.weights`` (pinned rows are skipped).
    level : float
        Credible level of the shaded interval.

    Returns
    -------
    Figure or None
        None when every weight is pinned.
    """
    free = [i for i, row in enumerate(table) if not row["pinned"]]
    if not free:
        return None
    draws = flat_draws(posterior)
    n = draws.shape[1]
    fig, axes = _grid(len(free))
    bins = int(np.clip(np.sqrt(draws.shape[0]), 10, 50))
    for ax, i in zip(axes, free, strict=True):
        row = table[i]
        truth = (row["truth"],) if "truth" in row else ()
        lo, hi = _span(draws[:, i], truth)
        ax.hist(draws[:, i], bins=bins, range=(lo, hi), density=True, color=POSTERIOR,
                alpha=0.8, label="posterior draws")
        ax.axvspan(*row["interval"], color=POSTERIOR, alpha=0.12,
                   label=f"{level:.0%} interval")
        grid = np.linspace(lo, hi, 400)
        pdf = prior_pdf(posterior.model.prior, n, i, grid)
        if pdf is not None:
            ax.plot(grid, pdf, color=PRIOR, lw=1.8, ls="--", label="prior density")
        if truth:
            ax.axvline(truth[0], color=TRUTH, lw=1.5, label="true value")
        ax.set_title(row["feature"], fontsize=10)
        ax.set_xlabel(f"weight ({WEIGHT_UNITS})", fontsize=8)
        ax.set_ylabel("density", fontsize=8)
        ax.set_yticks([])
        style_axes(ax)
    _legend_above(fig, axes[0], f"posterior of each weight against its prior, {level:.0%} "
                  "interval shaded")
    return fig


def top_pairs(draws: np.ndarray, k: int = 3) -> list[tuple[int, int, float]]:
    """The ``k`` pairs of columns with the largest absolute correlation.

    Parameters
    ----------
    draws : array (N, F)
    k : int

    Returns
    -------
    list of (i, j, correlation)
    """
    sd = draws.std(axis=0)
    cols = [i for i in range(draws.shape[1]) if sd[i] > 0]
    if len(cols) < 2:
        return []
    corr = np.corrcoef(draws[:, cols], rowvar=False)
    pairs = [(cols[a], cols[b], float(corr[a, b])) for a, b in combinations(range(len(cols)), 2)]
    return sorted(pairs, key=lambda t: -abs(t[2]))[:k]


def pairs(posterior, table: list[dict], k: int = 3) -> Figure | None:
    """Scatter plots of the ``k`` most correlated pairs of free weights.

    Parameters
    ----------
    posterior : Posterior
    table : list of dict
        ``report.weights``.
    k : int

    Returns
    -------
    Figure or None
        None with fewer than two free weights.
    """
    draws = flat_draws(posterior)
    free = [i for i, row in enumerate(table) if not row["pinned"]]
    found = [(free[a], free[b], r) for a, b, r in top_pairs(draws[:, free], k)]
    if not found:
        return None
    idx = np.linspace(0, draws.shape[0] - 1, min(MAX_SCATTER, draws.shape[0])).astype(int)
    fig, axes = _grid(len(found), width=3.5, height=3.2, max_cols=3)
    for ax, (i, j, r) in zip(axes, found, strict=True):
        ax.scatter(draws[idx, i], draws[idx, j], s=5, color=POSTERIOR, alpha=0.35, lw=0)
        ax.set_xlabel(f"{table[i]['feature']} weight ({WEIGHT_UNITS})", fontsize=8)
        ax.set_ylabel(f"{table[j]['feature']} weight", fontsize=8)
        ax.set_title(f"correlation {r:+.2f}", fontsize=10)
        style_axes(ax)
    fig.suptitle("posterior draws of the most correlated pairs of weights", fontsize=10,
                 color=INK)
    fig.tight_layout()
    return fig


def _rank_columns(posterior) -> list[tuple[str, np.ndarray]]:
    out = [(name, posterior.weights[..., i]) for i, name in enumerate(posterior.feature_names)
           if name not in posterior.model.pin]
    if posterior.rationality is not None:
        out.append(("rationality", posterior.rationality))
    return out


def ranks(posterior) -> Figure | None:
    """Per-chain histograms of the pooled ranks of each sampled quantity.

    Chains that sample the same distribution give flat histograms; the shaded band is where
    95% of the bin counts fall for exchangeable draws (binomial with ``p = 1 / bins``).

    Parameters
    ----------
    posterior : Posterior

    Returns
    -------
    Figure or None
        None when nothing was sampled.
    """
    cols = _rank_columns(posterior)
    if not cols:
        return None
    n_chains, n_draws = cols[0][1].shape
    bins = int(np.clip(n_draws // 10, 5, 20))
    p = 1.0 / bins
    expect = n_draws * p
    half = 1.96 * np.sqrt(n_draws * p * (1 - p))
    fig, axes = _grid(len(cols), height=2.2)
    edges = np.linspace(0, n_chains * n_draws, bins + 1)
    for ax, (name, x) in zip(axes, cols, strict=True):
        r = stats.rankdata(x.ravel()).reshape(x.shape)
        ax.axhspan(expect - half, expect + half, color=palette.BAND, lw=0)
        ax.axhline(expect, color=palette.BAND_LINE, lw=1)
        for c in range(n_chains):
            counts, _ = np.histogram(r[c], bins=edges)
            colour, style = palette.series(c)
            ax.stairs(counts, edges, baseline=None, lw=1.5, color=colour, ls=style,
                      label=f"chain {c}")
        ax.set_title(name, fontsize=10)
        ax.set_xlabel("rank among all chains' draws (low to high)", fontsize=8)
        ax.set_ylabel("draws per bin", fontsize=8)
        ax.set_xticks([])
        ax.set_ylim(0, max(expect + 2 * half, ax.get_ylim()[1]))
        style_axes(ax)
    axes[0].plot([], [], color=palette.BAND, lw=6, label="95% band, exchangeable draws")
    _legend_above(fig, axes[0], "rank histograms per chain: flat when the chains agree")
    return fig


def risk(policy_risk: dict) -> Figure | None:
    """Histogram of the per-draw loss of acting on the estimate, with the bound marked.

    Parameters
    ----------
    policy_risk : dict
        ``report.policy_risk``.

    Returns
    -------
    Figure or None
        None when no values were kept.
    """
    values = np.asarray(policy_risk.get("values", []), dtype=float)
    if values.size == 0:
        return None
    fig = Figure(figsize=(7.0, 2.8))
    ax = fig.add_subplot(1, 1, 1)
    top = max(float(values.max()), policy_risk["bound"])
    ax.hist(values, bins=int(np.clip(np.sqrt(values.size), 8, 40)), range=(0, top or 1.0),
            color=POSTERIOR, alpha=0.85)
    ax.axvline(policy_risk["bound"], color=PRIOR, lw=2,
               label=f"{policy_risk['alpha']:.0%} bound {policy_risk['bound']:.3g}")
    ax.axvline(policy_risk["mean"], color=INK, lw=1.2, ls=":",
               label=f"mean {policy_risk['mean']:.3g}")
    ax.set_xlabel("loss in expected value from the start states (reward units)", fontsize=9)
    ax.set_ylabel("posterior draws", fontsize=9)
    ax.set_title("loss of acting on the posterior-mean reward, per posterior draw",
                 fontsize=10)
    ax.legend(fontsize=8, frameon=False)
    style_axes(ax)
    fig.tight_layout()
    return fig
