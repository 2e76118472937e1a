"""Structural findings: each claim is checked against the likelihood itself.

``structural.findings`` claims that some weight directions are undetermined by any number of
demonstrations (a constant reward, collinear features, potential-based shaping). The outside
references for why such directions exist: adding a constant to every reward leaves a
soft-optimal policy unchanged; adding ``g E[Phi(s')|s,a] - Phi(s)`` leaves optimal and
soft-optimal policies unchanged in the discounted model (Ng, Harada & Russell 1999, ICML,
Theorem 1; Cao, Cohen & Szpruch 2021, NeurIPS, for the entropy-regularised case). The
independent check of each claim: move the weights along the flagged direction and confirm the
log-likelihood does not move (and, as a control, that it does move along other directions).

Each problem is a 4x4 slippery grid plus a separate 2x2 island the demonstrations never reach
(their starts are uniform on the 4x4 part), 30 episodes x 10 steps: 300 steps, more than the
10-per-feature thin-data rule of thumb for up to 4 features, so thin-data never fires here.
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.report import structural
from bayesirl.scenarios import PARK_WEIGHTS, park_mdp

from .problems import MAIN_START, grid_with_island, park_demos, shaping_column

DISCOUNT, HORIZON = 0.9, 10
EPISODES, LENGTH = 30, 10
N_STEPS = EPISODES * LENGTH
# Soft likelihood solved to span tolerance LIK_TOL: every log pi(a|s) is within LIK_TOL of
# exact, so |L(w) - L(w')| <= 2 * N_STEPS * LIK_TOL = 6e-9 between two invariant points (the
# bound stated in BoltzmannLikelihood's docstring). The floating-point floor 64 eps |V| is
# below LIK_TOL while |V| < 700 (asserted below). The optimal-Q and finite-horizon models are
# exact solves, so the same bound covers them with room to spare.
LIK_TOL = 1e-11
LOGLIK_ATOL = 2 * N_STEPS * LIK_TOL
# A move along a determined direction must change L by far more than that: 1e-3 is 1.6e5
# times LOGLIK_ATOL (observed changes are O(1) to O(100)).
MOVES_BY = 1e-3
STEPS_ALONG = (-2.0, 1.5, 3.0)


def _world(columns: dict[str, np.ndarray], horizon=None, start=MAIN_START, seed=5):
    """MDP on the grid-with-island with the given feature columns, and its demonstrations."""
    p = grid_with_island()
    cols = [np.broadcast_to(c[:, None], (20, 4)) if c.ndim == 1 else c for c in columns.values()]
    mdp = bi.TabularMDP(p, np.stack(cols, axis=-1), discount=DISCOUNT, horizon=horizon,
                        feature_names=list(columns))
    rng = np.random.default_rng(seed)
    w = rng.normal(scale=0.7, size=len(columns))
    demos = bi.simulate(mdp, w, episodes=EPISODES, length=LENGTH, seed=seed, start=start)
    return mdp, demos, w


def _base_columns(seed=0):
    rng = np.random.default_rng(seed)
    return rng.normal(size=20), rng.normal(size=20), rng.normal(size=20)


def _island_column(seed=1):
    col = np.zeros(20)
    col[16:] = np.random.default_rng(seed).normal(size=4)
    return col


def _shaping(seed=2):
    potential = 2.0 * np.random.default_rng(seed).normal(size=20)
    return shaping_column(grid_with_island(), potential, DISCOUNT)


@cache
def case(name: str):
    """(mdp, demos, weights, expected findings as [(cause, features, direction)])."""
    f1, f2, _ = _base_columns()
    const = np.ones(20)
    if name == "constant":
        cols = {"f1": f1, "f2": f2, "const": const}
        expected = [("constant", {"const"}, [0, 0, 1])]
    elif name == "unreachable":
        cols = {"f1": f1, "f2": f2, "island": _island_column()}
        expected = [("constant", {"island"}, [0, 0, 1])]
    elif name == "duplicate":
        cols = {"f1": f1, "f2": f2, "f1copy": f1.copy()}
        expected = [("collinear", {"f1", "f1copy"}, [1, 0, -1])]
    elif name == "triple":
        cols = {"f1": f1, "f2": f2, "f3": f1 + 2.0 * f2 + 3.0}
        expected = [("collinear", {"f1", "f2", "f3"}, [1, 2, -1])]
    elif name == "shaping":
        cols = {"f1": f1, "f2": f2, "shape": _shaping()}
        expected = [("shaping", {"shape"}, [0, 0, 1])]
    elif name == "shaping-finite":
        # Stationary shaping is not invariant with a horizon (V_H = 0 breaks the telescoping);
        # the constant still is.
        cols = {"f1": f1, "f2": f2, "shape": _shaping(), "const": const}
        expected = [("constant", {"const"}, [0, 0, 0, 1])]
    else:
        raise KeyError(name)
    horizon = HORIZON if name == "shaping-finite" else None
    mdp, demos, w = _world(cols, horizon=horizon)
    return mdp, demos, w, expected


CASES = ["constant", "unreachable", "duplicate", "triple", "shaping", "shaping-finite"]


def _vector(mdp, combination: dict[str, float]) -> np.ndarray:
    return np.array([combination.get(n, 0.0) for n in mdp.feature_names])


def _parallel(u, v) -> bool:
    u, v = np.asarray(u, float), np.asarray(v, float)
    # |cos| = 1 up to rounding of the SVD / echelon form (their errors are ~1e-15).
    return abs(abs(u @ v) / (np.linalg.norm(u) * np.linalg.norm(v)) - 1.0) < 1e-9


@pytest.mark.parametrize("name", CASES)
def test_findings_match_the_construction(name):
    mdp, demos, _, expected = case(name)
    found = structural.findings(mdp, demos)
    assert [(f.cause, set(f.features)) for f in found] == [(c, s) for c, s, _ in expected]
    for f, (_, _, direction) in zip(found, expected, strict=True):
        assert _parallel(_vector(mdp, f.combination), direction), f.combination
        assert set(f.combination) == set(f.features)
        for feature in f.features:  # the sentence names what it is about
            assert feature in f.message


@pytest.mark.parametrize("q", ["soft", "optimal"])
@pytest.mark.parametrize("name", CASES)
def test_flagged_directions_leave_the_likelihood_unchanged(name, q):
    mdp, demos, w, _ = case(name)
    lik = bi.BoltzmannLikelihood(mdp, demos, q_function=q, tol=LIK_TOL)
    assert np.abs(mdp.solve(w).values).max() < 700  # keeps 64 eps |V| below LIK_TOL
    base = lik.value(w)
    found = structural.findings(mdp, demos)
    assert found, "every case here has at least one finding"
    for f in found:
        c = _vector(mdp, f.combination)
        for t in STEPS_ALONG:
            assert abs(lik.value(w + t * c) - base) <= LOGLIK_ATOL, (f.cause, t)
    # Control: f1 is determined in every case; moving along it changes the likelihood.
    e1 = np.eye(mdp.n_features)[0]
    assert abs(lik.value(w + e1) - base) > MOVES_BY


@pytest.mark.parametrize("q", ["soft", "optimal"])
def test_finite_horizon_shaping_really_changes_the_likelihood(q):
    # Why "shaping" must not be flagged with a horizon: the likelihood moves along it.
    mdp, demos, w, _ = case("shaping-finite")
    lik = bi.BoltzmannLikelihood(mdp, demos, q_function=q, tol=LIK_TOL)
    shape = np.eye(mdp.n_features)[mdp.feature_names.index("shape")]
    base = lik.value(w)
    for t in STEPS_ALONG:
        assert abs(lik.value(w + t * shape) - base) > MOVES_BY
    # ...while the same column in the discounted model is invariant (the discounted case).
    mdp_d, demos_d, w_d, _ = case("shaping")
    lik_d = bi.BoltzmannLikelihood(mdp_d, demos_d, q_function=q, tol=LIK_TOL)
    e = np.eye(3)[2]
    assert abs(lik_d.value(w_d + 3.0 * e) - lik_d.value(w_d)) <= LOGLIK_ATOL


def test_feature_on_unreachable_states_is_not_flagged_once_reachable():
    # Negative control for "unreachable": start some episodes on the island and the island
    # feature varies over reachable states, so nothing is undetermined.
    f1, f2, _ = _base_columns()
    start = np.r_[np.full(16, 0.5 / 16), np.full(4, 0.5 / 4)]
    mdp, demos, w = _world({"f1": f1, "f2": f2, "island": _island_column()}, start=start)
    assert np.any(demos.start_states >= 16)
    assert structural.findings(mdp, demos) == []
    lik = bi.BoltzmannLikelihood(mdp, demos, tol=LIK_TOL)
    assert abs(lik.value(w + np.eye(3)[2]) - lik.value(w)) > MOVES_BY


def test_reachable_states_are_the_component_of_the_starts():
    mdp, demos, _, _ = case("unreachable")
    np.testing.assert_array_equal(structural.reachable_states(mdp, demos.start_states),
                                  np.arange(16))
    np.testing.assert_array_equal(structural.reachable_states(mdp, np.array([17])),
                                  np.arange(16, 20))


@pytest.mark.parametrize("start", [None, 0], ids=["uniform-start", "start-0"])
def test_park_gets_no_false_flags(start):
    # The README's problem (well determined): no structural finding at all.
    mdp = park_mdp()
    demos = (park_demos(mdp, PARK_WEIGHTS) if start is None else
             bi.simulate(mdp, PARK_WEIGHTS, episodes=40, length=15, seed=1, start=start))
    assert structural.findings(mdp, demos) == []
