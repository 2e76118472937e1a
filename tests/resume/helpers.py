"""Shared runs for the resume tests: small problems, few draws, a deterministic stop hook."""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest
from posterior.problems import PRIOR, two_feature_likelihood

import bayesirl as bi
from bayesirl.execution import chains
from bayesirl.execution.backend import Processes
from bayesirl.execution.interrupt import StopHook

# 40 warmup iterations (Stan's 15/75/10 % windows: slow windows end at 34, so a metric
# update and a step-size restart happen before the stops below) and 30 draws per chain.
RUN = dict(chains=2, draws=30, warmup=40, seed=4, progress=False)


@cache
def uninterrupted(method: str, processes: int) -> bi.Posterior:
    """The reference: the same run without checkpoint or stop."""
    return bi.sample(two_feature_likelihood(), PRIOR, method=method,
                     backend=Processes(processes), **RUN)


def interrupt(monkeypatch, path, stop: StopHook, **kwargs) -> bi.Interrupted:
    """Run with the stop hook set; return the Interrupted it raises."""
    monkeypatch.setattr(chains, "TEST_STOP", stop)
    try:
        with pytest.raises(bi.Interrupted) as caught:
            sample(path, **kwargs)
    finally:
        monkeypatch.setattr(chains, "TEST_STOP", None)
    return caught.value


def sample(path, resume: bool = False, likelihood=None, **kwargs) -> bi.Posterior:
    """``bi.sample`` on the two-feature problem with RUN, overridable."""
    # ``processes=n`` is this helper's shorthand for ``backend=Processes(n)`` (default 1).
    args = {**RUN, "method": "nuts", "backend": Processes(kwargs.pop("processes", 1)), **kwargs}
    lik = two_feature_likelihood() if likelihood is None else likelihood
    return bi.sample(lik, args.pop("prior", PRIOR), checkpoint=path, resume=resume, **args)


def assert_identical(a: bi.Posterior, b: bi.Posterior) -> None:
    """Same draws, statistics, adapted settings and evaluation counts, bit for bit."""
    assert a.weights.shape == b.weights.shape
    assert np.array_equal(a.weights, b.weights)
    assert a.stats.keys() == b.stats.keys()
    for key in a.stats:
        assert np.array_equal(a.stats[key], b.stats[key], equal_nan=True), key
    assert a.settings["adapted"] == b.settings["adapted"]
