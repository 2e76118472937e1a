"""Further evidence in the posterior: sample(evidence=...), the posterior file, the
checkpoint fingerprint and ``bayesirl fit --comparisons``.

The reference for the round trip is the model built directly from the same terms: a
reloaded posterior must evaluate the same log density bit for bit, and one without the
further evidence must not (negative control).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from cli.helpers import TINY_TOML

import bayesirl as bi
from bayesirl.cli import main
from bayesirl.commands.evidence_files import contribution_lines
from bayesirl.commands.fit import _load
from bayesirl.errors import InputError
from bayesirl.execution import checkpoint
from bayesirl.posterior.groups import make_model
from bayesirl.posterior.model import PosteriorModel

from .test_check_command import EPISODES
from .test_episode_files import CSV

ANSWERS = EPISODES + '{"preferred": "a", "other": "b"}\n'
THETA = np.array([0.3, 0.5])


@pytest.fixture
def files(tmp_path):
    for name, text in {"p.toml": TINY_TOML, "e.csv": CSV, "c.jsonl": ANSWERS}.items():
        (tmp_path / name).write_text(text)
    return tmp_path


def test_posterior_file_keeps_the_further_evidence(files):
    problem, lik, extra = _load(files / "p.toml", files / "e.csv", files / "c.jsonl")
    assert [type(t).__name__ for t in extra] == ["PartialTerm", "ComparisonTerm"]
    post = bi.sample(lik, prior=problem.prior, evidence=extra, chains=1, draws=20, warmup=20,
                     backend=bi.Processes(1), progress=False)
    post.save(files / "post.nc")
    back = bi.Posterior.load(files / "post.nc")
    direct = PosteriorModel(lik, problem.prior, extra=extra)
    got, want = back.model.logdensity_and_grad(THETA), direct.logdensity_and_grad(THETA)
    assert got[0] == want[0] and np.array_equal(got[1], want[1])
    without = PosteriorModel(lik, problem.prior).logdensity_and_grad(THETA)
    assert abs(without[0] - want[0]) > 1.0  # negative control: the evidence counts
    lines = contribution_lines(back)
    assert [line.split(":")[0].strip() for line in lines[2:]] == [
        "fully recorded episodes", "episodes with unrecorded parts", "comparisons"]
    plain = bi.sample(lik, prior=problem.prior, chains=1, draws=5, warmup=5,
                      backend=bi.Processes(1), progress=False)
    assert contribution_lines(plain) == []  # one kind of evidence: nothing to split
    from bayesirl.report import evidence_split

    assert evidence_split.record(plain) is None  # nor a report section


def test_fingerprint_covers_the_further_evidence(files):
    problem, lik, extra = _load(files / "p.toml", files / "e.csv", files / "c.jsonl")
    settings = {"draws": 10}
    ids = [checkpoint.identity(PosteriorModel(lik, problem.prior, extra=e), settings, 0, 2)
           ["fingerprint"] for e in (extra, extra[:1], ())]
    assert len(set(ids)) == 3
    # the one-term model's fingerprint is what it was before further evidence existed
    assert ids[2] == checkpoint.identity(PosteriorModel(lik, problem.prior), settings, 0, 2)[
        "fingerprint"]


def test_other_poolings_refuse_further_evidence(files):
    _, lik, extra = _load(files / "p.toml", files / "e.csv", files / "c.jsonl")
    with pytest.raises(InputError, match="needs pooling 'pooled'"):
        make_model(lik, pooling="separate", extra=extra)


def test_fit_with_comparisons_from_the_command_line(files, capsys):
    out = files / "run"
    code = main(["fit", str(files / "p.toml"), str(files / "e.csv"), "--comparisons",
                 str(files / "c.jsonl"), "--out", str(out), "--chains", "1", "--draws", "20",
                 "--warmup", "20", "--quiet"])
    assert code == 0, capsys.readouterr().err
    summary = json.loads((out / "summary.json").read_text())
    assert summary["comparisons"].endswith("c.jsonl")
    assert set(summary["inputs_sha256"]) == {"problem", "demonstrations", "comparisons"}
    # the evidence split is in summary.json and report.html, not only printed
    split = summary["report"]["evidence_split"]
    assert [k["name"] for k in split["kinds"]] == [
        "fully recorded episodes", "episodes with unrecorded parts", "comparisons"]
    assert split["features"] == ["mud", "water"] and len(split["sd_all"]) == 2
    page = (out / "report.html").read_text()
    assert '<section id="evidence">' in page and "comparisons alone" in page
    assert len(bi.Posterior.load(out / "posterior.nc").model.extra) == 2
    code = main(["fit", "--resume", str(out), "--comparisons", str(files / "c.jsonl")])
    assert code == 2 and "takes no problem, demonstration or comparison files" in (
        capsys.readouterr().err)


def test_partial_episodes_need_the_soft_demonstrator(files):
    text = TINY_TOML.replace("discount = 0.9", "discount = 0.9\nq_function = \"optimal\"")
    (files / "p.toml").write_text(text)
    with pytest.raises(InputError, match="soft demonstrator only"):
        _load(files / "p.toml", files / "e.csv")
    (files / "full.csv").write_text(CSV.split("walk,0")[0])  # control: complete walks only
    assert _load(files / "p.toml", files / "full.csv")[2] == ()
