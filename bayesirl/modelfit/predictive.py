"""Posterior predictive checks: do demonstrations replicated from the posterior look like
the recorded ones?

From each of ``R`` posterior draws (spread evenly over the chains):

* **choices**: at every recorded step, an action drawn from the draw's policy at the
  recorded state (and time); per state, the recorded count of each action against the 95%
  band of the replicated counts;
* **rollouts**: every episode replayed from its recorded start state for its recorded
  length; per feature, the mean feature count per episode; the share of episodes that reach
  an absorbing state.

Each check's statistic is compared with its replicates by a posterior predictive p-value
(Gelman, Meng & Stern 1996); a check is flagged when its p-value is below 0.05 divided by
the number of checks (Bonferroni, common practice). Posterior predictive p-values are
conservative (they concentrate near 0.5 under a well-specified model), so the false alarm
rate is at most about 5% and the checks miss small misfits.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from bayesirl.kernels import sample_episodes
from bayesirl.likelihood.pointwise import log_policy
from bayesirl.posterior.loglik import draw_quantities

REPLICATES = 200
FAMILY_ALPHA = 0.05  # family-wise false alarm rate of all checks together (common practice)
BAND = 0.95


@dataclass
class PredictiveCheck:
    """Results of :func:`predictive_check` (plain numbers, for the report and tests)."""

    replicates: int
    visits: np.ndarray  # (S,) recorded visits per state
    missed_states: np.ndarray  # (S,) bool: recorded action counts outside the 95% band
    expected_missed: float  # mean number of such states in the replicates themselves
    p_values: dict  # check name -> posterior predictive p-value
    recorded: dict  # check name -> recorded statistic
    band: dict  # check name -> (low, high) 95% band of the replicated statistic
    threshold: float = field(default=FAMILY_ALPHA)

    @property
    def flagged(self) -> list[str]:
        """Checks whose p-value is below the Bonferroni threshold."""
        cut = self.threshold / max(1, len(self.p_values))
        return [k for k, p in self.p_values.items() if p < cut]


def predictive_check(posterior, *, replicates: int = REPLICATES, seed: int = 0) -> PredictiveCheck:
    """Replicate the demonstrations from ``replicates`` posterior draws and compare."""
    rng = np.random.default_rng(seed)
    lik = posterior.model.likelihood
    mdp, demos = lik.mdp, lik.demos
    picks = _draws(posterior, replicates)
    n_s, n_a = mdp.n_states, mdp.n_actions
    counts = np.zeros((len(picks), n_s, n_a))
    feats = np.zeros((len(picks), mdp.n_features))
    reach = np.zeros(len(picks))
    absorbing = absorbing_states(mdp)
    for r, (c, d) in enumerate(picks):
        policies = _policies(posterior, c, d)
        counts[r] = _replicate_choices(policies, demos, n_s, n_a, rng)
        states, actions = _rollouts(mdp, policies, demos, rng)
        feats[r] = _feature_means(mdp, states, actions, demos.lengths)
        reach[r] = _reached(states, demos.lengths, absorbing)
    st = demos.steps
    observed = np.bincount(st.states * n_a + st.actions, minlength=n_s * n_a).reshape(n_s, n_a)
    lo, hi = np.quantile(counts, [(1 - BAND) / 2, (1 + BAND) / 2], axis=0)
    visits = observed.sum(axis=1)
    missed = (((observed < lo) | (observed > hi)).any(axis=1)) & (visits > 0)
    rep_missed = (((counts < lo) | (counts > hi)).any(axis=2)).sum(axis=1)
    p, recorded, band = {}, {}, {}
    p["choices"] = float(np.mean(rep_missed >= missed.sum()))
    recorded["choices"], band["choices"] = int(missed.sum()), _band(rep_missed)
    rec_states = [s[: n + 1] for (s, _), n in zip(demos.episodes, demos.lengths, strict=True)]
    rec_feats = _feature_means(mdp, rec_states, [a for _, a in demos.episodes], demos.lengths)
    for i, name in enumerate(mdp.feature_names):
        key = f"feature:{name}"
        p[key], recorded[key], band[key] = _two_sided(feats[:, i], rec_feats[i])
    if absorbing.any():
        rec_reach = _reached(rec_states, demos.lengths, absorbing)
        p["outcome"], recorded["outcome"], band["outcome"] = _two_sided(reach, rec_reach)
    return PredictiveCheck(len(picks), visits, missed, float(rep_missed.mean()), p, recorded,
                           band)


def _band(x) -> tuple[float, float]:
    lo, hi = np.quantile(x, [(1 - BAND) / 2, (1 + BAND) / 2])
    return float(lo), float(hi)


def _two_sided(reps: np.ndarray, value: float) -> tuple[float, float, tuple]:
    """Two-sided posterior predictive p-value (ties count half)."""
    above = np.mean(reps > value) + 0.5 * np.mean(reps == value)
    return float(min(1.0, 2 * min(above, 1 - above))), float(value), _band(reps)


def _draws(posterior, n: int) -> list[tuple[int, int]]:
    total = posterior.n_chains * posterior.n_draws
    flat = np.unique(np.linspace(0, total - 1, min(n, total)).astype(int))
    return [(int(k) // posterior.n_draws, int(k) % posterior.n_draws) for k in flat]


def _policies(posterior, c: int, d: int) -> np.ndarray:
    """``(E, H, S, A)``-indexable policies: one per episode (its demonstrator's reward)."""
    lik = posterior.model.likelihood
    q = draw_quantities(posterior, c, d)
    beta = q["rationality"]
    # the weights only: a judge's quantities (comparisons) play no part in the demonstrations
    names = [k for k in q if k == "weights" or k.startswith("weights/")]
    tables = {k: np.exp(log_policy(lik.mdp, lik.q_function, np.asarray(q[k]), beta)[0])
              for k in names}
    tables = {k: (v if v.ndim == 3 else v[None]) for k, v in tables.items()}
    if posterior.groups is None:
        return [tables["weights"]] * lik.demos.n_episodes
    who = list(posterior.groups["demonstrators"])
    return [tables[f"weights/{who.index(n)}"] for n in lik.demos.demonstrators]


def _replicate_choices(policies, demos, n_s, n_a, rng) -> np.ndarray:
    st = demos.steps
    probs = np.empty((st.states.size, n_a))
    for e in range(demos.n_episodes):
        idx = np.flatnonzero(st.episodes == e)
        pol = policies[e]
        t = np.minimum(st.times[idx], pol.shape[0] - 1)
        probs[idx] = pol[t, st.states[idx]]
    cum = np.cumsum(probs, axis=1)
    u = rng.random(st.states.size) * cum[:, -1]
    acts = np.minimum((u[:, None] > cum).sum(axis=1), n_a - 1)
    return np.bincount(st.states * n_a + acts, minlength=n_s * n_a).reshape(n_s, n_a)


def _rollouts(mdp, policies, demos, rng):
    dyn = mdp.dynamics
    states, actions = [], []
    for e, ((s, _), n) in enumerate(zip(demos.episodes, demos.lengths, strict=True)):
        u = rng.random((1, int(n), 2))
        ss, aa = sample_episodes(dyn.indptr, dyn.indices, dyn.data,
                                 np.ascontiguousarray(policies[e]),
                                 np.array([s[0]], dtype=np.int64), int(n), u)
        states.append(ss[0])
        actions.append(aa[0])
    return states, actions


def _feature_means(mdp, states, actions, lengths) -> np.ndarray:
    phi = mdp.features_sa
    total = sum(phi[s[: len(a)], a].sum(axis=0) for s, a in zip(states, actions, strict=True))
    return total / len(lengths)


def _reached(states, lengths, absorbing) -> float:
    hit = [bool(absorbing[s[: n + 1]].any()) for s, n in zip(states, lengths, strict=True)]
    return float(np.mean(hit))


def absorbing_states(mdp) -> np.ndarray:
    """``(S,)`` bool: every action stays in the state with probability 1."""
    p = mdp.transitions.tocsr()
    n_a = mdp.n_actions
    rows = np.arange(p.shape[0])
    stay = np.asarray(p[rows, rows // n_a]).ravel() >= 1.0 - 1e-12
    return stay.reshape(-1, n_a).all(axis=1)
