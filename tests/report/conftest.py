"""Reports for the HTML tests, built once per session: sampling is the slow part.

Two problems cover the page's branches: the invented park grid (maps, no structural
findings, fixed rationality) and a three-state ring with a constant feature (no grid,
structural findings, an undetermined direction, a pinned weight, sampled rationality and a
Laplace prior). Short runs keep the whole file well under 90 seconds; their diagnostics are
overridden where a test needs a passing or a failing run, so no test depends on how a short
chain happens to mix.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.report import ambiguity
from bayesirl.report.ambiguity import headline
from bayesirl.scenarios import PARK_WEIGHTS, park_mdp

# Markup in a warning: the page must show it as text, never as tags.
HOSTILE_WARNING = 'R-hat >= 1.01 for <b>mud</b> & "slope": forced failure for the test'


def _sample(likelihood, **kwargs):
    return bi.sample(likelihood, chains=2, draws=200, warmup=200, seed=0, progress=False,
                     **kwargs)


def force_diagnostics(report, passing: bool):
    """A copy of ``report`` whose diagnostics all pass, or fail with a hostile warning."""
    diag = dict(report.diagnostics)
    names = list(diag["rhat"])
    if passing:
        diag.update(rhat=dict.fromkeys(names, 1.001), ess_bulk=dict.fromkeys(names, 1000.0),
                    ess_tail=dict.fromkeys(names, 1000.0), warnings=[], trustworthy=True)
    else:
        diag.update(rhat={**diag["rhat"], names[0]: 1.2}, warnings=[HOSTILE_WARNING],
                    trustworthy=False)
    out = dataclasses.replace(report, diagnostics=diag)
    out.verdict = headline(out)
    return out


@pytest.fixture(scope="session")
def park_report():
    """Ambiguity report on the park grid (4 weights, 40 episodes)."""
    mdp = park_mdp()
    demos = bi.simulate(mdp, PARK_WEIGHTS, episodes=40, length=15, seed=1, start=0)
    post = _sample(bi.BoltzmannLikelihood(mdp, demos))
    return ambiguity(post, states=[0, 10], truth=PARK_WEIGHTS)


@pytest.fixture(scope="session")
def ring_report():
    """Ambiguity report on a 3-state ring whose fourth feature is constant."""
    p = np.zeros((3, 2, 3))
    p[[0, 1, 2], 0, [0, 1, 2]] = 1  # stay
    p[[0, 1, 2], 1, [1, 2, 0]] = 1  # move on round the ring
    phi = np.column_stack([np.eye(3), np.ones(3)])
    mdp = bi.TabularMDP(p, phi, discount=0.9, feature_names=["a", "b", "c", "always"])
    demos = bi.simulate(mdp, [1.0, 0.0, -1.0, 0.0], episodes=20, length=10, seed=0)
    post = _sample(bi.BoltzmannLikelihood(mdp, demos), rationality=bi.LogNormal(0, 1),
                   pin={"a": 1.0}, prior=bi.Laplace(0, 2))
    return ambiguity(post, states=[0, 2])


@pytest.fixture(scope="session")
def pages(park_report, ring_report, tmp_path_factory):
    """HTML files: park with passing and with failing diagnostics, and the ring."""
    root = tmp_path_factory.mktemp("html")
    reports = {"pass": force_diagnostics(park_report, True),
               "fail": force_diagnostics(park_report, False), "ring": ring_report}
    out = {}
    for name, report in reports.items():
        path = report.to_html(root / f"{name}.html")
        out[name] = (report, path, path.read_text(encoding="utf-8"))
    return out
