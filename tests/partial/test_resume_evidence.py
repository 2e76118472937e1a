"""Resumes of a run with further evidence are exact: the partial-episode term's warm starts
travel in the checkpoint.

Outside reference: the uninterrupted run with the same seed, as in tests/resume. The sparse
ring problem of tests/resume (GMRES, warm-started) makes the last bits of the partial term's
log density depend on its warm starts; the negative control drops them and must differ.
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest
from resume.test_warm_starts import sparse_likelihood

import bayesirl as bi
from bayesirl.evidence import ComparisonTerm, PartialEpisodes, PartialTerm
from bayesirl.execution import chains
from bayesirl.execution.interrupt import StopHook

RUN = dict(chains=1, draws=8, warmup=16, seed=4, progress=False, backend=bi.Processes(1))
PRIOR = bi.Normal(0.0, 2.0)


@cache
def _walks() -> PartialEpisodes:
    lik = sparse_likelihood()
    demos = bi.simulate(lik.mdp, np.array([0.8, -0.5]), episodes=4, length=10, seed=7)
    states = [np.where(np.arange(s.size) % 4 == 3, -1, s) for s, _ in demos.episodes]
    return PartialEpisodes(states, [np.full(a.size, -1) for _, a in demos.episodes])


def _evidence():
    """Fresh terms (own warm starts) for every run."""
    mdp = sparse_likelihood().mdp
    diffs = np.random.default_rng(3).normal(size=(10, 2))
    return [PartialTerm(mdp, _walks()), ComparisonTerm(diffs, rationality=1.0)]


@cache
def _uninterrupted() -> bi.Posterior:
    return bi.sample(sparse_likelihood(), PRIOR, evidence=_evidence(), **RUN)


def _resumed(path, monkeypatch) -> bi.Posterior:
    monkeypatch.setattr(chains, "TEST_STOP", StopHook(0, iteration=12))
    with pytest.raises(bi.Interrupted):
        bi.sample(sparse_likelihood(), PRIOR, evidence=_evidence(), checkpoint=path, **RUN)
    monkeypatch.setattr(chains, "TEST_STOP", None)
    return bi.sample(sparse_likelihood(), PRIOR, evidence=_evidence(), checkpoint=path,
                     resume=True, **RUN)


def test_resume_with_further_evidence_is_exact(tmp_path, monkeypatch):
    full, resumed = _uninterrupted(), _resumed(tmp_path / "a.npz", monkeypatch)
    assert np.array_equal(resumed.weights, full.weights)


def test_negative_control_without_the_partial_terms_warm_starts_differs(tmp_path,
                                                                         monkeypatch):
    load = chains._Warm.load

    def forgetful(self, arrays):
        load(self, {k: v for k, v in arrays.items() if ".partial." not in k})
    monkeypatch.setattr(chains._Warm, "load", forgetful)
    resumed = _resumed(tmp_path / "b.npz", monkeypatch)
    assert not np.array_equal(resumed.weights, _uninterrupted().weights)


def test_checkpoint_refuses_other_evidence(tmp_path, monkeypatch):
    path = tmp_path / "c.npz"
    monkeypatch.setattr(chains, "TEST_STOP", StopHook(0, iteration=2))
    with pytest.raises(bi.Interrupted):
        bi.sample(sparse_likelihood(), PRIOR, evidence=_evidence(), checkpoint=path, **RUN)
    monkeypatch.setattr(chains, "TEST_STOP", None)
    with pytest.raises(bi.InputError, match="different problem"):
        bi.sample(sparse_likelihood(), PRIOR, evidence=_evidence()[:1], checkpoint=path,
                  resume=True, **RUN)
