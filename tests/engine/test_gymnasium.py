"""TabularMDP.from_gymnasium on gymnasium's toy-text environments.

Outside reference: gymnasium (Farama Foundation) itself: the transition tables
``env.unwrapped.P[s][a] = [(prob, next_state, reward, terminated), ...]``, the start
distribution ``env.unwrapped.initial_state_distrib``, the map ``env.unwrapped.desc`` and
trajectories produced by ``env.step``. The expected matrices below are rebuilt from those
tables with plain dictionaries, independently of bayesirl/model/gym.py.

Terminal conventions (from the environments' documentation and source):
* FrozenLake: holes 'H' and the goal 'G' end the episode; their rows become self-loops.
* CliffWalking: reaching the goal (3, 11) = state 47 ends the episode; 47 becomes absorbing
  (the cliff sends the agent back to the start without ending the episode).
* Taxi: a successful drop-off ends the episode, but its landing state is also reachable by
  ordinary moves, so every terminal outcome goes to one added absorbing state, index 500.
"""

from __future__ import annotations

from collections import defaultdict

import gymnasium as gym
import numpy as np
import pytest

import bayesirl as bi
from bayesirl import InputError

# Rows of the table add up to 1 up to a few ulps (e.g. three outcomes of 1/3 each).
ROW_TOL = 1e-12

ENVS = [
    pytest.param("FrozenLake-v1", {"is_slippery": True}, id="frozenlake-slippery"),
    pytest.param("FrozenLake-v1", {"is_slippery": False}, id="frozenlake-dry"),
    pytest.param("CliffWalking-v1", {}, id="cliffwalking"),
    pytest.param("CliffWalking-v1", {"is_slippery": True}, id="cliffwalking-slippery"),
    pytest.param("Taxi-v4", {}, id="taxi"),
    pytest.param("Taxi-v4", {"is_rainy": True}, id="taxi-rainy"),
]


def _absorbing_and_extra(name, base):
    """States the environment's semantics make absorbing, and whether a state is appended."""
    if name.startswith("FrozenLake"):
        letters = base.desc.ravel()
        return {int(s) for s in np.flatnonzero((letters == b"H") | (letters == b"G"))}, False
    if name.startswith("CliffWalking"):
        return {47}, False
    return set(), True  # Taxi: only the appended state 500 is absorbing


def _expected_rows(name, base):
    """{(s, a): {s': prob}} summed over duplicate outcomes, terminal outcomes -> 500 (Taxi)."""
    absorbing, extra = _absorbing_and_extra(name, base)
    n_s = len(base.P)
    rows = {}
    for s, by_action in base.P.items():
        if s in absorbing:
            continue
        for a, outcomes in by_action.items():
            row = defaultdict(float)
            for prob, s2, _reward, terminated in outcomes:
                row[n_s if (extra and terminated) else int(s2)] += prob
            rows[(s, a)] = dict(row)
    return rows


def _load(name, kwargs, seed=0):
    env = gym.make(name, **kwargs)
    base = env.unwrapped
    n_s = len(base.P) + (1 if name.startswith("Taxi") else 0)
    features = np.random.default_rng(seed).normal(size=(n_s, 3))
    return env, base, bi.TabularMDP.from_gymnasium(env, features, discount=0.95)


@pytest.mark.parametrize(("name", "kwargs"), ENVS)
def test_transitions_match_the_gymnasium_table(name, kwargs):
    env, base, mdp = _load(name, kwargs)
    n_env = len(base.P)
    absorbing, extra = _absorbing_and_extra(name, base)
    assert mdp.n_states == n_env + extra and mdp.n_actions == env.action_space.n
    assert mdp.discount == 0.95 and mdp.horizon is None
    dense = mdp.transitions.toarray().reshape(mdp.n_states, mdp.n_actions, mdp.n_states)
    np.testing.assert_allclose(dense.sum(axis=2), 1.0, rtol=0, atol=ROW_TOL)
    # Absorbing states loop to themselves under every action.
    for s in absorbing | ({n_env} if extra else set()):
        np.testing.assert_array_equal(dense[s, :, s], 1.0)
    # Every other row is the gymnasium table with duplicate outcomes merged.
    expected = _expected_rows(name, base)
    assert len(expected) == (n_env - len(absorbing)) * mdp.n_actions
    for (s, a), row in expected.items():
        want = np.zeros(mdp.n_states)
        for s2, prob in row.items():
            want[s2] = prob
        np.testing.assert_allclose(dense[s, a], want, rtol=0, atol=ROW_TOL,
                                   err_msg=f"{name} {kwargs} row (s={s}, a={a})")
    # The start distribution is the environment's (with zero mass on an appended state).
    start = np.asarray(base.initial_state_distrib, dtype=float)
    np.testing.assert_array_equal(mdp.start[:n_env], start)
    if extra:
        assert mdp.start[n_env] == 0.0


def test_frozenlake_slippery_has_duplicate_outcomes_that_are_merged():
    # The table lists e.g. (s=0, LEFT) as LEFT, DOWN, UP with UP and LEFT both clamped to 0:
    # the model must hold their sum, 2/3, in one entry.
    env, base, mdp = _load("FrozenLake-v1", {"is_slippery": True})
    outcomes = base.P[0][0]
    assert len({o[1] for o in outcomes}) < len(outcomes)  # duplicates present in the source
    assert mdp.transitions[0 * 4 + 0, 0] == pytest.approx(sum(o[0] for o in outcomes
                                                               if o[1] == 0), abs=ROW_TOL)


def test_terminal_conventions():
    _, base, lake = _load("FrozenLake-v1", {"is_slippery": True})
    holes_goal = np.flatnonzero(np.isin(base.desc.ravel(), [b"H", b"G"]))
    assert holes_goal.tolist() == [5, 7, 11, 12, 15]  # the default 4x4 map
    for s in holes_goal:
        assert lake.transitions[s * 4 : s * 4 + 4, s].toarray().ravel().tolist() == [1.0] * 4
        assert lake.transitions[s * 4 : s * 4 + 4].nnz == 4
    _, base, cliff = _load("CliffWalking-v1", {})
    assert any(o[1] != 47 for a in range(4) for o in base.P[47][a])  # gym lets 47 move on
    assert cliff.transitions[47 * 4 : 48 * 4, 47].toarray().ravel().tolist() == [1.0] * 4
    assert cliff.transitions[47 * 4 : 48 * 4].nnz == 4
    _, base, taxi = _load("Taxi-v4", {})
    assert taxi.n_states == 501
    drops = [(s, a) for s in base.P for a in base.P[s] if any(o[3] for o in base.P[s][a])]
    assert drops and all(a == 5 for _, a in drops)  # only drop-offs terminate
    for s, _a in drops:
        assert taxi.transitions[s * 6 + 5, 500] == 1.0
    assert taxi.transitions[500 * 6 : 501 * 6, 500].toarray().ravel().tolist() == [1.0] * 6


def test_taxi_features_without_the_absorbing_row_are_refused():
    env = gym.make("Taxi-v4")
    with pytest.raises(InputError) as info:
        bi.TabularMDP.from_gymnasium(env, np.ones((500, 2)), discount=0.95)
    assert "(501, F)" in str(info.value) and "(500, 2)" in str(info.value)


def test_taxi_feature_error_explains_the_added_state():
    env = gym.make("Taxi-v4")
    with pytest.raises(InputError, match=r"absorbing"):
        bi.TabularMDP.from_gymnasium(env, np.ones((500, 2)), discount=0.95)


@pytest.mark.parametrize(("name", "kwargs"), ENVS)
def test_simulated_and_real_trajectories_pass_the_dynamics_check(name, kwargs):
    env, base, mdp = _load(name, kwargs, seed=1)
    w = np.array([1.0, -0.5, 0.25])
    demos = bi.simulate(mdp, w, episodes=10, length=25, rationality=2.0, seed=3)
    demos.check(mdp)
    assert np.all(mdp.start[demos.start_states] > 0)
    # Trajectories from gymnasium's own env.step, terminal landings mapped as the model does.
    extra = name.startswith("Taxi")
    states, actions = [], []
    env.action_space.seed(5)
    for ep in range(10):
        s, _ = env.reset(seed=100 + ep)
        ss, aa = [int(s)], []
        for _ in range(25):
            a = int(env.action_space.sample())
            s, _r, terminated, truncated, _ = env.step(a)
            aa.append(a)
            ss.append(len(base.P) if (extra and terminated) else int(s))
            if terminated or truncated:
                break
        states.append(ss)
        actions.append(aa)
    # Random walks seldom finish a Taxi ride or reach the cliff's goal: also step gymnasium
    # from states placed next to a terminal outcome until one terminal step is recorded.
    # (Not from an absorbing state: there the episode is already over.)
    absorbing, _ = _absorbing_and_extra(name, base)
    starts = [(s, a) for s in base.P for a in base.P[s]
              if s not in absorbing and any(o[3] for o in base.P[s][a])]
    n_terminal = 0
    for k in range(50):
        s, a = starts[(7 * k) % len(starts)]
        env.reset(seed=200 + k)
        base.s = s
        s2, _r, terminated, _trunc, _ = env.step(a)
        states.append([s, len(base.P) if (extra and terminated) else int(s2)])
        actions.append([a])
        n_terminal += bool(terminated)
    assert n_terminal > 0
    real = bi.Demonstrations.from_arrays(states, actions)
    real.check(mdp)
    lik = bi.BoltzmannLikelihood(mdp, real, rationality=2.0)
    assert np.isfinite(lik.evaluate(w).loglik)
