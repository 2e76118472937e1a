"""``fit`` switches the dense mass matrix on where the posterior is a ridge, and only there.

Measured on the collinear park variant (``wet`` on every mud cell, 40 walks, 4 chains x 600
draws): 303 gradients per effective draw with the diagonal mass matrix, 5.2 with the dense
one, against 7.7 for the plain park (diagonal). The tests check the decision itself: the exact
ridge (a structural finding), a near ridge (the Laplace approximation's correlation, checked
against the correlation of the sampled posterior as the outside reference: NUTS draws), and
the plain park as the negative control.
"""

from __future__ import annotations

import numpy as np

import bayesirl as bi
from bayesirl.commands import mass
from bayesirl.execution.backend import Processes
from bayesirl.io import read_problem
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.scenarios import PARK_WEIGHTS
from bayesirl.scenarios.bundled import PARK_TOML

SETTINGS = {"method": "nuts", "dense_mass": False}


def _problem(tmp_path, toml: str):
    path = tmp_path / "p.toml"
    path.write_text(toml)
    problem = read_problem(path)
    f = len(problem.mdp.feature_names)
    weights = np.r_[PARK_WEIGHTS, np.zeros(f - 4)]
    demos = bi.simulate(problem.mdp, weights, episodes=40, length=15, seed=1)
    return problem, BoltzmannLikelihood(problem.mdp, demos)


def _with_wet(cells: str | None = None) -> str:
    toml = PARK_TOML.replace('features = ["mud", "slope", "shade", "water"]',
                             'features = ["mud", "slope", "shade", "water", "wet"]')
    toml = toml.replace('"m" = { mud = 1 }', '"m" = { mud = 1, wet = 1 }')
    if cells is not None:  # one extra wet-only cell: a near ridge, not an exact one
        toml = toml.replace('"W" = { water = 1, goal = true }',
                            '"W" = { water = 1, goal = true }\n"w" = { wet = 1 }')
        toml = toml.replace(cells, cells.replace(".", "w", 1))
    return toml


def test_plain_park_keeps_the_diagonal_mass_matrix(tmp_path):
    problem, lik = _problem(tmp_path, PARK_TOML)
    settings, why = mass.choose(problem, lik, SETTINGS)
    assert settings == SETTINGS and why is None


def test_collinear_features_switch_it_on(tmp_path):
    problem, lik = _problem(tmp_path, _with_wet())
    settings, why = mass.choose(problem, lik, SETTINGS)
    assert settings["dense_mass"] is True and "collinear" in why and "wet" in why
    # An explicit choice and the random-walk sampler are left alone.
    assert mass.choose(problem, lik, {**SETTINGS, "dense_mass": True})[1] is None
    assert mass.choose(problem, lik, {"method": "random-walk"})[1] is None


def test_near_ridge_is_found_by_the_laplace_correlation(tmp_path):
    problem, lik = _problem(tmp_path, _with_wet("tt..m.W"))
    settings, why = mass.choose(problem, lik, SETTINGS)
    assert settings["dense_mass"] is True and "mud and wet are correlated" in why, why
    # Outside reference: the correlation of NUTS draws from the same posterior.
    rho, _ = mass._laplace_correlation(lik, np.full(5, 25.0), np.zeros(5))
    post = bi.sample(lik, chains=2, draws=400, warmup=300, seed=0, dense_mass=True,
                     progress=False, backend=Processes(1))
    w = post.weights.reshape(-1, 5)
    sampled = abs(np.corrcoef(w[:, 0], w[:, 4])[0, 1])
    # The Laplace approximation is not exact; both must be on the ridge side of 0.9.
    assert rho >= mass.CORRELATION and sampled >= mass.CORRELATION, (rho, sampled)
