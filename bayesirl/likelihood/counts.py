"""Sufficient statistics of a demonstration set: visit counts and feature totals."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl.kernels import csr_rmatvec


class DemoCounts(NamedTuple):
    """Counts of demonstrated steps, per time step when the model has a horizon."""

    sa: np.ndarray  # (S*A,) or (H, S*A): visits of each (s, a) row
    s: np.ndarray  # (S,) or (H, S): visits of each state
    feature_total: np.ndarray  # (F,): sum over steps of phi(s_t, a_t)


def demo_counts(mdp, demos) -> DemoCounts:
    """Tally ``demos`` on ``mdp`` (time-resolved with a finite horizon)."""
    st = demos.steps
    n_s, n_a = mdp.n_states, mdp.n_actions
    rows = st.states * n_a + st.actions
    feature_total = mdp.features_sa[st.states, st.actions].sum(axis=0)
    if mdp.horizon is None:
        sa = np.bincount(rows, minlength=n_s * n_a).astype(np.float64)
        s = np.bincount(st.states, minlength=n_s).astype(np.float64)
        return DemoCounts(sa, s, feature_total)
    h = mdp.horizon
    sa = np.zeros((h, n_s * n_a))
    s = np.zeros((h, n_s))
    np.add.at(sa, (st.times, rows), 1.0)
    np.add.at(s, (st.times, st.states), 1.0)
    return DemoCounts(sa, s, feature_total)


def push_back(mdp, weights_sa: np.ndarray) -> np.ndarray:
    """``P^T x`` for ``x`` over ``(s, a)`` rows: mass sent to each successor state."""
    dyn = mdp.dynamics
    return csr_rmatvec(dyn.indptr, dyn.indices, dyn.data, weights_sa, dyn.n_states)


def policy_feature_sum(mdp, policy: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """``sum_s weights(s) sum_a policy(a|s) phi(s, a)``; leading time axes are summed too."""
    if mdp.state_features:
        return weights.reshape(-1, mdp.n_states).sum(axis=0) @ mdp.features
    mass = (policy * weights[..., None]).reshape(-1, mdp.n_states * mdp.n_actions).sum(axis=0)
    return mass @ mdp.features.reshape(-1, mdp.n_features)
