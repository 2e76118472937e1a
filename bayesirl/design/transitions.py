"""Where would logging more transitions narrow the reward intervals most?

For a cut fit (:class:`bayesirl.posterior.dynamics.CutPosterior`) this ranks state-action
rows by the expected reduction of a weight's posterior variance from ``extra`` more logged
transitions there, so that a designer can set "log more transitions at (s, a)" beside
"record another demonstration" (whose expected reduction :func:`bayesirl.design.suggest`
gives). It is a first-order (delta-method) approximation, documented in docs/dynamics.md:

1. Around the plug-in posterior mean ``w`` and covariance ``C``, a change ``dP`` of the
   dynamics moves the posterior mean by about ``C dg``, where ``dg`` is the change of the
   log-likelihood gradient at ``w`` (a Laplace view: one Newton step).
2. ``dg`` of row ``r`` is ``J dp`` with ``J`` from finite differences along each possible
   outcome; a row's Dirichlet covariance ``K_r = (diag p - p p^T) / (a0 + 1)`` then gives the
   row's part of the dynamics variance, ``C J K_r J^T C``.
3. ``n`` more logged transitions shrink the expected Dirichlet covariance by the factor
   ``a0 / (a0 + n)`` (law of total variance over the Beta-binomial outcomes), so the
   expected reduction is ``n / (a0 + n)`` of the row's part.

``explained`` compares the rows' parts summed with the between-draw variance the cut fit
measured: far from 1, the linear picture is poor and the ranking only a rough guide.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl.errors import InputError
from bayesirl.execution.cut import under

STEP = 1e-4  # largest finite-difference step in probability (central differences)


class LogSuggestion(NamedTuple):
    """One row: where to log, what it holds now, what ``extra`` more are expected to do."""

    state: int
    action: int
    counted: float  # transitions counted in the row now (prior excluded)
    variance: np.ndarray  # (F,) this row's first-order part of each weight's variance
    reduction: float  # expected reduction of the target's variance from ``extra`` more
    target_sd: float  # the target's expected pooled sd afterwards
    current_sd: float  # the target's pooled sd now


class LogRanking(NamedTuple):
    """The ranked rows, the target and how much of the measured dynamics part they explain."""

    rows: list[LogSuggestion]
    target: str
    extra: int
    explained: np.ndarray  # (F,) sum of the rows' parts / measured between-draw variance


def rank_logging(cut, likelihood, *, target: str, extra: int = 20,
                 states=None) -> LogRanking:
    """Rank rows ``(s, a)`` by the expected variance reduction of weight ``target``.

    Parameters
    ----------
    cut : CutPosterior with a plug-in fit
    likelihood : the BoltzmannLikelihood the cut fit used
    target : a feature name
    extra : how many more transitions would be logged at the row
    states : states whose rows are candidates (default: the demonstrated states, whose
        rows the choices depend on most)
    """
    if cut.plug_in is None:
        raise InputError("rank_logging: needs a cut fit with its plug-in (plug_in=True)")
    names = list(cut.feature_names)
    if target not in names:
        raise InputError(f"target: expected one of {', '.join(names)}; got {target!r}")
    if int(extra) < 1:
        raise InputError(f"extra: expected an integer >= 1; got {extra!r}")
    f = names.index(target)
    dyn = cut.dynamics
    if not hasattr(dyn, "alpha"):
        raise InputError("rank_logging: ranks the rows of per-row Dirichlet dynamics; a "
                         "map's one slip probability has no rows to rank")
    w_draws = cut.plug_in.weights.reshape(-1, len(names))
    w, cov = w_draws.mean(axis=0), np.atleast_2d(np.cov(w_draws, rowvar=False))
    mean = dyn.mean()
    if states is None:
        states = np.unique(likelihood.demos.steps.states)
    split = cut.split()
    rows, parts = [], np.zeros(len(names))
    for s in np.asarray(states, dtype=np.int64):
        for a in range(dyn.n_actions):
            var, counted, a0 = _row_part(likelihood, dyn, mean, w, cov, int(s), a)
            parts += var
            red = var[f] * extra / (a0 + extra)
            rows.append(LogSuggestion(int(s), a, counted, var, float(red),
                                      float(np.sqrt(max(split.total[f] - red, 0.0))),
                                      float(np.sqrt(split.total[f]))))
    rows.sort(key=lambda r: -r.reduction)
    explained = parts / np.where(split.between > 0, split.between, np.nan)
    return LogRanking(rows, target, int(extra), explained)


def _row_part(likelihood, dyn, mean, w, cov, s: int, a: int):
    """``(C J K J^T C diagonal, counted, a0)`` of row ``(s, a)``."""
    r = s * dyn.n_actions + a
    lo, hi = mean.indptr[r], mean.indptr[r + 1]
    p = mean.data[lo:hi]
    alpha = dyn.alpha.data[lo:hi]
    a0 = float(alpha.sum())
    jac = np.zeros((w.size, hi - lo))
    h = min(STEP, 0.5 * float(p.min()))  # keeps every entry positive on both sides
    for j in range(hi - lo):
        grads = []
        for sign in (1.0, -1.0):  # along e_j - p: the row still sums to 1
            moved = mean.copy()
            step = -p * h * sign
            step[j] += h * sign
            moved.data[lo:hi] = p + step
            grads.append(under(likelihood, moved).value_and_grad(w)[1])
        jac[:, j] = (grads[0] - grads[1]) / (2 * h)
    k = (np.diag(p) - np.outer(p, p)) / (a0 + 1.0)
    m = cov @ jac
    var = np.einsum("ij,jk,ik->i", m, k, m)
    return var, a0 - dyn.concentration * (hi - lo), a0


def render_text(ranking: LogRanking, top: int = 8, state_label=str, action_label=str) -> str:
    """The ranking as a table, with the linear approximation's check."""
    lines = [f"where {ranking.extra} more logged transitions would narrow "
             f"{ranking.target} most (first-order estimate)",
             f"{'state':>8} {'action':<10}{'counted':>9}{'sd now':>10}{'sd after':>10}"]
    for r in ranking.rows[:top]:
        lines.append(f"{state_label(r.state):>8} {action_label(r.action):<10}"
                     f"{r.counted:>9.0f}{r.current_sd:>10.4f}{r.target_sd:>10.4f}")
    ex = ", ".join(f"{x:.2f}" for x in ranking.explained)
    lines.append(f"rows' parts / measured dynamics part, per weight: {ex} (near 1: the "
                 "first-order picture holds; far from 1: a rough guide only)")
    return "\n".join(lines)


def render_beside(ranking: LogRanking, demonstrations, top: int = 8,
                  state_label=str, action_label=str) -> str:
    """Logging more transitions beside recording more demonstrations, in one table.

    ``demonstrations``: ``suggest(cut.plug_in, ..., target=ranking.target)`` records
    (``Suggestion``), whose expected variance reduction ``current_sd**2 - target_sd**2`` is
    of the plug-in posterior, i.e. of the part that remains with the dynamics known; a
    logged row's reduction is of the dynamics part. Both are expected reductions of the
    target's pooled variance, each under its own approximation (importance reweighting for
    a demonstration, first order for a row), so close values do not rank reliably.
    """
    items = [(r.reduction, f"log {ranking.extra} transitions at ({state_label(r.state)}, "
              f"{action_label(r.action)})") for r in ranking.rows]
    for d in demonstrations:
        if np.isfinite(d.target_sd) and np.isfinite(d.current_sd):
            what = "a demonstration from" if d.kind == "start" else "the action asked at"
            items.append((max(d.current_sd**2 - d.target_sd**2, 0.0),
                          f"{what} state {state_label(d.state)}"))
    items.sort(key=lambda x: -x[0])
    now = f"{ranking.rows[0].current_sd**2:.4g}" if ranking.rows else "?"
    lines = [f"expected reduction of the variance of {ranking.target} (now {now})"]
    lines += [f"{red:>12.4g}  {what}" for red, what in items[:top]]
    return "\n".join(lines)
