"""The ridge suite's problems and its markdown (the sampling itself runs in ``bayesirl bench``)."""

from __future__ import annotations

import numpy as np

from bayesirl.bench import ridge
from bayesirl.io import read_problem


def test_the_yardstick_is_the_same_park_without_the_ridge(tmp_path):
    cases = ridge._problems(tmp_path)
    plain = read_problem(cases["no ridge (wet dropped)"][0]).mdp
    wet = read_problem(cases["mud = wet (ridge)"][0]).mdp
    assert plain.feature_names == ("mud", "slope", "shade", "water")
    assert cases["no ridge (wet dropped)"][1] == cases["mud = wet (ridge)"][1]  # same walks
    i = list(wet.feature_names).index
    # the ridge: wet is mud, column for column; the yardstick keeps every other column
    assert np.array_equal(wet.features[:, i("wet")], wet.features[:, i("mud")])
    assert np.array_equal(plain.features, wet.features[:, [i(f) for f in plain.feature_names]])
    # negative control: the replacement really changed the file
    assert ridge._without_wet('["water", "wet"]') != '["water", "wet"]'


def test_markdown_states_the_target_and_whether_it_is_met():
    rows = [{"problem": "no ridge (wet dropped)", "dense_mass": False, "evals_per_ess": 8.0},
            {"problem": "mud = wet (ridge)", "dense_mass": False, "evals_per_ess": 300.0},
            {"problem": "mud = wet (ridge)", "dense_mass": True, "evals_per_ess": 30.0}]
    for r in rows:
        r.update(draws=10, min_bulk_ess=40.0, steps_per_draw=3.0, divergences=0,
                 max_rhat=1.0, wall_s=1.0, vs_no_ridge=r["evals_per_ess"] / 8.0)
    text = "\n".join(ridge.markdown({"rows": rows, "load_1min": [1.0, 2.0]}))
    assert "| 3.8x | no |" in text  # 30 / 8 > 3: not met
    rows[2].update(evals_per_ess=16.0, vs_no_ridge=2.0)
    text = "\n".join(ridge.markdown({"rows": rows, "load_1min": [1.0, 2.0]}))
    assert "| 2.0x | yes |" in text
