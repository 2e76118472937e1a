"""Derived quantities with intervals: trade-off ratios, action probabilities, policy risk."""

from __future__ import annotations

import numpy as np

from bayesirl.report.weights import flat_draws
from bayesirl.solver import evaluate_deterministic, policy_iteration

# Per-draw solves are the cost here; this many evenly spaced draws keep Monte-Carlo error of
# a 95% quantile near 0.015 in probability (sqrt(0.05 * 0.95 / 200)).
MAX_DRAWS = 200


def _thinned(posterior, max_draws: int = MAX_DRAWS) -> np.ndarray:
    draws = flat_draws(posterior)
    idx = np.linspace(0, draws.shape[0] - 1, min(max_draws, draws.shape[0])).round().astype(int)
    return draws[idx]


def _interval(x: np.ndarray, level: float) -> dict:
    lo, hi = 0.5 * (1 - level), 0.5 * (1 + level)
    return {"mean": float(np.mean(x)), "median": float(np.median(x)),
            "interval": [float(np.quantile(x, lo)), float(np.quantile(x, hi))]}


# Weights whose verdict says the data do not determine them on their own: a ratio with one of
# them in it would report the prior (or an arbitrary split of a combination) as a trade-off.
NOT_ON_THEIR_OWN = ("only in combination", "not identified")


def ratios(posterior, table: list[dict], level: float = 0.9) -> list[dict]:
    """``w_i / w_j`` over weights identified on their own, denominators of settled sign.

    Ratios of weights are heavy-tailed (a denominator near zero in a few draws moves the
    mean anywhere), so each is summarised by its median and central interval only.
    """
    draws = flat_draws(posterior)
    names = posterior.feature_names
    usable = [not r["pinned"] and r["verdict"] not in NOT_ON_THEIR_OWN for r in table]
    out = []
    for j, row in enumerate(table):
        lo, hi = row["interval"]
        if not usable[j] or lo <= 0.0 <= hi:
            continue  # the sign of w_j is not settled: the ratio would be unbounded
        for i, name in enumerate(names):
            if i != j and (usable[i] or table[i]["pinned"]):
                x = draws[:, i] / draws[:, j]
                q = np.quantile(x, [0.5 * (1 - level), 0.5 * (1 + level)])
                out.append({"numerator": name, "denominator": names[j],
                            "median": float(np.median(x)),
                            "interval": [float(q[0]), float(q[1])]})
    return out


def action_probabilities(posterior, states, level: float = 0.9) -> list[dict]:
    """Posterior intervals of ``pi(a|s)`` at the named states (per-draw soft policies)."""
    if not states:
        return []
    lik = posterior.model.likelihood
    mdp = lik.mdp
    states = [int(s) for s in states]
    probs = []
    beta_draws = _beta_draws(posterior)
    for w, beta in zip(_thinned(posterior), beta_draws, strict=True):
        pol = mdp.soft_policy(w, beta)
        probs.append(pol[0][states] if pol.ndim == 3 else pol[states])
    probs = np.asarray(probs)  # (draws, states, A)
    out = []
    for k, s in enumerate(states):
        for a in range(mdp.n_actions):
            out.append({"state": s, "action": a, **_interval(probs[:, k, a], level)})
    return out


def _beta_draws(posterior) -> np.ndarray:
    n = min(MAX_DRAWS, posterior.weights.shape[0] * posterior.weights.shape[1])
    if posterior.rationality is None:
        return np.full(n, posterior.model.fixed_rationality)
    flat = posterior.rationality.ravel()
    idx = np.linspace(0, flat.shape[0] - 1, n).round().astype(int)
    return flat[idx]


def _start_distribution(mdp, demos) -> np.ndarray:
    if mdp.start is not None:
        return mdp.start
    return np.bincount(demos.start_states, minlength=mdp.n_states) / demos.n_episodes


def _optimal(mdp, w, greedy0=None):
    """Hard-optimal values and greedy policy (discounted: policy iteration; finite: backward)."""
    reward = mdp.reward(w)
    if mdp.horizon is None:
        sol = policy_iteration(mdp.dynamics, reward, mdp.discount, greedy0)
        return sol.values, sol.greedy
    v = np.zeros(mdp.n_states)
    greedy = np.empty((mdp.horizon, mdp.n_states), dtype=np.int64)
    for t in range(mdp.horizon - 1, -1, -1):
        q = reward + mdp.discount * mdp.dynamics.expected_next(v)
        greedy[t] = np.argmax(q, axis=1)
        v = q[np.arange(mdp.n_states), greedy[t]]
    return v, greedy


def _value_of(mdp, w, greedy) -> np.ndarray:
    reward = mdp.reward(w)
    if mdp.horizon is None:
        return evaluate_deterministic(mdp.dynamics, reward, mdp.discount, greedy)
    v = np.zeros(mdp.n_states)
    rows = np.arange(mdp.n_states)
    for t in range(mdp.horizon - 1, -1, -1):
        q = reward + mdp.discount * mdp.dynamics.expected_next(v)
        v = q[rows, greedy[t]]
    return v


def policy_losses(mdp, demos, weights: np.ndarray,
                  estimate: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per-draw loss of acting optimally for ``estimate``: ``d0 . (V*_w - V^pi_w)``.

    Parameters
    ----------
    mdp, demos : the problem; ``d0`` is its start distribution, else the demonstrations'.
    weights : array (N, F)
        Reward weights to evaluate the estimate's policy under.
    estimate : array (F,)

    Returns
    -------
    (losses, fractions) : arrays (N,)
        The loss in reward units and as a fraction of each draw's optimal-value range.
    """
    _, pi_hat = _optimal(mdp, np.asarray(estimate, dtype=float))
    d0 = _start_distribution(mdp, demos)
    evd, frac = np.empty(len(weights)), np.empty(len(weights))
    greedy = None
    for m, w in enumerate(weights):
        # Consecutive draws are close: the previous greedy policy warm-starts the next.
        v_star, greedy = _optimal(mdp, w, greedy if mdp.horizon is None else None)
        evd[m] = max(float(d0 @ (v_star - _value_of(mdp, w, pi_hat))), 0.0)  # >= 0 up to rounding
        spread = float(v_star.max() - v_star.min())
        frac[m] = evd[m] / spread if spread > 0 else 0.0
    return evd, frac


def policy_risk(posterior, alpha: float = 0.95, estimate=None) -> dict:
    """Expected value difference of acting on the estimate, per posterior draw.

    For the policy optimal under ``estimate`` (default: the posterior-mean weights), each
    draw ``w`` gives ``EVD(w) = d0 . (V*_w - V^pi_w)`` from the start distribution ``d0``,
    in reward units and as a fraction of that draw's optimal-value range. The ``alpha``
    quantile is a high-confidence bound on the loss (Brown & Niekum 2018).
    """
    lik = posterior.model.likelihood
    w_hat = flat_draws(posterior).mean(axis=0) if estimate is None else np.asarray(estimate)
    evd, frac = policy_losses(lik.mdp, lik.demos, _thinned(posterior), w_hat)
    return {
        "alpha": alpha,
        "estimate": [float(x) for x in w_hat],
        "draws_used": int(evd.shape[0]),
        "mean": float(evd.mean()), "median": float(np.median(evd)),
        "bound": float(np.quantile(evd, alpha)),
        "fraction_mean": float(frac.mean()), "fraction_bound": float(np.quantile(frac, alpha)),
        "values": evd.tolist(), "fractions": frac.tolist(),
    }
