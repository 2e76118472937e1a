"""Bad ``Cluster`` values and unsupported combinations are refused before any work starts;
``import bayesirl`` needs no Dask."""

from __future__ import annotations

import subprocess
import sys
import time

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.execution import cluster as dc

from .conftest import REPO


def _lik() -> bi.BoltzmannLikelihood:
    rng = np.random.default_rng(0)
    mdp = bi.TabularMDP(rng.dirichlet(np.ones(4), size=(4, 2)), rng.normal(size=(4, 2, 2)),
                        discount=0.8)
    return bi.BoltzmannLikelihood(mdp, bi.simulate(mdp, np.array([1.0, 0.0]), episodes=2,
                                                   length=4, seed=0))


def _sample(cluster=None, **kwargs):
    if cluster is not None:
        kwargs["backend"] = bi.Cluster(cluster)
    return bi.sample(_lik(), chains=2, draws=5, warmup=5, progress=False, **kwargs)


@pytest.mark.parametrize("bad", [42, "", "   ", "not an address", "tcp//host:1", object(),
                                 ["tcp://host:8786"]])
def test_bad_cluster_values(bad):
    with pytest.raises(bi.InputError, match="cluster: expected 'local', a scheduler address"):
        _sample(cluster=bad)


def test_checkpoint_and_resume_are_refused(tmp_path):
    with pytest.raises(bi.InputError, match="checkpoints are not supported on a cluster"):
        _sample(cluster="local", checkpoint=tmp_path / "c.npz")
    with pytest.raises(bi.InputError, match="checkpoints are not supported on a cluster"):
        _sample(cluster="tcp://127.0.0.1:8786", checkpoint=tmp_path / "c.npz", resume=True)
    assert not (tmp_path / "c.npz").exists()


def test_worker_processes_and_a_cluster_cannot_be_combined():
    # The old flags (processes= with cluster=) are gone: a backend is one type, and a value
    # that is not one (a bare address or a number of processes) is refused by name.
    for bad in ("local", 2):
        with pytest.raises(bi.InputError, match="backend: expected bayesirl.Serial()"):
            _sample(backend=bad)
    with pytest.raises(TypeError):
        _sample(processes=2)  # the removed keyword is an error, not silently ignored
    with pytest.raises(bi.InputError, match="only sample's chains run in worker processes"):
        bi.suggest(None, backend=bi.Processes(2))


def test_addresses_pass_the_check():
    # Negative control for the refusals above: these forms are accepted.
    for ok in ("local", "tcp://10.0.0.5:8786", "tls://h:1", "inproc://x/1/2", "host:8786"):
        dc.check_address(ok)
        assert bi.Cluster(ok).where == ok


def test_unreachable_scheduler_is_an_input_error(monkeypatch):
    pytest.importorskip("distributed")
    monkeypatch.setattr(dc, "CONNECT_TIMEOUT", 1.0)
    t0 = time.monotonic()
    # Port 9 (discard) on localhost: nothing listens there in a test environment.
    with pytest.raises(bi.InputError, match="no Dask scheduler answered at 'tcp://127.0.0.1:9'"):
        _sample(cluster="tcp://127.0.0.1:9")
    assert time.monotonic() - t0 < 15


def test_without_dask_the_error_says_what_to_install(monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # makes `import distributed` fail
    with pytest.raises(bi.InputError, match=r"pip install 'bayesirl\[cluster\]'"):
        _sample(cluster="local")


def test_import_bayesirl_does_not_import_dask():
    code = ("import sys, bayesirl, bayesirl.cli, bayesirl.execution.cluster; "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in ('dask', 'distributed')))")
    out = subprocess.run([sys.executable, "-c", code], cwd=REPO, capture_output=True,
                         text=True, timeout=120, env={"PYTHONPATH": str(REPO),
                                                      "NUMBA_CACHE_DIR": "/tmp/nbcache-tests"})
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[]"
