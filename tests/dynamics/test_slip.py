"""A map's one slip probability: against scipy.stats.beta where the posterior is exactly Beta."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from bayesirl.errors import InputError
from bayesirl.io.grid import Grid, grid_arrays
from bayesirl.model.slip import SlipPosterior
from bayesirl.model.transitions import TransitionLog

# An open 3 x 3 room: from the centre cell every move lands on a distinct neighbour, so an
# outcome is either the intended move or a slip, never both (the Beta case).
GRID = Grid(["...", "...", "..."], ["x"], {".": {"features": [0.0], "blocked": False,
                                               "goal": False, "start": False}}, 4, 0.0)


def _posterior(intended: int, slipped: int, prior=(2.0, 3.0)) -> SlipPosterior:
    a, _, _ = grid_arrays(GRID)
    b, _, _ = grid_arrays(GRID._replace(slip=1.0))
    # From the centre (state 4) moving right (action 1): 5 intended, 3 up (1), ...
    log = TransitionLog(np.array([4, 4]), np.array([1, 1]), np.array([5, 1]),
                        np.array([float(intended), float(slipped)]))
    return SlipPosterior(a, b, log, n_actions=4, prior=prior)


def test_disjoint_outcomes_give_the_beta_posterior():
    post = _posterior(17, 3)
    # Conjugate update (any Bayesian text): the slip probability is Beta(a, b) a priori;
    # 3 slips and 17 intended moves give Beta(a + 3, b + 17) (a slip's 1/3 share of the
    # three other moves is a constant factor).
    ref = stats.beta(2.0 + 3, 3.0 + 17)
    # The grid mean is exact to ~1/20000 (midpoint rule on a smooth density).
    assert abs(post.slip_mean - ref.mean()) < 1e-4
    rng = np.random.default_rng(0)
    draws = np.array([post.draw_slip(rng) for _ in range(20_000)])
    # Independent draws: mean within 4 standard errors, and the 5%/95% quantiles within
    # 4 binomial errors of their probabilities.
    assert abs(draws.mean() - ref.mean()) < 4 * ref.std() / np.sqrt(draws.size)
    for q in (0.05, 0.95):
        frac = np.mean(draws <= ref.ppf(q))
        assert abs(frac - q) < 4 * np.sqrt(q * (1 - q) / draws.size)
    # Negative control: the counts swapped (slips read as intended moves) are far off.
    assert abs(draws.mean() - stats.beta(2.0 + 17, 3.0 + 3).mean()) > 0.3


def test_drawn_dynamics_are_the_map_at_that_slip():
    post = _posterior(5, 5)
    slip = post.draw_slip(np.random.default_rng(3))
    direct, _, _ = grid_arrays(GRID._replace(slip=slip))
    np.testing.assert_allclose(post.at(slip).toarray(), direct.toarray(), atol=1e-15)
    np.testing.assert_allclose(np.asarray(post.draw(np.random.default_rng(3)).sum(axis=1)),
                               1.0, rtol=1e-12)


def test_an_outcome_no_slip_explains_is_refused():
    a, _, _ = grid_arrays(GRID)
    b, _, _ = grid_arrays(GRID._replace(slip=1.0))
    log = TransitionLog(np.array([0]), np.array([1]), np.array([8]), np.array([1.0]))
    with pytest.raises(InputError, match="impossible on this map"):
        SlipPosterior(a, b, log, n_actions=4)


def test_a_map_problem_learns_its_slip_from_a_file(tmp_path):
    from bayesirl.io import read_problem
    from bayesirl.io.transitionfiles import dynamics_posterior

    toml = ('[model]\ndiscount = 0.9\n\n[map]\nfeatures = ["x"]\nslip = 0.1\ncells = """\n'
            '...\n...\n...\n"""\n\n[map.legend]\n"." = {}\n\n[dynamics]\n'
            'transitions = "log.csv"\nslip = [2.0, 3.0]\n')
    (tmp_path / "p.toml").write_text(toml)
    (tmp_path / "log.csv").write_text("state,action,next_state,count\n4,right,5,17\n"
                                      "4,right,1,3\n")
    post = dynamics_posterior(read_problem(tmp_path / "p.toml"))
    assert abs(post.slip_mean - stats.beta(5.0, 20.0).mean()) < 1e-4
    (tmp_path / "p.toml").write_text(toml.replace("slip = [2.0, 3.0]",
                                                  "slip = [2.0, 3.0]\nconcentration = 1.0"))
    with pytest.raises(InputError, match="replaces the per-row Dirichlet"):
        read_problem(tmp_path / "p.toml")


def test_check_reports_the_slip(tmp_path, capsys):
    from bayesirl.cli import main

    (tmp_path / "p.toml").write_text(
        '[model]\ndiscount = 0.9\n\n[map]\nfeatures = ["x"]\ncells = """\n...\n...\n'
        '"""\n\n[map.legend]\n"." = {}\n\n[dynamics]\ntransitions = "log.csv"\n'
        'slip = [1.0, 1.0]\n')
    (tmp_path / "log.csv").write_text("state,action,next_state\n4,left,3\n")
    assert main(["check", str(tmp_path / "p.toml")]) == 0
    assert "posterior mean slip probability" in capsys.readouterr().out


@pytest.mark.slow  # ~20 s wall on the loaded machine (fits in a fresh process)
def test_a_cut_fit_runs_under_slip_draws():
    from bayesirl.execution.backend import Serial
    from bayesirl.execution.cut import draw_dynamics, sample_cut
    from bayesirl.likelihood import BoltzmannLikelihood
    from bayesirl.model import TabularMDP, simulate

    post = _posterior(6, 4)
    phi = np.eye(9)[:, :2]
    mdp = TabularMDP(post.mean(), phi, discount=0.9)
    demos = simulate(mdp, np.array([1.0, -1.0]), episodes=3, length=5, seed=0)
    a, b = draw_dynamics(post, 2, seed=1)
    assert not np.allclose(a.toarray(), b.toarray())  # two different slip probabilities
    cut = sample_cut(BoltzmannLikelihood(mdp, demos), dynamics=post, dynamics_draws=2,
                     backend=Serial(), chains=1, draws=20, warmup=20, progress=False)
    assert cut.weights.shape == (2, 1, 20, 2) and cut.summary()["logged"] == 10
