"""Which comparison to ask next: expected information gain of a question "A or B?".

For a candidate pair with feature-sum difference ``d`` (``A`` minus ``B``, see
:func:`bayesirl.evidence.discounted_features`) and posterior draws ``w_1..w_N``, the answer's
probability under draw ``i`` is ``p_i = sigmoid(beta_c d . w_i)``. The gain is the mutual
information between the answer and the weights (Lindley 1956; for preference queries Sadigh
et al. 2017, Biyik & Sadigh 2018), exact over the two answers and a Monte-Carlo average over
the draws:

    gain = H(mean_i p_i) - mean_i H(p_i),   H(p) = -p log p - (1 - p) log(1 - p)  (nats).

With a sampled judge rationality each draw brings its own ``beta_c``; when "no preference"
is a possible answer (Davidson's tie parameter ``nu``, per draw too) the answer has three
outcomes and the entropies are over three (:mod:`bayesirl.evidence.comparisons`).

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


def _plogp(p: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(p > 0, p * np.log(np.where(p > 0, p, 1.0)), 0.0)


def _per_draw(x, n: int, what: str) -> np.ndarray:
    v = np.broadcast_to(np.asarray(x, dtype=np.float64), (n,))
    if not np.all(np.isfinite(v)) or np.any(v <= 0):
        raise InputError(f"comparison gains: {what} must be positive; got {x!r}")
    return v


def answer_probabilities(draws, differences, rationality=1.0, tie=None) -> np.ndarray:
    """``(N, K, m)``: per draw and candidate, the probabilities of the answers (first
    preferred, second preferred[, no preference]); ``m = 3`` with a tie parameter."""
    w = np.asarray(draws, dtype=np.float64)
    z = _per_draw(rationality, w.shape[0], "rationality")[:, None] * (
        w @ np.asarray(differences, dtype=np.float64).T)
    if tie is None:
        first = np.exp(-np.logaddexp(0.0, -z))
        return np.stack([first, np.exp(-np.logaddexp(0.0, z))], axis=-1)
    log_nu = np.log(_per_draw(tie, w.shape[0], "tie"))[:, None] * np.ones_like(z)
    top = np.stack([z / 2, -z / 2, log_nu], axis=-1)
    return np.exp(top - np.logaddexp(np.logaddexp(z / 2, -z / 2), log_nu)[..., None])


def comparison_gains(draws, differences, rationality=1.0, tie=None) -> ComparisonGains:
    """Expected information gain of asking each candidate pair.

    Parameters
    ----------
    draws : array (N, F)
        Posterior draws of the weights.
    differences : array (K, F)
        Per candidate, the first episode's discounted feature sum minus the second's.
    rationality : float or array (N,)
        The judge's ``beta_c``: fixed, or one per draw when it is sampled.
    tie : None, float or array (N,)
        Davidson's tie parameter when "no preference" is a possible answer (else None).
    """
    w = np.asarray(draws, dtype=np.float64)
    d = np.asarray(differences, dtype=np.float64)
    if w.ndim != 2 or d.ndim != 2 or w.shape[1] != d.shape[1] or w.shape[0] < 2:
        raise InputError(f"comparison gains: draws (N >= 2, F) and differences (K, F) must "
                         f"share F; got {w.shape} and {d.shape}")
    p = answer_probabilities(w, d, rationality, tie)  # (N, K, m)
    p_bar = p.mean(axis=0)
    h_each = -_plogp(p).sum(axis=-1)
    gain = -_plogp(p_bar).sum(axis=-1) - h_each.mean(axis=0)
    with np.errstate(divide="ignore"):
        slope = -np.log(p_bar)  # dH/dp_j at the mean, less the constant that cancels
    slope = np.where(np.isfinite(slope), slope, 0.0)
    influence = np.sum(slope * (p - p_bar), axis=-1) - (h_each - h_each.mean(axis=0))
    stderr = influence.std(axis=0, ddof=1) / np.sqrt(w.shape[0])
    # Draws that agree on every answer's probability leave nothing to learn: exactly 0, not
    # the rounding of two equal entropies.
    agree = np.all(p.max(axis=0) == p.min(axis=0), axis=-1)
    return ComparisonGains(np.where(agree, 0.0, np.maximum(gain, 0.0)), stderr, p_bar[:, 0])


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
