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


def _worker_environment() -> None:
    paths = [str(REPO), str(TESTS)]
    old = os.environ.get("PYTHONPATH")
    os.environ["PYTHONPATH"] = os.pathsep.join(paths + ([old] if old else []))
    os.environ.setdefault("NUMBA_CACHE_DIR", "/tmp/nbcache-tests")


@pytest.fixture(scope="module")
def client():
    """A client of a fresh LocalCluster; closed after the module's tests."""
    distributed = pytest.importorskip("distributed")
    _worker_environment()
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        with distributed.Client(cluster) as c:
            c.wait_for_workers(2, timeout=60)
            yield c
