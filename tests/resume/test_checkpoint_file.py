"""The checkpoint file: refused for any other run, written atomically, readable without pickle."""

from __future__ import annotations

import json

import numpy as np
import pytest
from posterior.problems import small_mdp, two_feature_likelihood

import bayesirl as bi
from bayesirl.execution import checkpoint as ckpt
from bayesirl.execution.interrupt import StopHook

from .helpers import interrupt, sample


@pytest.fixture
def saved(tmp_path, monkeypatch):
    """A checkpoint of the helpers' run, stopped in chain 1's sampling phase."""
    path = tmp_path / "run.npz"
    interrupt(monkeypatch, path, StopHook(1, iteration=55))
    return path


def _other_demos():
    lik = two_feature_likelihood()
    demos = bi.simulate(lik.mdp, np.array([0.8, -0.5]), episodes=6, length=8, seed=99)
    return bi.BoltzmannLikelihood(lik.mdp, demos)


def _other_mdp():
    mdp = small_mdp(0, 2)
    changed = bi.TabularMDP(mdp.transitions, mdp.features, discount=0.81,
                            feature_names=mdp.feature_names)
    return bi.BoltzmannLikelihood(changed, two_feature_likelihood().demos)


CHANGES = {
    "seed": (dict(seed=5), "seed was 4"),
    "chains": (dict(chains=3), "chains was 2"),
    "draws": (dict(draws=31), "draws was 30"),
    "warmup": (dict(warmup=41), "warmup was 40"),
    "method": (dict(method="random-walk"), "method was 'nuts'"),
    "target_accept": (dict(target_accept=0.9), "target_accept was None"),
    "dense_mass": (dict(dense_mass=True), "dense_mass was False"),
    "prior": (dict(prior=bi.Normal(0.0, 3.0)), "different problem"),
    "demonstrations": (dict(likelihood=_other_demos()), "different problem"),
    "mdp": (dict(likelihood=_other_mdp()), "different problem"),
}


@pytest.mark.parametrize("what", list(CHANGES))
def test_resume_with_other_inputs_is_refused(saved, what):
    change, message = CHANGES[what]
    with pytest.raises(bi.InputError, match=message):
        sample(saved, resume=True, **change)


def test_resume_with_the_same_inputs_is_accepted(saved):
    # Control for the refusals: the unchanged run resumes (it would raise otherwise).
    assert sample(saved, resume=True).complete


def test_missing_and_unreadable_checkpoints(tmp_path):
    with pytest.raises(bi.InputError, match="needs checkpoint"):
        sample(None, resume=True)
    with pytest.raises(bi.InputError, match="no such file"):
        sample(tmp_path / "absent.npz", resume=True)
    junk = tmp_path / "junk.npz"
    junk.write_bytes(b"not a zip file")
    with pytest.raises(bi.InputError, match="not a readable checkpoint"):
        sample(junk, resume=True)


def test_file_is_plain_npz_with_a_json_header(saved):
    # numpy.load with allow_pickle=False: nothing in the file needs unpickling.
    with np.load(saved, allow_pickle=False) as z:
        header = json.loads(str(z["header"]))
        names = set(z.files)
    assert header["format"] == ckpt.FORMAT and header["complete"] is False
    assert [r["iteration"] for r in header["records"]] == [70, 55]
    assert {"c0.position", "c1.grad", "c1.kept_draws", "c0.metric"} <= names
    assert header["records"][1]["rng"]["bit_generator"] == "PCG64"


def test_failed_write_leaves_the_previous_checkpoint(saved, monkeypatch):
    before = saved.read_bytes()

    def broken(fh, **arrays):
        fh.write(b"PK partial")  # a half-written file ...
        raise OSError("disk full")  # ... then the write fails

    monkeypatch.setattr(ckpt.np, "savez", broken)
    with pytest.raises(OSError, match="disk full"):
        sample(saved, resume=True)
    assert saved.read_bytes() == before
    assert [p.name for p in saved.parent.iterdir()] == [saved.name]  # no temporary left


def test_periodic_writes_during_a_run(tmp_path, monkeypatch):
    # With a zero interval every state report is written; the last write before the stop
    # is a valid checkpoint that already holds the draws so far.
    from bayesirl.execution import run

    monkeypatch.setattr(run, "CHECKPOINT_EVERY", 0.0)
    writes = []
    real = ckpt.save

    def counting(path, *args, **kwargs):
        writes.append(ckpt.read(real(path, *args, **kwargs))[0]["records"])
        return path

    monkeypatch.setattr(ckpt, "save", counting)
    interrupt(monkeypatch, tmp_path / "p.npz", StopHook(0, iteration=50))
    iterations = [r[0]["iteration"] for r in writes if r[0] is not None]
    assert len(writes) > 20 and iterations == sorted(iterations) and iterations[-1] == 50
