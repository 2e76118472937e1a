"""Bad inputs to ``suggest`` raise one InputError naming the field and the offending value."""

from __future__ import annotations

import numpy as np
import pytest

from bayesirl import InputError, suggest

from .conftest import posterior_from_draws, some_demos, toy_mdp


@pytest.fixture(scope="module")
def post():
    mdp = toy_mdp()
    draws = np.array([[2.0, 1.0], [1.0, 2.0]])
    return posterior_from_draws(mdp, some_demos(mdp, [1.0, 1.0]), draws)


@pytest.mark.parametrize(("kwargs", "match"), [
    ({"candidates": "every-state"}, "unknown candidates 'every-state'"),
    ({"candidates": [0, 4]}, r"candidates\[1\] = 4; state out of range 0..3"),
    ({"candidates": [-1]}, r"candidates\[0\] = -1; state out of range"),
    ({"candidates": ["ask:1"]}, r"candidates\[0\] = 'ask:1'"),
    ({"candidates": [1.5]}, r"candidates\[0\] = 1.5"),
    ({"candidates": []}, "empty list"),
    ({"budget": 0}, "budget must be an integer >= 1; got 0"),
    ({"budget": 1.5}, "budget must be an integer >= 1; got 1.5"),
    ({"budget": True}, "budget must be an integer >= 1; got True"),
    ({"budget": 10**9}, "budget 1000000000 is more than the limit of 100"),
    ({"target": "speed"}, "unknown target 'speed'"),
    ({"target": "left/speed"}, "unknown target 'left/speed'"),
    ({"target": 3}, "target must be a feature name"),
    ({"length": 0}, "length must be a positive integer; got 0"),
    ({"n_outer": 1}, "n_outer must be an integer >= 2; got 1"),
])
def test_bad_input_names_the_value(post, kwargs, match):
    with pytest.raises(InputError, match=match):
        suggest(post, **kwargs)


def test_explicit_labels_and_targets_are_accepted(post):
    out = suggest(post, ["query:2", "start:1", 3], target="left/right", n_outer=8, length=2)
    assert [r.candidate for r in out][0] == "query:2"
    assert {r.kind for r in out} == {"query", "start"}
    assert all(np.isfinite(r.target_sd) for r in out)


def test_ratio_with_zero_denominator_is_refused():
    mdp = toy_mdp()
    post = posterior_from_draws(mdp, some_demos(mdp, [1.0, 1.0]), np.eye(2))
    with pytest.raises(InputError, match="'right' is 0 in 1 draws"):
        suggest(post, target="left/right")
