"""Grid maps of the report: posterior reward per cell and its uncertainty, with the paths walked.

Only for models built with ``grid_shape=(rows, cols)``: state ``s < rows * cols`` is the cell
``divmod(s, cols)``; any further state (an added absorbing state, say) is off the map.
"""

from __future__ import annotations

import numpy as np
from matplotlib import patheffects
from matplotlib.figure import Figure

from bayesirl.report import palette
from bayesirl.report.plots import style_axes
from bayesirl.report.weights import flat_draws

# Per-cell quantiles use at most this many evenly spaced draws: the Monte-Carlo error of a
# 5% quantile is then about sqrt(0.05 * 0.95 / 1000) = 0.007 in probability, invisible on a
# colour scale, while a 10^4-state grid stays at 10^7 numbers.
MAX_MAP_DRAWS = 1000
# A pale outline under each path keeps it visible on dark and light cells alike.
HALO = [patheffects.withStroke(linewidth=2.0, foreground="white", alpha=0.35)]


def cell_rewards(posterior, max_draws: int = MAX_MAP_DRAWS) -> np.ndarray:
    """Reward of every state under (thinned) posterior draws, averaged over actions.

    Parameters
    ----------
    posterior : Posterior
    max_draws : int

    Returns
    -------
    array (draws, S)
        ``features[s] @ w``; for state-action features the mean over actions.
    """
    mdp = posterior.model.likelihood.mdp
    phi = np.asarray(mdp.features_sa).mean(axis=1)  # (S, F)
    draws = flat_draws(posterior)
    idx = np.linspace(0, draws.shape[0] - 1, min(max_draws, draws.shape[0])).round().astype(int)
    return draws[idx] @ phi.T


def map_summary(posterior, level: float) -> dict | None:
    """Per-cell posterior-mean reward and width of its central ``level`` interval.

    Parameters
    ----------
    posterior : Posterior
    level : float

    Returns
    -------
    dict or None
        ``mean`` and ``width`` as ``(rows, cols)`` arrays and ``off_map`` (states not drawn);
        None when the model has no grid shape.
    """
    mdp = posterior.model.likelihood.mdp
    if mdp.grid_shape is None:
        return None
    rows, cols = mdp.grid_shape
    rew = cell_rewards(posterior)[:, : rows * cols]
    lo, hi = np.quantile(rew, [0.5 * (1 - level), 0.5 * (1 + level)], axis=0)
    return {"mean": rew.mean(axis=0).reshape(rows, cols),
            "width": (hi - lo).reshape(rows, cols),
            "off_map": mdp.n_states - rows * cols}


def _paths(ax, episodes, rows: int, cols: int) -> None:
    """Draw each episode through the cell centres it visited."""
    for k, (states, _) in enumerate(episodes):
        s = np.asarray(states, dtype=float)
        s[s >= rows * cols] = np.nan  # off-map states break the line instead of wrapping
        r, c = np.divmod(s, cols)
        # A small fixed offset per episode keeps overlapping paths apart (golden-ratio steps
        # spread any number of episodes evenly over the offset range).
        dx = ((k * 0.618034) % 1.0 - 0.5) * 0.3
        dy = ((k * 0.381966) % 1.0 - 0.5) * 0.3
        ax.plot(c + dx, r + dy, color=palette.PATH, lw=0.9, alpha=0.7, path_effects=HALO)
    starts = [int(st[0]) for st, _ in episodes if st[0] < rows * cols]
    if starts:
        r0, c0 = np.divmod(np.unique(starts), cols)
        ax.scatter(c0, r0, s=60, facecolor="white", edgecolor=palette.MARKER_EDGE, lw=1.5, zorder=3,
                   label="start")


def _panel(fig, ax, values, cmap, vmin, vmax, title, label) -> None:
    im = ax.imshow(values, cmap=cmap, vmin=vmin, vmax=vmax, origin="upper",
                   interpolation="nearest")
    fig.colorbar(im, ax=ax, shrink=0.85, label=label)
    ax.set_title(title, fontsize=10)
    ax.set_xlabel("column", fontsize=8)
    ax.set_ylabel("row", fontsize=8)
    style_axes(ax)


def reward_maps(posterior, level: float) -> Figure | None:
    """Two maps side by side: posterior-mean reward and the width of its interval.

    Parameters
    ----------
    posterior : Posterior
    level : float
        Credible level of the interval whose width is mapped.

    Returns
    -------
    Figure or None
        None when the model has no grid shape.
    """
    summary = map_summary(posterior, level)
    if summary is None:
        return None
    mean, width = summary["mean"], summary["width"]
    rows, cols = mean.shape
    episodes = posterior.model.likelihood.demos.episodes
    aspect = rows / cols
    fig = Figure(figsize=(11.0, max(3.0, 4.6 * aspect + 0.8)))
    ax_m, ax_w = fig.add_subplot(1, 2, 1), fig.add_subplot(1, 2, 2)
    # Symmetric limits put zero reward at the middle of the scale (cividis: lightness rises
    # from the most negative to the most positive reward, so grey-scale keeps the order).
    top = float(np.max(np.abs(mean))) or 1.0
    _panel(fig, ax_m, mean, palette.REWARD_MAP, -top, top, "posterior-mean reward per cell",
           "reward (reward units)")
    # Light at zero width, so the well-determined cells read as quiet background.
    _panel(fig, ax_w, width, palette.WIDTH_MAP, 0.0, float(width.max()) or 1.0,
           f"width of the {level:.0%} interval per cell", "interval width (reward units)")
    for ax in (ax_m, ax_w):
        _paths(ax, episodes, rows, cols)
        ax.set_xlim(-0.5, cols - 0.5)
        ax.set_ylim(rows - 0.5, -0.5)
    ax_m.legend(fontsize=7, loc="lower left", framealpha=0.85)
    fig.tight_layout()
    return fig


# A per-state plot stays readable up to this many states; beyond it only the most uncertain
# ones are drawn (the caption says so).
MAX_STATE_BARS = 60


def state_rewards(posterior, level: float) -> Figure | None:
    """For problems without a grid: posterior-median reward of each state with its interval.

    Parameters
    ----------
    posterior : Posterior
    level : float
        Credible level of the interval drawn per state.

    Returns
    -------
    Figure or None
        None when the model has a grid shape (the maps show the same) or no states.
    """
    mdp = posterior.model.likelihood.mdp
    if mdp.grid_shape is not None or mdp.n_states == 0:
        return None
    rew = cell_rewards(posterior)
    lo, med, hi = np.quantile(rew, [0.5 * (1 - level), 0.5, 0.5 * (1 + level)], axis=0)
    states = np.arange(mdp.n_states)
    if states.shape[0] > MAX_STATE_BARS:
        states = np.sort(np.argsort(-(hi - lo), kind="stable")[:MAX_STATE_BARS])
    visited = np.zeros(mdp.n_states, dtype=bool)
    visited[np.unique(posterior.model.likelihood.demos.steps.states)] = True
    fig = Figure(figsize=(min(11.0, 3.0 + 0.18 * states.shape[0]), 3.4))
    ax = fig.add_subplot(1, 1, 1)
    x = np.arange(states.shape[0])
    colour = np.where(visited[states], palette.VISITED, palette.UNVISITED)
    ax.vlines(x, lo[states], hi[states], colors=colour, lw=2.2, alpha=0.8)
    ax.scatter(x, med[states], c=colour, s=14, zorder=3)
    ax.axhline(0.0, color=palette.ZERO_LINE, lw=0.8)
    ax.set_xticks(x[:: max(1, x.shape[0] // 20)])
    ax.set_xticklabels([str(s) for s in states[:: max(1, x.shape[0] // 20)]], fontsize=7)
    ax.set_xlabel("state (blue: visited by the demonstrations, orange: never visited)",
                  fontsize=8)
    ax.set_ylabel("reward (reward units)", fontsize=8)
    ax.set_title(f"posterior-median reward per state with its {level:.0%} interval",
                 fontsize=10)
    style_axes(ax)
    fig.tight_layout()
    return fig
