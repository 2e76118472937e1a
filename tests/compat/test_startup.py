"""Start-up: ``import bayesirl`` and ``bayesirl --help`` load none of the heavy libraries, and
``bayesirl check`` loads no plotting, ArviZ, Dask or numba; the public names resolve on first use.
Times are measured by hand (``python -X importtime``), not here: a timed test on a shared
machine would be noise. What this checks is which modules get imported.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import bayesirl

REPO = Path(__file__).resolve().parents[2]
HEAVY = ("arviz", "arviz_base", "arviz_stats", "dask", "distributed", "matplotlib", "numba",
         "scipy", "xarray")

LOADED = """
import json, sys
{code}
print(json.dumps(sorted({{m.split(".")[0] for m in sys.modules}} & set({heavy!r}))))
"""


def _loaded(code: str, cwd: Path) -> list[str]:
    path = os.pathsep.join([str(REPO), os.environ.get("PYTHONPATH", "")])
    env = dict(os.environ, PYTHONPATH=path)
    env.setdefault("NUMBA_CACHE_DIR", "/tmp/nbcache-tests")
    done = subprocess.run([sys.executable, "-c", LOADED.format(code=code, heavy=HEAVY)],
                          cwd=cwd, env=env, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout.splitlines()[-1])


def test_import_and_help_load_no_heavy_library(tmp_path):
    assert _loaded("import bayesirl", tmp_path) == []
    # argparse's --help exits through SystemExit, which main() turns into its return value.
    help_ = "from bayesirl.cli import main\nassert main(['--help']) == main(['fit', '--help']) == 0"
    assert _loaded(help_, tmp_path) == []


def test_check_loads_no_plotting_arviz_or_dask(tmp_path):
    folder = REPO / "examples" / "park"
    problem, demos = folder / "park.toml", folder / "walks.csv"
    args = ["check", str(problem), str(demos)]
    code = f"from bayesirl.cli import main\nassert main({args!r}) == 0"
    loaded = _loaded(code, tmp_path)
    # scipy for the MDP's sparse transitions and the priors; no numba: check solves nothing.
    assert loaded == ["scipy"], loaded


def test_a_solve_loads_the_compiled_kernels(tmp_path):
    # Negative control for the check above: the solvers' kernels load on the first solve.
    code = ("import numpy as np\nfrom bayesirl.model import TabularMDP\n"
            "p = np.full((2, 2, 2), 0.5)\n"
            "TabularMDP(p, np.eye(2)).soft_policy(np.zeros(2))")
    assert "numba" in _loaded(code, tmp_path)


def test_the_module_check_sees_a_heavy_import(tmp_path):
    # Negative control: drawing a report figure does load matplotlib, and the check says so.
    assert "matplotlib" in _loaded("import bayesirl.report.plots", tmp_path)


def test_public_names_resolve_lazily_to_their_modules():
    from bayesirl.design import suggest
    from bayesirl.report.ambiguity import AmbiguityReport, ambiguity

    assert sorted(bayesirl.__all__) == sorted(bayesirl._EXPORTS)
    for name in bayesirl.__all__:
        assert getattr(bayesirl, name) is getattr(sys.modules[bayesirl._EXPORTS[name]], name)
    # from the submodule: the package attribute ``report.ambiguity`` is the submodule once
    # anything has imported it (tests/compat/test_api.py checks that order)
    assert bayesirl.ambiguity is ambiguity
    assert bayesirl.AmbiguityReport is AmbiguityReport
    assert bayesirl.suggest is suggest
    assert set(bayesirl.__all__) <= set(dir(bayesirl))
    try:
        bayesirl.no_such_name  # noqa: B018
    except AttributeError as err:
        assert "no_such_name" in str(err)
    else:
        raise AssertionError("an unknown name must raise AttributeError")
