"""How the failures that remain are reported: a solver error (exit 1) when no start can be
evaluated, and a collapsed step size named in the diagnostics (never a Python error)."""

from __future__ import annotations

import numpy as np
import pytest

from bayesirl import BoltzmannLikelihood, SolverError, sample, simulate
from bayesirl.cli import main
from bayesirl.execution.backend import Processes
from bayesirl.posterior.diagnostics import _stalled
from bayesirl.sampler.adaptation import STEP_MIN, find_reasonable_step_size

from . import bus


@pytest.fixture(scope="module")
def demos():
    return simulate(bus.bus_mdp(0.9999), bus.TRUTH, episodes=5, length=20, seed=1, start=0)


def test_no_start_because_the_solver_fails_is_a_solver_error(demos):
    # One Newton step never converges at 0.9999: every start fails in the solver.
    lik = BoltzmannLikelihood(bus.bus_mdp(0.9999), demos, max_newton_steps=1)
    with pytest.raises(SolverError, match="max_newton_steps"):
        sample(lik, chains=1, draws=5, warmup=5, progress=False, backend=Processes(1))


def test_the_same_data_with_enough_steps_samples(demos):
    # Negative control for the test above: only the cap made it fail.
    lik = BoltzmannLikelihood(bus.bus_mdp(0.9999), demos)
    post = sample(lik, chains=1, draws=5, warmup=5, progress=False, backend=Processes(1))
    assert post.n_draws == 5 and sum(post.settings["solver_failures"]) == 0


def test_the_command_line_exits_1_with_what_to_change(tmp_path, capsys):
    rows = ["episode,step,state,action"]
    rows += [f"e,{t},{s},{a}" for t, (s, a) in enumerate(zip([0, 1, 2], [0, 0, 1], strict=True))]
    rows.append("e,3,0,")
    (tmp_path / "d.csv").write_text("\n".join(rows) + "\n")
    np.savez(tmp_path / "bus.npz", transitions=bus.transitions(), features=bus.features())
    (tmp_path / "p.toml").write_text(
        '[model]\ndiscount = 0.9999\n[arrays]\nnpz = "bus.npz"\n'
        '[solver]\nmax_newton_steps = 1\n[sampler]\nchains = 1\ndraws = 5\nwarmup = 5\n')
    code = main(["fit", str(tmp_path / "p.toml"), str(tmp_path / "d.csv"),
                 "--out", str(tmp_path / "run"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 1, err
    assert "solver error" in err and "max_newton_steps" in err and "Traceback" not in err
    assert not (tmp_path / "run").exists()


def test_a_collapsed_step_size_is_a_diagnostic():
    steps = np.array([[0.5] * 10, [0.4] * 10, [1e-209] * 10, [0.6] * 10])
    (message,) = _stalled(steps)
    assert "chain(s) 2" in message and "1e-209" in message
    assert _stalled(np.array([[0.5] * 10, [0.05] * 10])) == ()  # negative control


def test_step_size_search_stops_at_the_floor_instead_of_underflowing():
    # A density that rejects every move: halving from the floor must not reach 0.
    def never(theta):
        return -np.inf, np.full_like(theta, np.nan)

    rng = np.random.default_rng(0)
    step = find_reasonable_step_size(rng, np.zeros(2), 0.0, np.zeros(2), never, np.ones(2),
                                     STEP_MIN * 4, max_iter=100)
    assert STEP_MIN <= step <= STEP_MIN * 4


class _FailsBeyond:
    """A real likelihood whose solve 'fails' where the first weight exceeds ``edge``."""

    def __init__(self, lik, edge):
        self.lik, self.edge = lik, edge

    def __getattr__(self, name):
        if name == "lik":  # during unpickling, before __dict__ is restored
            raise AttributeError(name)
        return getattr(self.lik, name)

    def evaluate(self, weights, rationality=None):
        if weights[0] > self.edge:
            raise SolverError("stand-in failure")
        return self.lik.evaluate(weights, rationality)

    def value(self, weights, rationality=None):
        return self.evaluate(weights, rationality).loglik


def test_failures_inside_trajectories_are_rejections_not_crashes(demos):
    # The edge sits inside the posterior's bulk (theta1 is about 2.6 +- 1 here), so many
    # trajectories cross it: each crossing is a rejected, counted proposal; chains go on.
    lik = _FailsBeyond(BoltzmannLikelihood(bus.bus_mdp(0.9999), demos), edge=2.0)
    post = sample(lik, chains=2, draws=100, warmup=100, progress=False, backend=Processes(1))
    assert post.n_draws == 100
    assert sum(post.settings["solver_failures"]) > 0
    assert post.diagnostics.divergences > 0  # the failures show as divergences
    assert np.all(post.weights[..., 0] <= 2.0)  # never accepted beyond the edge
