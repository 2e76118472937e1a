"""``import bayesirl`` and the first use of ArviZ print no library warning, under either
ArviZ series, even on the first run of a day (ArviZ 0.2x announces its refactor once a day
per user, keyed by a stamp file in the user cache folder: each run here gets a fresh one).
The CLI's stderr on the park example is checked in ``tests/cli/test_commands.py``.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from bayesirl import arviz_compat

REPO = Path(__file__).resolve().parents[2]

# Touches every ArviZ function bayesirl uses, so a warning at first use surfaces too.
FIRST_USE = """
import numpy as np
from bayesirl import arviz_compat as a
x = np.random.default_rng(0).normal(size=(2, 50))
a.rhat(x), a.ess(x), a.ess(x, "tail"), a.bfmi(x), a.hdi(x[0], 0.9)
d = a.from_groups({"posterior": {"w": x}, "sample_stats": {"energy": x}}, {}, {}, {"k": "v"})
a.to_netcdf(d, "out.nc")
a.from_netcdf("out.nc")
"""


def _python(code: str, tmp_path: Path, warnings: str = "error") -> subprocess.CompletedProcess:
    env = dict(os.environ, XDG_CACHE_HOME=str(tmp_path / "cache"),
               PYTHONPATH=os.pathsep.join([str(REPO), os.environ.get("PYTHONPATH", "")]))
    env.setdefault("NUMBA_CACHE_DIR", "/tmp/nbcache-tests")
    return subprocess.run([sys.executable, "-W", warnings, "-c", code], cwd=tmp_path, env=env,
                          capture_output=True, text=True, timeout=300)


def test_import_bayesirl_prints_nothing_even_as_errors(tmp_path):
    done = _python("import bayesirl", tmp_path)
    assert (done.returncode, done.stderr, done.stdout) == (0, "", "")
    # The public names are imported on first use: resolve them all too.
    done = _python("import bayesirl\nfor n in bayesirl.__all__: getattr(bayesirl, n)", tmp_path)
    assert (done.returncode, done.stderr, done.stdout) == (0, "", ""), done.stderr


def test_first_use_of_arviz_prints_nothing_even_as_errors(tmp_path):
    done = _python(FIRST_USE, tmp_path)
    assert (done.returncode, done.stderr, done.stdout) == (0, "", ""), done.stderr


def test_the_check_sees_a_library_warning(tmp_path):
    # Negative control: a warning raised while importing is an error under -W error.
    done = _python("import warnings; warnings.warn('refactor ahead', FutureWarning)", tmp_path)
    assert done.returncode != 0 and "FutureWarning" in done.stderr


@pytest.mark.skipif(arviz_compat.series() >= 1, reason="ArviZ 1.x has no refactor warning")
def test_arviz_0_2x_does_warn_on_a_fresh_day(tmp_path):
    # Negative control for 0.2x: without the adapter's silencing, importing ArviZ with a fresh
    # cache folder prints the warning, so the tests above would have seen it.
    done = _python("import arviz", tmp_path, warnings="default")
    assert "FutureWarning" in done.stderr
