"""A module-scoped Dask ``LocalCluster`` (2 worker processes, 1 thread each) for the tests.

The worker processes are spawned fresh, so they see this checkout only through PYTHONPATH:
it is set before the cluster starts, with ``tests/`` on it too, so the workers can unpickle
the test-only likelihood in ``cluster/slowlik.py``.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

import pytest

TESTS = Path(__file__).resolve().parents[1]
REPO = TESTS.parent
if str(TESTS) not in sys.path:
    sys.path.insert(0, str(TESTS))


@pytest.fixture(scope="module")
def client():
    """A client of a fresh LocalCluster; closed after the module's tests, which then also
    get their environment back (the workers, restarted ones too, read it while it runs)."""
    distributed = pytest.importorskip("distributed")
    dask = pytest.importorskip("dask")
    saved = {k: os.environ.get(k) for k in ("PYTHONPATH", "NUMBA_CACHE_DIR")}
    paths = [str(REPO), str(TESTS)] + ([saved["PYTHONPATH"]] if saved["PYTHONPATH"] else [])
    os.environ["PYTHONPATH"] = os.pathsep.join(paths)
    os.environ.setdefault("NUMBA_CACHE_DIR", "/tmp/nbcache-tests")
    # The active memory manager drops "extra" replicas every few seconds, which would race
    # the broadcast check in test_cluster.py (seen under load); off for this cluster.
    quiet_memory = dask.config.set({"distributed.scheduler.active-memory-manager.start": False})
    try:
        with quiet_memory, distributed.LocalCluster(
                n_workers=2, threads_per_worker=1, processes=True,
                dashboard_address=None) as cluster:
            with distributed.Client(cluster) as c:
                c.wait_for_workers(2, timeout=60)
                yield c
    finally:
        for key, value in saved.items():
            if value is None:
                os.environ.pop(key, None)
            else:
                os.environ[key] = value
