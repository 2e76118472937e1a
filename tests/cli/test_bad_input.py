"""Malformed inputs: each gives one message naming the file, field and value; exit code 2.

Every case runs in-process through ``bayesirl.cli.main`` (fast); two also run through a real
subprocess to check the exit status and that no traceback reaches the user.
"""

from __future__ import annotations

import numpy as np
import pytest

from bayesirl.cli import main

from .helpers import TINY_CSV, TINY_TOML, run_subprocess, write_files


def toml(old: str, new: str) -> dict:
    """The tiny problem with one edit (the edit must apply)."""
    assert old in TINY_TOML, old
    return {"tiny.toml": TINY_TOML.replace(old, new, 1)}


def csv(old: str, new: str) -> dict:
    """The tiny demonstrations with one edit."""
    assert old in TINY_CSV, old
    return {"walks.csv": TINY_CSV.replace(old, new, 1)}


ARRAYS_TOML = """[model]
discount = 0.9
[arrays]
npz = "world.npz"
{extra}
"""
FIT = ["fit", "tiny.toml", "walks.csv", "--out", "run"]
CHECK = ["check", "tiny.toml", "walks.csv"]


def _npz(path, transitions=None, features=None):
    p = np.zeros((2, 1, 2))
    p[0, 0, 1] = p[1, 0, 1] = 1.0
    arrays = {"transitions": p if transitions is None else transitions}
    if features is not None:
        arrays["features"] = features
    np.savez(path, **arrays)


def arrays_world(tmp_path, extra="", **kw):
    """An ``[arrays]`` problem over a 2-state chain written into ``tmp_path``."""
    _npz(tmp_path / "world.npz", **kw)
    return {"tiny.toml": ARRAYS_TOML.format(extra=extra)}


CASES = [
    # (id, files or a function of tmp_path giving files, argv, fragments of the message)
    ("empty-problem", {"tiny.toml": ""}, CHECK, ["tiny.toml", "the file is empty"]),
    ("binary-problem", {"tiny.toml": b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR"}, CHECK,
     ["tiny.toml", "binary data"]),
    ("not-utf8", {"tiny.toml": b"title = \"caf\xe9\"\n"}, CHECK,
     ["tiny.toml", "0xe9", "not UTF-8"]),
    ("truncated-toml", {"tiny.toml": TINY_TOML[:TINY_TOML.index("S.m") + 2]}, CHECK,
     ["tiny.toml", "not valid TOML", "end of document", "truncated"]),
    ("toml-syntax", toml("discount = 0.9", "discount = = 0.9"), CHECK,
     ["tiny.toml: not valid TOML", "line 2"]),
    ("missing-problem", {"tiny.toml": None}, CHECK, ["tiny.toml", "no such problem file"]),
    ("no-world", toml("[map]", "[mapp]"), CHECK, ["unknown key", "mapp"]),
    ("negative-discount", toml("discount = 0.9", "discount = -0.5"), CHECK,
     ["[model] discount = -0.5", "expected a number in [0, 1)"]),
    ("discount-one-infinite", toml("discount = 0.9", "discount = 1.0"), CHECK,
     ["[model] discount = 1.0", "[0, 1)"]),
    ("zero-horizon", toml("discount = 0.9", "horizon = 0"), CHECK,
     ["[model] horizon = 0", "integer >= 1"]),
    # 0.1's name of the soft/optimal choice: refused with the new name (negative control:
    # tests/cli/test_files.py reads q_function = "optimal" back).
    ("old-demonstrator-key", toml("discount = 0.9", 'discount = 0.9\ndemonstrator = "optimal"'),
     CHECK, ["[model] demonstrator", "renamed q_function", 'write q_function = "optimal"']),
    ("unknown-prior", toml("[sampler]", "[prior]\nkind = \"cauchy\"\n[sampler]"), CHECK,
     ["[prior] kind = 'cauchy'", "'normal', 'laplace', 'uniform'"]),
    ("negative-prior-scale", toml("[sampler]", "[prior]\nscale = -1.0\n[sampler]"), CHECK,
     ["[prior] scale = -1.0", "expected a positive number"]),
    ("prior-list-length", toml("[sampler]", "[prior]\nscale = [1.0, 2.0, 3.0]\n[sampler]"),
     CHECK, ["[prior] scale", "list of 2 finite numbers", "mud, water"]),
    ("duplicate-feature", toml('["mud", "water"]', '["mud", "mud"]'), CHECK,
     ["[map] features", "'mud' appears more than once"]),
    ("unknown-symbol", toml("S.m", "S.x"), CHECK,
     ["row 0, column 2", "symbol 'x' is not in [map.legend]"]),
    ("ragged-map", toml(".#W", ".#"), CHECK, ["row 1 has 2 cells, row 0 has 3"]),
    ("bad-moves", toml("[map]\n", "[map]\nmoves = 6\n"), CHECK,
     ["[map] moves = 6", "expected 4 or 8"]),
    ("bad-slip", toml("[map]\n", "[map]\nslip = 1.5\n"), CHECK,
     ["[map] slip = 1.5", "[0, 1)"]),
    ("legend-unknown-feature", toml('"m" = { mud = 1 }', '"m" = { mus = 1 }'), CHECK,
     ["[map.legend.m] mus", "unknown key"]),
    ("legend-string-value", toml('"m" = { mud = 1 }', '"m" = { mud = "lots" }'), CHECK,
     ["[map.legend.m] mud = 'lots'", "a finite number"]),
    ("sampled-beta-no-pin", toml("[sampler]", "[rationality]\nlog_sd = 1.0\n[sampler]"),
     CHECK, ["[rationality] pin", "exactly one pinned weight"]),
    ("pin-unknown-feature",
     toml("[sampler]", "[rationality]\nlog_sd = 1.0\npin = { grass = 1.0 }\n[sampler]"),
     CHECK, ["[rationality.pin] grass", "unknown feature"]),
    ("zero-draws", toml("draws = 60", "draws = 0"), CHECK,
     ["[sampler] draws = 0", "integer >= 1"]),
    ("typo-key", toml("draws = 60", "draw = 60"), CHECK, ["[sampler] draw", "unknown key"]),
    ("npz-missing", lambda d: {"tiny.toml": ARRAYS_TOML.format(extra="")}, CHECK,
     ["world.npz", "no such file"]),
    ("npz-truncated", lambda d: {**arrays_world(d, features=np.eye(2)),
                                 "world.npz": (d / "world.npz").read_bytes()[:40]}, CHECK,
     ["world.npz", "not a readable .npz"]),
    ("rows-not-summing-to-one", lambda d: arrays_world(
        d, transitions=np.array([[[0.5, 0.3]], [[0.0, 1.0]]]), features=np.eye(2)), CHECK,
     ["[arrays] (from", "world.npz) transitions: row for (s=0, a=0) sums to 0.8"]),
    ("nan-features-npz", lambda d: arrays_world(d, features=np.array([[0.0], [np.nan]])),
     CHECK, ["world.npz) features: entry (s, f) = (1, 0) is nan"]),
    ("nan-features-csv", lambda d: {**arrays_world(d, extra='features_csv = "f.csv"'),
                                    "f.csv": "speed,noise\n1,2\n3,nan\n"}, CHECK,
     ["f.csv line 3, column 'noise'", "'nan' is not a finite number"]),
    ("duplicate-csv-header", lambda d: {**arrays_world(d, extra='features_csv = "f.csv"'),
                                        "f.csv": "speed,speed\n1,2\n3,4\n"}, CHECK,
     ["f.csv line 1", "'speed' appears more than once"]),
    ("wrong-columns", csv("episode,step,row,col,action", "episode,t,row,col,action"), CHECK,
     ["walks.csv line 1", "columns episode, t, row, col, action",
      "expected episode, step, state, action"]),
    ("truncated-demos", {"walks.csv": TINY_CSV[:TINY_CSV.index("a,2,0,2") + 5]}, CHECK,
     ["walks.csv line 4", "3 values; expected 5"]),
    ("empty-demos", {"walks.csv": "\n\n"}, CHECK, ["walks.csv", "the file is empty"]),
    ("binary-demos", {"walks.csv": bytes(range(256))}, CHECK, ["walks.csv", "binary data"]),
    ("off-the-map", csv("a,2,0,2,down", "a,2,0,7,down"), CHECK,
     ["walks.csv line 4", "cell (row=0, col=7) is off the map", "columns 0..2"]),
    ("blocked-cell", csv("b,1,1,0,up", "b,1,1,1,up"), CHECK,
     ["walks.csv line 7", "(1, 1) is a blocked cell"]),
    ("unknown-action", csv("a,1,0,1,right", "a,1,0,1,jump"), CHECK,
     ["walks.csv line 3", "action 'jump' is not allowed", "up, right, down, left",
      "0..3"]),
    ("action-index-out-of-range", csv("a,1,0,1,right", "a,1,0,1,9"), CHECK,
     ["walks.csv line 3", "action '9' is not allowed"]),
    ("forbidden-step", csv("a,2,0,2,down", "a,2,0,2,left"), CHECK,
     ["walks.csv line 5", "episode 'a' step 3", "from state (0, 2) by action 'left' to "
      "state (1, 2)", "probability 0"]),
    ("step-gap", csv("a,2,0,2,down", "a,5,0,2,down"), CHECK,
     ["walks.csv line 4", "episode 'a' step 5; expected step 2"]),
    ("split-episode", {"walks.csv": TINY_CSV + "a,9,0,0,up\n"}, CHECK,
     ["walks.csv line 9", "episode 'a' continues after another episode"]),
    ("bad-row-number", csv("a,1,0,1,right", "a,1,zero,1,right"), CHECK,
     ["walks.csv line 3", "row 'zero' is not a whole number"]),
    ("unknown-demo-format", {"walks.txt": TINY_CSV}, ["check", "tiny.toml", "walks.txt"],
     ["walks.txt", "unknown demonstration format '.txt'"]),
    ("jsonl-bad-json", {"w.jsonl": '{"states": [0, 1], "actions": ["right"]}\n{"states": [0,'},
     ["check", "tiny.toml", "w.jsonl"], ["w.jsonl line 2", "not valid JSON"]),
    ("jsonl-length-mismatch",
     {"w.jsonl": '{"cells": [[0, 0], [0, 1]], "actions": ["right", "right", "down"]}\n'},
     ["check", "tiny.toml", "w.jsonl"], ["w.jsonl line 1", "3 actions and 2 cells"]),
    ("jsonl-state-index", {"w.jsonl": '{"states": [0, 17], "actions": ["right"]}\n'},
     ["check", "tiny.toml", "w.jsonl"], ["w.jsonl line 1", "state 17 does not exist",
                                         "0..5"]),
    ("longer-than-horizon", {**toml("discount = 0.9", "horizon = 2"), "walks.csv": TINY_CSV},
     CHECK, ["walks.csv line 2", "episode 'a' has 3 steps, more than the horizon 2"]),
    ("unknown-gym-id", {"tiny.toml": '[gym]\nid = "NoSuchLake-v9"\nfeatures_csv = "f.csv"\n'},
     CHECK, ["[gym] id = 'NoSuchLake-v9'", "gymnasium cannot make it"]),
    ("fit-existing-folder", {"run/keep.txt": "an earlier run"}, FIT,
     ["run: already exists", "--force"]),
    ("report-not-a-run", {"notrun/x.txt": "x"}, ["report", "notrun"],
     ["notrun/summary.json: missing", "not a run folder"]),
    ("report-corrupt-posterior", {"r/summary.json": '{"format": "bayesirl-run/1", '
                                                    '"complete": true}',
                                  "r/posterior.nc": b"CDF\x01 truncated"}, ["report", "r"],
     ["r/posterior.nc: not a readable posterior file"]),
    ("resume-not-a-run", {}, ["fit", "--resume", "nowhere"], ["nowhere: no such run folder"]),
    ("resume-with-overrides", {}, ["fit", "--resume", "run", "--draws", "5"],
     ["continues with the run's own settings; drop --draws"]),
    ("unknown-example", {}, ["example", "volcano", "out"], ["unknown example 'volcano'"]),
    ("suggest-bad-scheduler", {}, ["suggest", "nowhere", "--scheduler", "not an address"],
     ["bayesirl suggest: error: cluster: expected 'local', a scheduler address",
      "'not an address'"]),
    ("example-run-exists", {"ex/run/x.txt": "x"}, ["example", "park", "ex"],
     ["ex/run: already exists", "--force"]),
]


_write = write_files


def test_table_is_large_and_distinct():
    ids = [c[0] for c in CASES]
    assert len(ids) >= 25 and len(set(ids)) == len(ids)


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_bad_input_message(case, tiny, capsys, monkeypatch):
    name, files, argv, fragments = case
    tmp_path = tiny[0].parent
    monkeypatch.chdir(tmp_path)
    _write(tmp_path, files(tmp_path) if callable(files) else files)
    code = main(argv)
    out, err = capsys.readouterr()
    assert code == 2, (out, err)
    for fragment in fragments:
        assert fragment in err, (fragment, err)
    assert err.count("\n") == 1, err  # one message, no traceback
    assert "Traceback" not in err
    # Nothing half-written: no staging folder is left behind.
    assert not list(tmp_path.glob(".*partial*"))


def test_debug_shows_the_traceback(tiny, capsys, monkeypatch):
    monkeypatch.chdir(tiny[0].parent)
    tiny[0].write_text(TINY_TOML.replace("discount = 0.9", "discount = -1.0"))
    assert main(["--debug", "check", "tiny.toml"]) == 2
    err = capsys.readouterr().err
    assert "Traceback" in err and "discount = -1.0" in err


def test_usage_errors_exit_2(capsys):
    assert main(["fit", "a.toml", "b.csv", "--level", "1.5"]) == 2
    assert "not a level in (0, 1)" in capsys.readouterr().err
    assert main(["no-such-command"]) == 2


@pytest.mark.parametrize("case", ["unknown-action"])
def test_bad_input_through_a_real_process(case, tiny):
    _, files, argv, fragments = next(c for c in CASES if c[0] == case)
    _write(tiny[0].parent, files)
    done = run_subprocess(argv, cwd=tiny[0].parent)
    assert done.returncode == 2, done.stderr
    assert all(f in done.stderr for f in fragments), done.stderr
    assert "Traceback" not in done.stderr
