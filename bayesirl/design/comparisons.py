"""Which comparison to ask next: expected information gain of a question "A or B?".

For a candidate pair with feature-sum difference ``d`` (``A`` minus ``B``, see
:func:`bayesirl.evidence.discounted_features`) and posterior draws ``w_1..w_N``, the answer's
probability under draw ``i`` is ``p_i = sigmoid(beta_c d . w_i)``. The gain is the mutual
information between the answer and the weights (Lindley 1956; for preference queries Sadigh
et al. 2017, Biyik & Sadigh 2018), exact over the two answers and a Monte-Carlo average over
the draws:

    gain = H(mean_i p_i) - mean_i H(p_i),   H(p) = -p log p - (1 - p) log(1 - p)  (nats).

Its standard error is the delta method's, from the draws taken as independent (pass draws
thinned to about their effective sample size, or read it as a lower bound).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl.errors import InputError


class ComparisonGains(NamedTuple):
    """Per candidate pair: gain (nats), its standard error, and P(A preferred)."""

    gain: np.ndarray
    stderr: np.ndarray
    p_first: np.ndarray

    def order(self) -> np.ndarray:
        """Candidate indices, most informative first (ties by index)."""
        return np.lexsort((np.arange(self.gain.size), -self.gain))


def _entropy(p: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        h = -(p * np.log(p) + (1 - p) * np.log1p(-p))
    return np.where((p <= 0) | (p >= 1), 0.0, h)


def comparison_gains(draws, differences, rationality: float = 1.0) -> ComparisonGains:
    """Expected information gain of asking each candidate pair.

    Parameters
    ----------
    draws : array (N, F)
        Posterior draws of the weights.
    differences : array (K, F)
        Per candidate, the first episode's discounted feature sum minus the second's.
    rationality : float
        The judge's ``beta_c``.
    """
    w = np.asarray(draws, dtype=np.float64)
    d = np.asarray(differences, dtype=np.float64)
    if w.ndim != 2 or d.ndim != 2 or w.shape[1] != d.shape[1] or w.shape[0] < 2:
        raise InputError(f"comparison gains: draws (N >= 2, F) and differences (K, F) must "
                         f"share F; got {w.shape} and {d.shape}")
    beta = float(rationality)
    if not np.isfinite(beta) or beta <= 0:
        raise InputError(f"comparison gains: rationality must be positive; got {rationality!r}")
    z = beta * (w @ d.T)  # (N, K)
    p = np.exp(-np.logaddexp(0.0, -z))
    p_bar = p.mean(axis=0)
    h_each = _entropy(p)
    gain = _entropy(p_bar) - h_each.mean(axis=0)
    with np.errstate(divide="ignore"):
        slope = np.log1p(-p_bar) - np.log(p_bar)  # dH/dp at the mean
    slope = np.where(np.isfinite(slope), slope, 0.0)
    influence = slope * (p - p_bar) - (h_each - h_each.mean(axis=0))
    stderr = influence.std(axis=0, ddof=1) / np.sqrt(w.shape[0])
    return ComparisonGains(np.maximum(gain, 0.0), stderr, p_bar)


def comparison_gains_ref(draws, differences, rationality: float = 1.0) -> np.ndarray:
    """Reference: the mutual information from the joint table ``p(i, answer)``, one pair at a
    time (no shortcut through entropies of the mean)."""
    from scipy.special import expit

    w, d = np.asarray(draws, float), np.asarray(differences, float)
    out = np.empty(d.shape[0])
    for k in range(d.shape[0]):
        first = expit(rationality * w @ d[k])
        joint = np.stack([first, 1 - first], axis=1) / w.shape[0]  # (N, 2)
        marg = joint.sum(axis=0)
        keep = joint > 0
        ratio = joint / (marg[None, :] / w.shape[0])
        out[k] = float(np.sum(joint[keep] * np.log(ratio[keep])))
    return out


def pairs_from_draws(mdp, draws, n_pairs: int, length: int, seed: int = 0):
    """Candidate questions from the posterior: episodes simulated from the soft policies of
    randomly chosen draws (one episode per draw), paired up two by two.

    Returns ``(episodes, differences)``: ``2 * n_pairs`` ``(states, actions)`` episodes and,
    per pair, the first's discounted feature sum minus the second's (for
    :func:`comparison_gains`).
    """
    from bayesirl.evidence.comparisons import discounted_features
    from bayesirl.model import simulate

    w = np.asarray(draws, dtype=np.float64)
    rng = np.random.default_rng(seed)
    picks = rng.choice(w.shape[0], size=2 * n_pairs, replace=w.shape[0] < 2 * n_pairs)
    episodes = []
    for k, i in enumerate(picks):
        demos = simulate(mdp, w[i], episodes=1, length=length, seed=int(seed * 100_003 + k))
        episodes.append(demos.episodes[0])
    phi = np.array([discounted_features(mdp, s, a) for s, a in episodes])
    return episodes, phi[0::2] - phi[1::2]
