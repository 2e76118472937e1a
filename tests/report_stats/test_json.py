"""``AmbiguityReport.to_json``: strict JSON with the documented fields, written atomically.

"Valid JSON" is RFC 8259: Python's ``json`` module also writes and reads ``NaN`` and
``Infinity``, which are not JSON, so the file is parsed with a hook that rejects them.
"""

from __future__ import annotations

import json
import math
import os

import numpy as np
import pytest

import bayesirl as bi
from bayesirl import files as report_files
from bayesirl.execution.backend import Processes
from bayesirl.report import ambiguity
from bayesirl.report.structural import describe
from bayesirl.report.verdicts import WORDS

from .problems import mud2_report

TOP_KEYS = {"weights", "directions", "structural", "derived", "policy_risk", "diagnostics"}
VERDICTS = set(WORDS)
CAUSES = {"constant", "collinear", "shaping", "unvisited", "thin-data", "flat-information"}


def _reject_constant(name):
    raise ValueError(f"not JSON (RFC 8259): {name}")


def load_strict(path):
    """Parse a file as RFC 8259 JSON (no NaN / Infinity)."""
    with open(path, encoding="utf-8") as fh:
        return json.load(fh, parse_constant=_reject_constant)


def _number(x) -> bool:
    return isinstance(x, int | float) and not isinstance(x, bool) and math.isfinite(x)


def test_strict_parser_rejects_nan(tmp_path):
    # Negative control for load_strict: json.dumps writes NaN by default; we must refuse it.
    p = tmp_path / "nan.json"
    p.write_text(json.dumps({"x": float("nan")}))
    with pytest.raises(ValueError, match="RFC 8259"):
        load_strict(p)


def test_json_has_the_documented_fields(tmp_path):
    report = mud2_report()
    path = report.to_json(tmp_path / "sub" / "report.json")
    data = load_strict(path)
    assert TOP_KEYS <= set(data)
    names = list(report.posterior.feature_names)
    assert [w["feature"] for w in data["weights"]] == names
    for w in data["weights"]:
        assert {"feature", "mean", "sd", "interval", "contraction", "verdict"} <= set(w)
        assert _number(w["mean"]) and _number(w["sd"]) and w["sd"] > 0
        lo, hi = w["interval"]
        assert _number(lo) and _number(hi) and lo < w["mean"] < hi
        assert _number(w["contraction"]) and w["contraction"] <= 1.0
        assert w["verdict"] in VERDICTS
    assert data["directions"]
    for d in data["directions"]:
        assert {"combination", "variance_ratio", "verdict"} <= set(d)
        assert d["combination"] and set(d["combination"]) <= set(names)
        assert all(_number(c) for c in d["combination"].values())
        assert _number(d["variance_ratio"]) and d["variance_ratio"] >= 0
        assert d["verdict"] in VERDICTS | {"undetermined"}
    assert data["structural"]  # collinear mud/mud2 and the flat Fisher direction
    for f in data["structural"]:
        assert {"features", "cause", "message"} <= set(f)
        assert isinstance(f["features"], list) and set(f["features"]) <= set(names)
        assert f["cause"] in CAUSES
        assert isinstance(f["message"], str) and describe(f["combination"]) in f["message"]
    assert {"collinear", "flat-information"} <= {f["cause"] for f in data["structural"]}
    assert _number(data["policy_risk"]["bound"]) and data["policy_risk"]["bound"] >= 0
    assert {"ratios", "action_probabilities"} <= set(data["derived"])


def test_json_round_trips_the_report(tmp_path):
    # Every number in the file is the report's own (floats survive json exactly).
    report = mud2_report()
    data = load_strict(report.to_json(tmp_path / "r.json"))
    expected = json.loads(json.dumps(report.as_dict()))
    assert data == expected


def _failing_fdopen(record):
    """os.fdopen whose file writes the first half of the text and then fails."""
    real = os.fdopen

    def fake(fd, *args, **kwargs):
        fh = real(fd, *args, **kwargs)

        class Half:
            def __enter__(self):
                return self

            def __exit__(self, *exc):
                fh.close()
                return False

            def write(self, text):
                fh.write(text[: len(text) // 2])
                fh.flush()
                record["written"] = os.fstat(fh.fileno()).st_size
                raise OSError("disk full (injected)")

        return Half()

    return fake


@pytest.mark.parametrize("existing", [False, True], ids=["new-file", "replace-old"])
def test_failed_write_leaves_no_partial_file(tmp_path, monkeypatch, existing):
    report = mud2_report()
    target = tmp_path / "report.json"
    if existing:
        target.write_text('{"old": true}\n')
    record = {}
    monkeypatch.setattr(report_files.os, "fdopen", _failing_fdopen(record))
    with pytest.raises(OSError, match="injected"):
        report.to_json(target)
    # The failure really happened mid-write: half the JSON had reached the disk.
    assert record["written"] > 100
    if existing:
        assert target.read_text() == '{"old": true}\n'
    else:
        assert not target.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == (["report.json"] if existing else [])


def test_failed_rename_leaves_no_partial_file(tmp_path, monkeypatch):
    report = mud2_report()
    target = tmp_path / "report.json"

    def broken_replace(src, dst):
        raise OSError("rename failed (injected)")

    monkeypatch.setattr(report_files.os, "replace", broken_replace)
    with pytest.raises(OSError, match="injected"):
        report.to_json(target)
    assert list(tmp_path.iterdir()) == []


def _tiny_posterior(**kwargs) -> bi.Posterior:
    rng = np.random.default_rng(0)
    trans = rng.dirichlet(np.full(4, 0.5), size=(4, 2))
    mdp = bi.TabularMDP(trans, rng.normal(size=(4, 2, 2)), discount=0.8, feature_names=["x", "y"])
    demos = bi.simulate(mdp, [0.8, -0.5], episodes=8, length=6, seed=1)
    return bi.sample(bi.BoltzmannLikelihood(mdp, demos), bi.Normal(0, 2), chains=2, draws=200,
                     warmup=200, seed=0, progress=False, backend=Processes(1), **kwargs)


# Was a bug (NaN written into the JSON); non-finite numbers are now written as null.
def test_random_walk_report_is_strict_json(tmp_path):
    # Minimal reproduction: ambiguity(bi.sample(..., method="random-walk")).to_json(p), then
    # json.load(open(p), parse_constant=raise) -> ValueError on "NaN" (the "ebfmi" list).
    post = _tiny_posterior(method="random-walk")
    data = load_strict(ambiguity(post).to_json(tmp_path / "rw.json"))
    assert data["diagnostics"]["ebfmi"] == [None] * 2  # no energy in a random walk


def test_pinned_report_is_strict_json(tmp_path):
    # Minimal reproduction: ambiguity(bi.sample(lik, rationality=bi.LogNormal(0, 0.5),
    # pin={"x": 1.0})).to_json(p) -> the file contains "rhat": {"x": NaN, ...}.
    post = _tiny_posterior(rationality=bi.LogNormal(0.0, 0.5), pin={"x": 1.0})
    data = load_strict(ambiguity(post).to_json(tmp_path / "pin.json"))
    assert data["diagnostics"]["rhat"]["x"] is None  # constant draws: R-hat undefined
