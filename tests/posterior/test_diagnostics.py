"""Convergence diagnostics and their warnings, at the thresholds named in diagnostics.py.

Outside references (the thresholds' sources, as cited in bayesirl/posterior/diagnostics.py):
Vehtari, Gelman, Simpson, Carpenter & Buerkner (2021, Bayesian Analysis 16) for rank-
normalised split R-hat < 1.01 and bulk/tail ESS >= 400; Betancourt (2016, arXiv:1604.00695)
for E-BFMI >= 0.3 and its estimator sum (E_n - E_{n-1})^2 / sum (E_n - mean E)^2;
Betancourt (2017, arXiv:1701.02434) for divergences. ArviZ's ESS is capped at
N log10(N) (arviz.ess documentation), which makes a too-short run's low ESS certain.
"""

from __future__ import annotations

import io

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.execution.backend import Processes
from bayesirl.posterior import Posterior
from bayesirl.posterior import diagnostics as diag

from .problems import (
    PRIOR,
    WalledLikelihood,
    nuts_pinned,
    nuts_two_feature,
    two_feature_likelihood,
)


def _variant(post: Posterior, weights=None, stats=None) -> Posterior:
    """The same run with replaced draws or statistics (diagnostics recomputed)."""
    return Posterior(post.weights if weights is None else weights, post.rationality,
                     post.stats if stats is None else stats, post.model, post.settings,
                     post.seed, post.wall_time, post.chain_times)


def test_thresholds_are_the_cited_values():
    assert (diag.RHAT_MAX, diag.ESS_MIN, diag.EBFMI_MIN, diag.DIVERGENCES_MAX) == \
        (1.01, 400, 0.3, 0)


def test_healthy_run_has_no_warnings():
    post = nuts_two_feature()  # 4 x 1000 NUTS draws on a well-identified 2-D posterior
    d = post.diagnostics
    assert d.warnings == () and d.ok
    assert np.all(d.rhat < diag.RHAT_MAX) and np.all(d.ess_bulk >= diag.ESS_MIN)
    assert d.divergences == 0 and np.all(d.ebfmi >= diag.EBFMI_MIN)
    out = io.StringIO()
    post.warn(out)
    assert out.getvalue() == ""
    assert "warning" not in post.summary()


def test_chains_stuck_in_different_places_warn_about_rhat():
    # Chain 0 of the healthy run moved by one posterior sd in x: the between-chain variance
    # of x becomes ~ (1 sd)^2 * 3/16, so R-hat ~ sqrt(1 + 3/16) ~ 1.09 >> 1.01; y untouched.
    post = nuts_two_feature()
    weights = post.weights.copy()
    weights[0, :, 0] += weights[..., 0].std()
    d = _variant(post, weights=weights).diagnostics
    assert d.rhat[0] > 1.05 and d.rhat[1] < diag.RHAT_MAX
    [msg] = [w for w in d.warnings if "R-hat" in w]
    assert f">= {diag.RHAT_MAX}" in msg and "for x:" in msg and "y" not in msg.split(":")[0]


def test_too_short_run_warns_about_ess(capsys):
    # 4 chains x 25 draws: ESS <= N log10 N = 200 < 400 whatever the chains do.
    post = bi.sample(two_feature_likelihood(), PRIOR, chains=4, draws=25, warmup=25, seed=2,
                     progress=False, backend=Processes(1))
    d = post.diagnostics
    assert np.all(d.ess_bulk < diag.ESS_MIN)
    [msg] = [w for w in d.warnings if "ESS" in w]
    assert f"< {diag.ESS_MIN}" in msg and "x, y" in msg
    # sample() prints every warning after the run (stderr), never silently
    assert f"warning: {msg}" in capsys.readouterr().err


def test_a_wall_inside_the_bulk_forces_divergences():
    # log L = -inf where x > 0.9, inside the posterior bulk (mean 0.83, sd 0.22): NUTS
    # trajectories that cross it diverge (Betancourt 2017, sec. 6.2).
    lik = WalledLikelihood(two_feature_likelihood(), cut=0.9)
    post = bi.sample(lik, PRIOR, chains=2, draws=200, warmup=200, seed=1, progress=False,
                     backend=Processes(1))
    d = post.diagnostics
    assert d.divergences == int(post.stats["diverging"].sum()) > 0
    assert np.all(post.weights[..., 0] <= 0.9)  # no draw beyond the wall
    [msg] = [w for w in d.warnings if "divergent" in w]
    assert msg.startswith(f"{d.divergences} divergent transitions")


# Two summation orders of sums of squares of deviations from a mean of |E| ~ 50 with
# variance ~ 1 over n = 1000 terms differ by up to ~ n eps E^2 / var ~ 5e-10 relative.
EBFMI_RTOL = 1e-8


def _betancourt_ebfmi(energy: np.ndarray) -> np.ndarray:
    """Per chain: sum (E_n - E_{n-1})^2 / sum (E_n - mean E)^2 (Betancourt 2016, eq. 3.6)."""
    return np.sum(np.diff(energy, axis=1) ** 2, axis=1) / np.sum(
        (energy - energy.mean(axis=1, keepdims=True)) ** 2, axis=1)


def test_low_ebfmi_warns_and_matches_betancourts_estimator():
    # Chain 1's energies replaced by a slowly mixing AR(1) series (phi = 0.95): its E-BFMI
    # is ~ 2 (1 - phi) = 0.1 < 0.3, as when momentum resampling cannot move the energy.
    post = nuts_two_feature()
    stats = dict(post.stats)
    energy = stats["energy"].copy()
    rng = np.random.default_rng(9)
    e = np.empty(energy.shape[1])
    e[0] = 0.0
    for n in range(1, e.size):
        e[n] = 0.95 * e[n - 1] + rng.standard_normal()
    energy[1] = energy[1].mean() + e
    stats["energy"] = energy
    d = _variant(post, stats=stats).diagnostics
    np.testing.assert_allclose(d.ebfmi, _betancourt_ebfmi(energy), rtol=EBFMI_RTOL)
    assert d.ebfmi[1] < diag.EBFMI_MIN and np.all(np.delete(d.ebfmi, 1) >= diag.EBFMI_MIN)
    [msg] = [w for w in d.warnings if "E-BFMI" in w]
    assert msg.startswith(f"E-BFMI < {diag.EBFMI_MIN} in 1 chain(s)")


def test_healthy_ebfmi_matches_betancourts_estimator():
    post = nuts_two_feature()
    np.testing.assert_allclose(post.diagnostics.ebfmi,
                               _betancourt_ebfmi(post.stats["energy"]), rtol=EBFMI_RTOL)


def test_random_walk_has_no_energy_and_no_ebfmi_warning():
    post = bi.sample(two_feature_likelihood(), PRIOR, chains=4, draws=1500, warmup=500,
                     seed=4, method="random-walk", progress=False, backend=Processes(1))
    d = post.diagnostics
    assert np.all(np.isnan(d.ebfmi)) and not any("E-BFMI" in w for w in d.warnings)
    assert d.divergences == 0


@pytest.mark.parametrize(
    "rhat, ess, div, ebfmi, expected",
    [
        (1.0099, 400.0, 0, 0.3, ()),
        (1.01, 400.0, 0, 0.3, ("R-hat",)),  # "use only when R-hat < 1.01"
        (1.0, 399.9, 0, 0.3, ("ESS",)),
        (1.0, 400.0, 1, 0.3, ("divergent",)),
        (1.0, 400.0, 0, 0.2999, ("E-BFMI",)),
        (1.5, 10.0, 3, 0.1, ("R-hat", "ESS", "divergent", "E-BFMI")),
    ],
)
def test_warning_thresholds_at_their_boundaries(rhat, ess, div, ebfmi, expected):
    names = ("x", "y")
    warnings = diag._warnings(names, np.array([1.0, rhat]), np.array([1000.0, ess]),
                              np.array([1000.0, 1000.0]), div, np.array([0.9, ebfmi]))
    assert len(warnings) == len(expected)
    for key, msg in zip(expected, warnings, strict=True):
        assert key in msg


def test_pinned_weight_does_not_trigger_warnings():
    # Regression (found while writing these tests, fixed in 7062d0f): the pinned weight's
    # constant draws have NaN R-hat, which used to warn "R-hat >= 1.01 for x" on every run
    # with a pin. A healthy 4 x 1000 run (ESS > 1500 for every free quantity).
    d = nuts_pinned().diagnostics
    free = [i for i, n in enumerate(d.names) if n != "x"]
    assert np.all(d.rhat[free] < diag.RHAT_MAX) and d.divergences == 0
    assert d.warnings == ()


def test_nan_diagnostics_warn_unless_the_parameter_is_pinned():
    # NaN (e.g. a free weight stuck at one value) must never pass silently; only names
    # declared fixed (pinned) are exempt.
    nan = np.array([np.nan, 1.0])
    ess = np.array([np.nan, 1000.0])
    args = (nan, ess, ess, 0, np.array([0.9, 0.9]))
    assert [w.split(" ")[0] for w in diag._warnings(("x", "y"), *args)] == ["R-hat", "bulk-"]
    assert diag._warnings(("x", "y"), *args, fixed={"x"}) == ()
