"""Posterior files: plain ArviZ and plain xarray read them in a fresh interpreter, load
restores everything, and save is atomic.

Outside references: ArviZ's own NetCDF reader (``arviz.from_netcdf``, Kumar et al. 2019,
JOSS 4; 0.2x or 1.x, whichever this Python has) and xarray's ``open_datatree``, run in a
separate Python process that has never imported bayesirl.
"""

from __future__ import annotations

import json
import subprocess
import sys
from functools import cache

import numpy as np
import pytest

import bayesirl as bi
from bayesirl import arviz_compat
from bayesirl.execution.backend import Processes
from bayesirl.posterior import Posterior, PosteriorModel

from .problems import small_mdp


def _ragged_demos(mdp, weights, seed):
    """Simulated episodes of lengths 6, 4, 5; the second and third lose their final state."""
    out_s, out_a = [], []
    for k, length in enumerate((6, 4, 5)):
        d = bi.simulate(mdp, weights, episodes=1, length=length, seed=seed + k)
        s, a = d.episodes[0]
        out_s.append(s if k == 0 else s[:-1])
        out_a.append(a)
    return bi.Demonstrations.from_arrays(out_s, out_a)


def _case_sampled_beta():
    # Discounted, state-action features, a start distribution, beta sampled, a pin.
    base = small_mdp(8, 3, n_states=5)
    start = np.random.default_rng(8).dirichlet(np.ones(5))
    mdp = bi.TabularMDP(base.transitions, base.features, discount=0.85, start=start,
                        feature_names=["speed", "comfort", "risk"])
    demos = _ragged_demos(mdp, np.array([0.5, 1.0, -0.7]), seed=30)
    lik = bi.BoltzmannLikelihood(mdp, demos, rationality=1.0, tol=1e-11)
    kwargs = dict(prior=bi.Laplace(np.array([0.0, 0.5, -0.5]), np.array([1.0, 2.0, 1.5])),
                  rationality=bi.LogNormal(0.1, 0.4), pin={"comfort": 1.0})
    return lik, kwargs


def _case_finite_horizon():
    # Finite horizon, state features, no start, fixed beta, a Uniform prior, optimal-Q model
    # left for the discounted case below.
    base = small_mdp(9, 2, n_states=5, horizon=6)
    mdp = bi.TabularMDP(base.transitions, base.features[:, 0, :], discount=0.95, horizon=6)
    demos = _ragged_demos(mdp, np.array([0.8, -0.4]), seed=40)
    lik = bi.BoltzmannLikelihood(mdp, demos, rationality=1.7)
    return lik, dict(prior=bi.Uniform(np.array([-2.0, -3.0]), np.array([2.0, 1.0])))


def _case_optimal_q():
    mdp = small_mdp(10, 2, n_states=5)
    demos = _ragged_demos(mdp, np.array([1.0, -1.0]), seed=50)
    lik = bi.BoltzmannLikelihood(mdp, demos, rationality=2.0, q_function="optimal")
    return lik, dict(prior=bi.Normal(0.0, 3.0), rationality=2.5)


CASES = {"sampled-beta": _case_sampled_beta, "finite-horizon": _case_finite_horizon,
         "optimal-q": _case_optimal_q}


@cache
def _posterior(case: str) -> bi.Posterior:
    lik, kwargs = CASES[case]()
    return bi.sample(lik, chains=2, draws=40, warmup=40, seed=3, progress=False,
                     backend=Processes(1),
                     **kwargs)


FRESH_READER = """
import json, sys, warnings
import xarray
with warnings.catch_warnings():  # arviz 0.2x announces its refactor on import
    warnings.simplefilter("ignore", FutureWarning)
    import arviz
out = {}
for path in sys.argv[1:]:
    idata = arviz.from_netcdf(path)
    post = idata.posterior
    tree = xarray.open_datatree(path)
    out[path] = {
        "groups": [g.strip("/") for g in tree.groups if g != "/"],
        "tree_weights": tree["posterior"]["weights"].values.tolist(),
        "vars": list(post.data_vars),
        "dims": list(post["weights"].dims),
        "features": [str(f) for f in post["weights"].coords["feature"].values],
        "weights": post["weights"].values.tolist(),
        "stats": sorted(idata.sample_stats.data_vars),
    }
out["modules"] = sorted(m for m in sys.modules if m.startswith("bayesirl"))
print(json.dumps(out))
"""


def test_plain_arviz_in_a_fresh_interpreter_reads_the_files(tmp_path):
    # One subprocess for all cases (importing arviz costs seconds).
    paths = {case: str(_posterior(case).save(tmp_path / f"{case}.nc")) for case in CASES}
    out = subprocess.run([sys.executable, "-c", FRESH_READER, *paths.values()],
                         capture_output=True, text=True, timeout=300, check=True)
    seen_all = json.loads(out.stdout)
    assert seen_all["modules"] == []  # the reader never touched bayesirl
    for case, path in paths.items():
        post, seen = _posterior(case), seen_all[path]
        assert {"posterior", "sample_stats", "constant_data"} <= set(seen["groups"])
        assert np.array_equal(np.array(seen["tree_weights"]), post.weights)
        assert seen["dims"] == ["chain", "draw", "feature"]
        assert seen["features"] == list(post.feature_names)
        assert np.array_equal(np.array(seen["weights"]), post.weights)  # JSON floats exact
        assert ("rationality" in seen["vars"]) == (post.rationality is not None)
        assert {"diverging", "energy", "lp", "step_size", "tree_depth"} <= set(seen["stats"])


def _same_prior(a, b) -> bool:
    return type(a) is type(b) and all(
        np.array_equal(np.asarray(v), np.asarray(getattr(b, k))) for k, v in a.__dict__.items()
    )


@pytest.mark.parametrize("case", CASES)
def test_load_restores_draws_problem_and_model(case, tmp_path):
    post = _posterior(case)
    back = Posterior.load(post.save(tmp_path / "sub" / "run.nc"))  # parent created
    assert np.array_equal(back.weights, post.weights)
    if post.rationality is None:
        assert back.rationality is None
    else:
        assert np.array_equal(back.rationality, post.rationality)
    assert set(back.stats) == set(post.stats)
    for key, value in post.stats.items():
        assert np.array_equal(back.stats[key], value, equal_nan=True), key
    assert back.feature_names == post.feature_names
    assert (back.seed, back.wall_time, back.chain_times) == \
        (post.seed, post.wall_time, post.chain_times)
    assert back.settings == post.settings

    lik0, lik1 = post.model.likelihood, back.model.likelihood
    m0, m1 = lik0.mdp, lik1.mdp
    assert (m1.n_states, m1.n_actions, m1.discount, m1.horizon) == \
        (m0.n_states, m0.n_actions, m0.discount, m0.horizon)
    assert np.array_equal(m1.transitions.toarray(), m0.transitions.toarray())
    assert np.array_equal(m1.features, m0.features)
    assert m1.feature_names == m0.feature_names
    assert (m0.start is None and m1.start is None) or np.array_equal(m1.start, m0.start)
    assert lik1.demos.n_episodes == lik0.demos.n_episodes
    for (s0, a0), (s1, a1) in zip(lik0.demos.episodes, lik1.demos.episodes, strict=True):
        assert np.array_equal(s0, s1) and np.array_equal(a0, a1)
    assert (lik1.q_function, lik1.tol, lik1.gradient_rtol, lik1.rationality) == \
        (lik0.q_function, lik0.tol, lik0.gradient_rtol, lik0.rationality)

    assert _same_prior(back.model.prior, post.model.prior)
    if post.model.rationality_prior is None:
        assert back.model.rationality_prior is None
        assert back.model.fixed_rationality == post.model.fixed_rationality
    else:
        assert _same_prior(back.model.rationality_prior, post.model.rationality_prior)
    assert back.model.pin == post.model.pin
    # The restored model is the same function of theta (cold solves on both sides).
    theta = np.linspace(-0.4, 0.6, post.model.dim)
    fresh = PosteriorModel(bi.BoltzmannLikelihood(m0, lik0.demos, rationality=lik0.rationality,
                                                  q_function=lik0.q_function,
                                                  tol=lik0.tol), post.model.prior,
                           post.model.rationality_prior or post.model.fixed_rationality,
                           post.model.pin or None)
    v0, g0 = fresh(theta)
    v1, g1 = back.model(theta)
    assert v0 == v1 and np.array_equal(g0, g1)
    d0, d1 = post.diagnostics, back.diagnostics
    assert np.array_equal(d0.rhat, d1.rhat, equal_nan=True) and d0.warnings == d1.warnings


def _failing_to_netcdf(data, filename):
    with open(filename, "wb") as fh:  # a partial file, as a crash mid-write leaves
        fh.write(b"\x89HDF\r\n partial")
    raise OSError("simulated failure while writing")


def test_save_is_atomic_when_writing_fails(tmp_path, monkeypatch):
    post = _posterior("finite-horizon")
    monkeypatch.setattr(arviz_compat, "to_netcdf", _failing_to_netcdf)
    target = tmp_path / "run.nc"
    with pytest.raises(OSError, match="simulated failure"):
        post.save(target)
    assert list(tmp_path.iterdir()) == []  # neither the target nor a temporary file


def test_failed_save_leaves_an_existing_file_intact(tmp_path, monkeypatch):
    post = _posterior("finite-horizon")
    target = post.save(tmp_path / "run.nc")
    before = target.read_bytes()
    monkeypatch.setattr(arviz_compat, "to_netcdf", _failing_to_netcdf)
    with pytest.raises(OSError, match="simulated failure"):
        post.save(target)
    assert target.read_bytes() == before
    assert [p.name for p in tmp_path.iterdir()] == ["run.nc"]
    monkeypatch.undo()
    assert np.array_equal(Posterior.load(target).weights, post.weights)
