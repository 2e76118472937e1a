"""A posterior file written by the previous release (0.1.0, ArviZ 0.23) loads, gives the
diagnostics that release computed, and re-renders its report under either ArviZ series.

Outside reference: the diagnostics ArviZ 0.23.4 computed from this file when it was written
(``data/diagnostics-0.1.0.json``, by ``make_fixture.py``), and xarray's own NetCDF reader.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from bayesirl import arviz_compat
from bayesirl.posterior import Posterior
from bayesirl.report import ambiguity

DATA = Path(__file__).parent / "data"
OLD = DATA / "posterior-0.1.0.nc"
RECORDED = json.loads((DATA / "diagnostics-0.1.0.json").read_text())
# Both series run the same estimators (rank-normalised split R-hat, bulk/tail ESS; Vehtari et
# al. 2021) on the same 2 x 100 draws, so only the rounding of sums differs (measured 3e-16
# relative between 0.23.4 and 1.3); 1e-9 leaves room for a different summation order and is
# far below the differences between estimators (negative control below).
RTOL = 1e-9


def _nan(values) -> np.ndarray:
    return np.array([np.nan if v is None else v for v in values], dtype=float)


@pytest.fixture(scope="module")
def old() -> Posterior:
    return Posterior.load(OLD)


def test_old_file_loads_with_its_problem_and_settings(old):
    assert old.feature_names == ("a", "b", "c", "always")
    assert old.weights.shape == (2, 100, 4) and old.rationality.shape == (2, 100)
    assert old.model.pin == {"a": 1.0} and np.all(old.weights[..., 0] == 1.0)
    mdp = old.model.likelihood.mdp
    assert (mdp.n_states, mdp.n_actions, mdp.discount) == (3, 2, 0.9)
    assert old.model.likelihood.demos.n_episodes == 20
    assert old.complete and old.seed == 0


def test_old_file_gives_the_diagnostics_its_release_computed(old):
    d = old.diagnostics
    assert list(d.names) == RECORDED["names"]
    for key in ("rhat", "ess_bulk", "ess_tail", "ebfmi"):
        np.testing.assert_allclose(getattr(d, key), _nan(RECORDED[key]), rtol=RTOL,
                                   equal_nan=True, err_msg=key)
    assert d.divergences == RECORDED["divergences"]
    assert list(d.warnings) == RECORDED["warnings"]


def test_the_comparison_tells_estimators_apart(old):
    # Negative control: classic split R-hat (not rank-normalised) on the same draws misses
    # the recorded values by far more than RTOL, so a changed estimator would fail above.
    b = old.weights[..., 1]
    classic = arviz_compat.rhat(b, method="split")
    assert abs(classic / RECORDED["rhat"][1] - 1) > 1e3 * RTOL


def test_old_file_re_renders_its_report(old, tmp_path):
    report = ambiguity(old)
    assert [row["feature"] for row in report.weights] == ["a", "b", "c", "always"]
    # The recorded warnings (R-hat, ESS, a divergence) reach the report.
    assert report.diagnostics["warnings"] == RECORDED["warnings"]
    page = report.to_html(tmp_path / "report.html").read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>") and page.rstrip().endswith("</html>")
    assert "always" in page and "rationality" in page
    assert json.loads(report.to_json(tmp_path / "report.json").read_text())["weights"]


def test_old_file_is_what_plain_xarray_opens():
    import xarray as xr

    with xr.open_datatree(OLD) as tree:
        groups = {g.strip("/") for g in tree.groups} - {""}
        assert {"posterior", "sample_stats", "constant_data"} <= groups
        assert tree["posterior"]["weights"].dims == ("chain", "draw", "feature")
