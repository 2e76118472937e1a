"""``sample(..., backend=Cluster(...))`` on a real Dask LocalCluster: same draws as a local run,
the problem sent to the workers once, a killed worker's chain rerun, and the CLI option.

The reference for every equality is ``sample(..., backend=Processes(1))``, the project's in-process
path, which ``tests/posterior/test_seeds.py`` ties to the parallel one; equality is exact
(``array_equal``) because both run the same arithmetic from the same seed child.
"""

from __future__ import annotations

import io
import os
import pickle
import signal
import threading
import time
from functools import cache

import numpy as np
import pytest

pytest.importorskip("distributed")

import bayesirl as bi  # noqa: E402
from bayesirl.execution import cluster as dc  # noqa: E402
from bayesirl.execution.backend import Cluster, Processes
from bayesirl.execution.chains import run_job  # noqa: E402
from bayesirl.execution.interrupt import Stopper  # noqa: E402
from bayesirl.posterior.model import PosteriorModel  # noqa: E402

from .slowlik import CountingLikelihood, slow_copy  # noqa: E402

PRIOR = bi.Normal(0.0, 2.0)
RUN = {"chains": 3, "draws": 40, "warmup": 40, "seed": 7, "progress": False}


@cache
def problem() -> bi.BoltzmannLikelihood:
    """S = 6, A = 3, F = 2 random MDP, 6 episodes x 8 steps (seeded)."""
    rng = np.random.default_rng(0)
    trans = rng.dirichlet(np.full(6, 0.5), size=(6, 3))
    mdp = bi.TabularMDP(trans, rng.normal(size=(6, 3, 2)), discount=0.8,
                        feature_names=["x", "y"])
    demos = bi.simulate(mdp, np.array([0.8, -0.5]), episodes=6, length=8, seed=1)
    return bi.BoltzmannLikelihood(mdp, demos)


@cache
def local_run(seed: int = RUN["seed"]) -> bi.Posterior:
    return bi.sample(problem(), PRIOR, **{**RUN, "seed": seed}, backend=Processes(1))


def assert_same(a: bi.Posterior, b: bi.Posterior) -> None:
    assert a.weights.shape == b.weights.shape
    assert np.array_equal(a.weights, b.weights)
    for key in a.stats:
        assert np.array_equal(a.stats[key], b.stats[key]), key


def test_same_draws_as_the_local_run(client):
    post = bi.sample(problem(), PRIOR, **RUN, backend=Cluster(client))
    assert post.complete and post.weights.shape == (3, 40, 2)
    assert_same(post, local_run())
    # Negative control: the comparison notices another seed's draws.
    with pytest.raises(AssertionError):
        assert_same(post, local_run(RUN["seed"] + 1))


def test_the_problem_is_pickled_once_in_this_process(client):
    lik = problem()
    counting = CountingLikelihood(lik.mdp, lik.demos, rationality=lik.rationality,
                    q_function=lik.q_function, tol=lik.tol)
    CountingLikelihood.pickled = 0
    post = bi.sample(counting, PRIOR, **{**RUN, "chains": 4}, backend=Cluster(client))
    assert CountingLikelihood.pickled == 1  # once for four chains, not once per task
    assert post.n_chains == 4


def _graph(dask_scheduler, keys, shared):
    tasks = dask_scheduler.tasks
    if not all(k in tasks for k in [*keys, shared]):
        return None  # the submissions have not all reached the scheduler yet
    return {"deps": {k: sorted(d.key for d in tasks[k].dependencies) for k in keys},
            "spec": {k: len(pickle.dumps(tasks[k].run_spec)) for k in keys},
            "holders": sorted(w.address for w in tasks[shared].who_has),
            "workers": sorted(dask_scheduler.workers)}


def test_every_chain_task_refers_to_one_copy_on_every_worker(client):
    model = PosteriorModel(problem(), PRIOR)
    blob = pickle.dumps(model)
    seeds = np.random.SeedSequence(3).spawn(3)
    settings = {"draws": 5, "warmup": 5, "method": "nuts", "dense_mass": False,
                "target_accept": None, "max_depth": 10}
    shared, futures = dc.submit_chains(client, blob, seeds, settings)
    try:
        keys = [f.key for f in futures]
        for _ in range(500):
            g = client.run_on_scheduler(_graph, keys=keys, shared=shared.key)
            if g is not None:
                break
            time.sleep(0.01)
        assert all(deps == [shared.key] for deps in g["deps"].values())
        assert g["holders"] == g["workers"] and len(g["workers"]) == 2  # broadcast
        # The problem is not inside the tasks: each spec is far smaller than the problem.
        assert max(g["spec"].values()) < len(blob) / 4, (g["spec"], len(blob))
        records = client.gather(futures)
        assert [r.meta["done"] for r, _ in records] == [True] * 3
        # The likelihood's warm starts stay on the workers (a local record carries them).
        local = run_job(blob, 0, seeds[0], settings, None, Stopper(), lambda *a: None, None)
        assert any(n.startswith("lik.") for n in local.arrays)
        assert not any(n.startswith("lik.") for r, _ in records for n in r.arrays)
        assert sorted(records[0][0].arrays) == sorted(
            n for n in local.arrays if not n.startswith("lik."))
    finally:
        client.cancel([*futures, shared])


class _Tty(io.StringIO):
    def isatty(self) -> bool:
        return True


def _kill_when_running(client, chain: int, after: float, out: dict) -> None:
    """SIGKILL the worker process running ``chain``'s task ``after`` s into it."""
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        for addr, keys in client.processing().items():
            if any(str(k).startswith(f"{dc.KEY_PREFIX}-{chain}-") for k in keys):
                time.sleep(after)
                pid = client.run(os.getpid, workers=[addr])[addr]
                os.kill(pid, signal.SIGKILL)
                out["addr"], out["pid"] = addr, pid
                return
        time.sleep(0.02)


def test_a_killed_worker_costs_one_rerun_not_the_posterior(client, monkeypatch):
    # ~4 ms per evaluation makes each chain last a few seconds, so the kill lands mid-chain
    # (if chain 0 finished first, the killed worker's address would be on its line).
    slow = slow_copy(problem(), delay=0.004)
    killed: dict = {}
    killer = threading.Thread(target=_kill_when_running, args=(client, 0, 0.5, killed))
    stream = _Tty()
    monkeypatch.setattr("sys.stderr", stream)
    killer.start()
    try:
        post = bi.sample(slow, PRIOR, **{**RUN, "progress": True}, backend=Cluster(client))
    finally:
        killer.join()
    assert killed, "chain 0 was never seen running"
    assert post.complete
    assert_same(post, local_run())
    lines = [ln for ln in stream.getvalue().splitlines() if ln.startswith("chain ")]
    assert sorted(ln.split()[1] for ln in lines) == ["0", "1", "2"]  # a line per chain
    (zero,) = [ln for ln in lines if ln.startswith("chain 0 ")]
    assert killed["addr"] not in zero  # chain 0 was finished by another (or new) worker
    client.wait_for_workers(2, timeout=60)  # the nanny restarts the killed worker


def test_cli_fit_with_scheduler(client, tmp_path):
    from cli.helpers import TINY_CSV, TINY_TOML

    from bayesirl.cli import main

    (tmp_path / "tiny.toml").write_text(TINY_TOML)
    (tmp_path / "walks.csv").write_text(TINY_CSV)
    address = client.scheduler.address
    args = ["fit", str(tmp_path / "tiny.toml"), str(tmp_path / "walks.csv"), "--quiet"]
    assert main([*args, "--out", str(tmp_path / "a"), "--scheduler", address]) == 0
    assert main([*args, "--out", str(tmp_path / "b")]) == 0
    import arviz as az

    a = az.from_netcdf(str(tmp_path / "a" / "posterior.nc")).posterior["weights"].values
    b = az.from_netcdf(str(tmp_path / "b" / "posterior.nc")).posterior["weights"].values
    assert a.shape == (2, 60, 2) and np.array_equal(a, b)
    assert not (tmp_path / "a" / "checkpoint.npz").exists()


def test_an_error_in_a_chain_reaches_the_caller(client):
    from .slowlik import NowhereLikelihood

    lik = problem()
    nowhere = NowhereLikelihood(lik.mdp, lik.demos, rationality=lik.rationality,
                    q_function=lik.q_function, tol=lik.tol)
    with pytest.raises(bi.InputError, match="no finite log-posterior"):
        bi.sample(nowhere, PRIOR, **RUN, backend=Cluster(client))
    # Nothing of the failed run stays on the cluster (its futures were cancelled).
    time.sleep(0.5)
    left = client.run_on_scheduler(
        lambda dask_scheduler: [k for k in dask_scheduler.tasks
                                if str(k).startswith(dc.KEY_PREFIX)])
    assert left == []


def test_workers_with_another_bayesirl_version_are_refused(client, monkeypatch):
    dc.check_workers(client)  # negative control: the same version passes
    import bayesirl.version

    monkeypatch.setattr(bayesirl.version, "__version__", "0.0.0-other")  # where it is read
    with pytest.raises(bi.InputError, match="workers run another bayesirl version"):
        bi.sample(problem(), PRIOR, **RUN, backend=Cluster(client))


def test_cut_fit_same_dynamics_and_draws_as_the_local_run(client):
    # Uncertain dynamics (issue 21): the dynamics are drawn in the calling process and each
    # run's chains get their seed from the fit seed, so the cluster gives the same bits.
    from bayesirl.execution.cut import sample_cut
    from bayesirl.model.transitions import (
        DynamicsPosterior,
        log_from_demonstrations,
        support_of,
    )

    lik = problem()
    support = support_of("model", lik.mdp.transitions, lik.mdp.n_actions)
    post = DynamicsPosterior(support, log_from_demonstrations(lik.demos),
                             n_actions=lik.mdp.n_actions)
    kwargs = {**RUN, "chains": 2, "draws": 20, "warmup": 20, "dynamics": post,
              "dynamics_draws": 2, "plug_in": False}
    here = sample_cut(lik, PRIOR, **kwargs, backend=Processes(1))
    there = sample_cut(lik, PRIOR, **kwargs, backend=Cluster(client))
    assert np.array_equal(here.weights, there.weights)
    assert not np.array_equal(here.weights[0], here.weights[1])  # the runs differ
