"""``bayesirl fit --scheduler local`` in a real process: a LocalCluster started for the run,
closed afterwards (the process exits on its own), with the draws of the local run."""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("distributed")

from cli.helpers import TINY_CSV, TINY_TOML, run_subprocess  # noqa: E402


@pytest.mark.slow  # ~25 s: starting two spawned workers costs ~10 s on 2 cores
def test_fit_with_a_local_cluster_matches_the_local_run(tmp_path):
    import arviz as az

    (tmp_path / "tiny.toml").write_text(TINY_TOML)
    (tmp_path / "walks.csv").write_text(TINY_CSV)
    runs = {}
    for name, extra in (("cluster", ["--scheduler", "local"]), ("plain", [])):
        done = run_subprocess(["fit", "tiny.toml", "walks.csv", "--out", name, *extra],
                              cwd=tmp_path, timeout=150)
        assert done.returncode == 0, done.stderr[-3000:]
        runs[name] = az.from_netcdf(str(tmp_path / name / "posterior.nc"))
    a, b = (runs[k].posterior["weights"].values for k in ("cluster", "plain"))
    assert a.shape == (2, 60, 2) and np.array_equal(a, b)
