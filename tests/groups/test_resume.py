"""Resumes of a several-demonstrator run are exact: every demonstrator's warm starts travel.

Outside reference: the uninterrupted run with the same seed (numpy's PCG64 stream and the
sampler are deterministic), as in tests/resume. A sparse problem (GMRES with an LU
preconditioner, warm-started) makes the last bits of each log density depend on the warm
starts; the negative control drops one demonstrator's warm starts and must differ.
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest
from resume.test_warm_starts import sparse_likelihood

import bayesirl as bi
from bayesirl.execution import chains
from bayesirl.execution.backend import Processes
from bayesirl.execution.interrupt import StopHook

from .problems import labelled_demos

RUN = dict(chains=1, draws=8, warmup=16, seed=4, progress=False, backend=Processes(1),
           pooling="partial")
PRIOR = bi.Normal(0.0, 2.0)


@cache
def likelihood() -> bi.BoltzmannLikelihood:
    base = sparse_likelihood()
    demos = labelled_demos(base.mdp, {"ana": (0.8, -0.5), "ben": (0.1, 0.6)}, 2, 10, 1)
    return bi.BoltzmannLikelihood(base.mdp, demos)


@cache
def _uninterrupted() -> bi.Posterior:
    return bi.sample(likelihood(), PRIOR, **RUN)


def _resumed(path, monkeypatch) -> bi.Posterior:
    monkeypatch.setattr(chains, "TEST_STOP", StopHook(0, iteration=12))
    with pytest.raises(bi.Interrupted):
        bi.sample(likelihood(), PRIOR, checkpoint=path, **RUN)
    monkeypatch.setattr(chains, "TEST_STOP", None)
    return bi.sample(likelihood(), PRIOR, checkpoint=path, resume=True, **RUN)


def test_resume_of_a_partial_pooling_run_is_exact(tmp_path, monkeypatch):
    full, resumed = _uninterrupted(), _resumed(tmp_path / "a.npz", monkeypatch)
    assert np.array_equal(resumed.weights, full.weights)
    for key in ("demonstrator_weights", "spread"):
        assert np.array_equal(resumed.groups[key], full.groups[key])


def test_negative_control_without_one_demonstrators_warm_starts_differs(tmp_path,
                                                                         monkeypatch):
    load = chains._Warm.load

    def forgetful(self, arrays):
        load(self, {k: v for k, v in arrays.items() if not k.startswith("lik.d1.")})
    monkeypatch.setattr(chains._Warm, "load", forgetful)
    resumed = _resumed(tmp_path / "b.npz", monkeypatch)
    assert not np.array_equal(resumed.weights, _uninterrupted().weights)


def test_checkpoint_refuses_another_pooling(tmp_path, monkeypatch):
    path = tmp_path / "c.npz"
    monkeypatch.setattr(chains, "TEST_STOP", StopHook(0, iteration=2))
    with pytest.raises(bi.Interrupted):
        bi.sample(likelihood(), PRIOR, checkpoint=path, **RUN)
    monkeypatch.setattr(chains, "TEST_STOP", None)
    with pytest.raises(bi.InputError, match="different problem"):
        bi.sample(likelihood(), PRIOR, checkpoint=path, resume=True,
                  **{**RUN, "pooling": "separate"})
