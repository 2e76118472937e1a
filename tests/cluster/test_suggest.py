"""``suggest(..., backend=Cluster(...))`` on a real Dask LocalCluster: the same suggestions as the
local run, bit for bit, the problem sent to the workers once, and ``suggest --scheduler``.

The problem has three blocks of draws and two groups of candidates per kind, so the work
really is split across the two workers.
"""

from __future__ import annotations

import json
import pickle
import time

import numpy as np
import pytest

distributed = pytest.importorskip("distributed")

import bayesirl as bi  # noqa: E402
from bayesirl.design import cluster as design_cluster  # noqa: E402
from bayesirl.design.policies import BLOCK_DRAWS  # noqa: E402
from bayesirl.design.work import CANDIDATE_CHUNK  # noqa: E402
from bayesirl.execution.backend import Cluster  # noqa: E402
from bayesirl.posterior.model import PosteriorModel  # noqa: E402

N_STATES, N_DRAWS = CANDIDATE_CHUNK + 4, 2 * BLOCK_DRAWS + 44
RUN = {"budget": 2, "seed": 4, "n_outer": 16, "length": 3, "target": "x"}


def _posterior(seed: int = 1) -> bi.Posterior:
    """S = 12, A = 3, F = 2 random MDP; a posterior made of 300 given draws (no sampling)."""
    rng = np.random.default_rng(0)
    mdp = bi.TabularMDP(rng.dirichlet(np.full(N_STATES, 0.5), size=(N_STATES, 3)),
                        rng.normal(size=(N_STATES, 3, 2)), discount=0.8,
                        feature_names=("x", "y"))
    demos = bi.simulate(mdp, np.array([0.8, -0.5]), episodes=3, length=4, seed=1)
    draws = np.random.default_rng(seed).normal(size=(1, N_DRAWS, 2))
    model = PosteriorModel(bi.BoltzmannLikelihood(mdp, demos))
    return bi.Posterior(draws, None, {}, model, {"method": "given"}, 0, 0.0, [0.0])


def _table(rows) -> np.ndarray:
    return np.array([(r.state, r.step, r.gain, r.stderr, r.target_sd, r.target_reduction)
                     for r in rows])


@pytest.mark.parametrize("kind", ["start-states", "query-states"])
def test_same_suggestions_as_the_local_run(client, kind):
    post = _posterior()
    local = bi.suggest(post, kind, **RUN)
    remote = bi.suggest(post, kind, **RUN, backend=Cluster(client))
    assert [r.candidate for r in remote] == [r.candidate for r in local]  # the order
    assert np.array_equal(_table(remote), _table(local))  # gains, stderrs, sds: every bit
    assert [r.step for r in local[:2]] == [1, 2]
    # Negative control: the comparison notices another seed's suggestions.
    other = bi.suggest(post, kind, **{**RUN, "seed": 5})
    assert not np.array_equal(_table(other), _table(local))


def test_the_problem_is_scattered_once(client, monkeypatch):
    post = _posterior()
    scattered, submitted = [], []
    scatter, submit = client.scatter, client.submit

    def counting_scatter(data, **kw):
        future = scatter(data, **kw)
        scattered.append((data, kw, future))
        return future

    def recording_submit(fn, *args, **kw):
        submitted.append((fn, args))
        return submit(fn, *args, **kw)

    monkeypatch.setattr(client, "scatter", counting_scatter)
    monkeypatch.setattr(client, "submit", recording_submit)
    mixed = ["start:1", "query:2", 3, "query:5"]
    remote = bi.suggest(post, mixed, **RUN, backend=Cluster(client))
    monkeypatch.undo()
    assert repr(remote) == repr(bi.suggest(post, mixed, **RUN))  # mixed kinds: same bits too
    blobs = [(d, kw, f) for d, kw, f in scattered if isinstance(d, bytes)]
    assert len(blobs) == 1 and blobs[0][1].get("broadcast") is True
    blob, problem = blobs[0][0], blobs[0][2]
    # Besides the problem, only each step's earlier-pick log-likelihoods (J x N) are sent.
    assert len(scattered) == 1 + RUN["budget"]
    # One solve task per block of draws; every solve and scoring task refers to the one
    # scattered copy of the problem.
    by_fn = {}
    for fn, args in submitted:
        by_fn.setdefault(fn, []).append(args)
    assert len(by_fn[design_cluster.block_task]) == -(-N_DRAWS // BLOCK_DRAWS)
    assert len(by_fn[design_cluster.score_task]) == 2 * RUN["budget"]  # 2 kinds, 2 steps
    for fn in (design_cluster.block_task, design_cluster.score_task):
        assert all(args[0] is problem for args in by_fn[fn])
    # No task carries the problem itself: its arguments are futures or small values.
    inline = [len(pickle.dumps(a)) for _, args in submitted for a in args
              if not isinstance(a, distributed.Future | list)]
    assert max(inline) < len(blob) / 4, (max(inline), len(blob))
    # Nothing of the call stays on the cluster (once this test drops its own references).
    del scattered[:], submitted[:], blobs, problem, by_fn
    for _ in range(100):
        left = client.run_on_scheduler(lambda dask_scheduler: [
            k for k in dask_scheduler.tasks if str(k).startswith(design_cluster.KEY_PREFIX)])
        if not left:
            break
        time.sleep(0.05)
    assert left == []


def test_cli_suggest_with_scheduler(client, tmp_path):
    from cli.helpers import TINY_CSV, TINY_TOML

    from bayesirl.cli import main

    (tmp_path / "tiny.toml").write_text(TINY_TOML)
    (tmp_path / "walks.csv").write_text(TINY_CSV)
    run = tmp_path / "run"
    assert main(["--quiet", "fit", str(tmp_path / "tiny.toml"), str(tmp_path / "walks.csv"),
                 "--out", str(run), "--chains", "1", "--draws", "30", "--warmup", "30"]) == 0
    out = {}
    for name, extra in (("cluster", ["--scheduler", client.scheduler.address]), ("plain", [])):
        args = ["--quiet", "suggest", str(run), "--candidates", "query-states", "--budget",
                "2", *extra]
        assert main(args) == 0
        out[name] = json.loads((run / "suggestions.json").read_text())
    assert out["cluster"] == out["plain"]
    assert "cluster" not in out["plain"]["settings"]
