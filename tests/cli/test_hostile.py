"""The command line under hostile input: every case exits 2 with one message, no traceback.

Each case writes files into a fresh folder (which also holds the tiny map problem and its
demonstrations), runs ``bayesirl`` in-process, and asserts exit code 2, one line on stderr
naming the file/field/value, no traceback, and that every file in the folder is exactly as
before (nothing written, nothing deleted; no staging folder left). ``test_bad_input.py`` keeps
the earlier, friendlier malformed inputs; these are the careless and unlucky ones.
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

import numpy as np
import pytest

from bayesirl.cli import main

from . import hostile as h
from .helpers import run_subprocess
from .helpers import write_files as _write

FIT = ["fit", "tiny.toml", "walks.csv", "--out", "run"]
FIT_RING = ["fit", "tiny.toml", "ring.csv", "--out", "run"]
CHECK = ["check", "tiny.toml", "walks.csv"]
CHECK_RING = ["check", "tiny.toml", "ring.csv"]
CHECK_JSONL = ["check", "tiny.toml", "w.jsonl"]
BIG_FIELD = "x" * (1 << 20)

OUTPUT = [
    ("out-empty", {}, ["fit", "tiny.toml", "walks.csv", "--out", ""], ["--out ''",
                                                                        "empty folder name"]),
    ("out-dot", {}, [*FIT[:3], "--out", ".", "--force"], ["is the current folder"]),
    ("out-dotdot", {}, [*FIT[:3], "--out", "..", "--force"], ["is the current folder or "
                                                               "contains it"]),
    ("out-root", {}, [*FIT[:3], "--out", "/", "--force"], ["current folder or contains it"]),
    ("out-under-file", {"notes.txt": "mine"}, [*FIT[:3], "--out", "notes.txt/run"],
     ["notes.txt is a file, not a folder"]),
    ("out-deep-under-file", {"notes.txt": "mine"}, [*FIT[:3], "--out", "notes.txt/a/b"],
     ["notes.txt is a file, not a folder"]),
    ("out-name-too-long", {}, [*FIT[:3], "--out", "r" * 250],
     ["a folder name of 250 bytes; at most 200"]),
    ("out-in-proc", {}, [*FIT[:3], "--out", "/proc/bayesirl-run"],
     ["--out /proc/bayesirl-run: cannot create a folder in /proc"]),
    ("out-exists-no-force", {"run/thesis.tex": "years of work"}, FIT,
     ["run: already exists", "--force"]),
    ("force-unrelated-folder", {"run/thesis.tex": "years of work"}, [*FIT, "--force"],
     ["run: not a run folder made by bayesirl fit", "bayesirl-run/1"]),
    ("force-empty-folder", {"run/.keep": ""}, [*FIT, "--force"], ["run: not a run folder"]),
    ("force-foreign-tag", h.run_folder(tag="someone-else/2"), [*FIT, "--force"],
     ["run: not a run folder"]),
    ("force-summary-not-json", {"run/summary.json": "{{{"}, [*FIT, "--force"],
     ["run: not a run folder"]),
    ("force-summary-list", {"run/summary.json": '["bayesirl-run/1"]'}, [*FIT, "--force"],
     ["run: not a run folder"]),
    ("force-regular-file", {"run": "a file named run"}, [*FIT, "--force"],
     ["run: is a file, not a run folder"]),
    ("force-folder-holding-the-problem",
     h.run_folder(extra={"run/tiny.toml": h.TINY_TOML}),
     ["fit", "run/tiny.toml", "walks.csv", "--out", "run", "--force"],
     ["run: holds run/tiny.toml, an input of this run"]),
    ("force-folder-holding-the-demos",
     h.run_folder(extra={"run/walks.csv": h.TINY_CSV}),
     ["fit", "tiny.toml", "run/walks.csv", "--out", "run", "--force"],
     ["run: holds run/walks.csv, an input of this run"]),
    ("force-current-folder-with-inputs", h.run_folder(), [*FIT[:3], "--out", ".", "--force"],
     ["is the current folder"]),
    ("chains-over-limit", {}, [*FIT, "--chains", "1000000"],
     ["chains: 1000000 is more than the limit of 1000"]),
    ("draws-too-many", {}, [*FIT, "--draws", str(10**12)],
     ["draws of 3 parameters", "more than half the memory available", "reduce draws"]),
    ("warmup-too-many", {}, [*FIT, "--warmup", str(10**13)],
     ["more than half the memory available"]),
    ("chains-zero", {}, [*FIT, "--chains", "0"], ["'0' is not a whole number >= 1"]),
    ("draws-negative", {}, [*FIT, "--draws", "-5"], ["'-5' is not a whole number >= 1"]),
    ("draws-float", {}, [*FIT, "--draws", "1e3"], ["'1e3' is not a whole number"]),
    ("seed-text", {}, [*FIT, "--seed", "abc"], ["'abc' is not a whole number >= 0"]),
    ("level-one", {}, [*FIT, "--level", "1"], ["'1' is not a level in (0, 1)"]),
    ("level-nan", {}, [*FIT, "--level", "nan"], ["'nan' is not a level in (0, 1)"]),
]

ARRAYS = [
    ("csr-index-huge", h.ring_with("transitions_indices", h._set(3, 1_000_000)), CHECK_RING,
     ["ring.npz", "column index 1000000 (entry 3, row 3)", "outside 0..9"]),
    ("csr-index-just-out", h.ring_with("transitions_indices", h._set(5, 10)), CHECK_RING,
     ["ring.npz", "column index 10", "outside 0..9"]),
    ("csr-index-negative", h.ring_with("transitions_indices", h._set(0, -1)), CHECK_RING,
     ["column index -1", "outside 0..9"]),
    ("csr-index-float", h.ring_with("transitions_indices", lambda a: a.astype(float)),
     CHECK_RING, ["transitions: indices has dtype float64; expected integers"]),
    ("csr-indptr-decreasing", h.ring_with("transitions_indptr", h._set(4, 1)), CHECK_RING,
     ["indptr decreases at position 4", "3 -> 1"]),
    ("csr-indptr-start", h.ring_with("transitions_indptr", lambda a: a + 1), CHECK_RING,
     ["indptr must start at 0; starts at 1"]),
    ("csr-indptr-end", h.ring_with("transitions_indptr", h._set(-1, 19)), CHECK_RING,
     ["indptr ends at 19 but there are 20 indices and 20 values"]),
    ("csr-indptr-huge", h.ring_with("transitions_indptr", h._set(-1, 10**15)), CHECK_RING,
     ["indptr ends at 1000000000000000"]),
    ("csr-indptr-2d", h.ring_with("transitions_indptr", lambda a: a[:20].reshape(4, 5)),
     CHECK_RING, ["indptr must be a 1-d array; got (4, 5)"]),
    ("csr-indptr-empty", h.ring_with("transitions_indptr", lambda a: a[:0]), CHECK_RING,
     ["indptr must start at 0; starts at nothing"]),
    ("csr-rows-not-multiple", h.ring_with("transitions_indptr", lambda a: a[:-1]),
     CHECK_RING, ["indptr ends at 19"]),
    ("csr-data-short", h.ring_with("transitions_data", lambda a: a[:-1]), CHECK_RING,
     ["20 indices and 19 values"]),
    ("csr-data-complex", h.ring_with("transitions_data", lambda a: a.astype(complex)),
     CHECK_RING, ["data: array of dtype complex128; expected real numbers"]),
    ("csr-data-strings", h.ring_with("transitions_data", lambda a: a.astype(str)),
     CHECK_RING, ["data: array of dtype <U32; expected real numbers"]),
    ("csr-data-nan", h.ring_with("transitions_data", h._set(2, np.nan)), CHECK_RING,
     ["P(s'=1 | s=1, a=0) = nan", "finite and non-negative"]),
    ("csr-data-negative", h.ring_with("transitions_data", h._set(2, -1.0)), CHECK_RING,
     ["= -1.0", "finite and non-negative"]),
    ("csr-data-float16", h.ring_with("transitions_data", lambda a: a.astype(np.float16)),
     CHECK_RING, ["'transitions_data' has dtype float16; store float32 or float64"]),
    ("csr-data-float32-off", h.ring_with("transitions_data",
                                         lambda a: (a * 0.9999).astype(np.float32)),
     CHECK_RING, ["sums to 0.9998999", "expected 1 within 4.76837e-07"]),
    ("csr-n-states-zero", h.ring(transitions_n_states=np.array(0)), CHECK_RING,
     ["'transitions_n_states' = 0; expected one positive integer"]),
    ("csr-n-states-vector", h.ring(transitions_n_states=np.array([10, 10])), CHECK_RING,
     ["'transitions_n_states' = [10, 10]"]),
    ("csr-n-states-float", h.ring(transitions_n_states=np.array(10.5)), CHECK_RING,
     ["'transitions_n_states' = 10.5"]),
    ("csr-n-states-missing", h.ring(drop=("transitions_n_states",)), CHECK_RING,
     ["sparse transitions need 'transitions_n_states' too"]),
    ("csr-n-states-too-small", h.ring(transitions_n_states=np.array(3)), CHECK_RING,
     ["column index 3", "outside 0..2"]),
    ("dense-and-sparse", h.ring(transitions=np.ones((10, 2, 10)) / 10), CHECK_RING,
     ["ring.npz: holds both 'transitions' (dense) and 'transitions_data'"]),
    ("dense-wrong-ndim", h.ring(drop=h.ring_arrays().keys() - {"features"},
                                transitions=np.ones((10, 10)) / 10), CHECK_RING,
     ["transitions: dense array must have shape (S, A, S); got (10, 10)"]),
    ("dense-strings", h.ring(drop=h.ring_arrays().keys() - {"features"},
                             transitions=np.full((10, 1, 10), "0.1")), CHECK_RING,
     ["'transitions' has dtype <U3; expected numbers"]),
    ("no-transitions", h.ring(drop=("transitions_data",)), CHECK_RING,
     ["no array 'transitions' (S, A, S)"]),
    ("features-1e308", h.ring(features=np.full((10, 2), 1e308)), CHECK_RING,
     ["features: entry (s, f) = (0, 0) is 1e+308, beyond +-1e+06", "rescale"]),
    ("features-1e9", h.ring_with("features", h._set((4, 1), 1e9)), CHECK_RING,
     ["entry (s, f) = (4, 1) is 1000000000.0", "rescale that feature"]),
    ("features-minus-1e7", h.ring_with("features", h._set((2, 0), -1e7)), CHECK_RING,
     ["is -10000000.0", "rescale"]),
    ("features-inf", h.ring_with("features", h._set((1, 0), np.inf)), CHECK_RING,
     ["entry (s, f) = (1, 0) is inf; must be finite"]),
    ("features-complex", h.ring(features=np.ones((10, 2), complex)), CHECK_RING,
     ["'features' has dtype complex128; expected numbers"]),
    ("features-wrong-rows", h.ring(features=np.ones((9, 2))), CHECK_RING,
     ["features: expected shape (10, F) or (10, 2, F) with F >= 1; got (9, 2)"]),
    ("features-no-columns", h.ring(features=np.ones((10, 0))), CHECK_RING,
     ["with F >= 1; got (10, 0)"]),
    ("features-1d", h.ring(features=np.ones(10)), CHECK_RING, ["got (10,)"]),
    ("start-negative", h.ring(start=np.r_[-1.0, 2.0, np.zeros(8)]), CHECK_RING,
     ["start: entry 0 is -1.0"]),
    ("start-wrong-length", h.ring(start=np.ones(3) / 3), CHECK_RING,
     ["start: expected a distribution of shape (10,); got (3,)"]),
    ("start-sums-to-two", h.ring(start=np.r_[1.0, 1.0, np.zeros(8)]), CHECK_RING,
     ["start: sums to 2.0"]),
    ("start-strings", h.ring(start=np.array(["a"] * 10)), CHECK_RING,
     ["start: array of dtype <U1; expected real numbers"]),
    ("grid-too-small", h.ring(extra="grid = [3, 3]"), CHECK_RING,
     ["[arrays] grid = [3, 3]", "rows x cols equal to the 10 states"]),
    ("grid-too-large", h.ring(extra="grid = [4, 4]"), CHECK_RING,
     ["[arrays] grid = [4, 4]"]),
    ("grid-zero", h.ring(extra="grid = [0, 10]"), CHECK_RING,
     ["[arrays] grid = [0, 10]", "two positive integers"]),
    ("grid-strings", h.ring(extra='grid = ["2", "5"]'), CHECK_RING,
     ["[arrays] grid = ['2', '5']"]),
    ("grid-three", h.ring(extra="grid = [1, 2, 5]"), CHECK_RING, ["[arrays] grid = [1, 2, 5]"]),
    ("npz-random-bytes", {**h.ring(), "ring.npz": bytes(range(256)) * 4}, CHECK_RING,
     ["ring.npz: not an .npz archive"]),
    ("npz-is-npy", {**h.ring(), "ring.npz": b"\x93NUMPY" + bytes(100)}, CHECK_RING,
     ["ring.npz: not an .npz archive"]),
    ("npz-zip-of-text", {**h.ring(), "ring.npz": b"PK\x03\x04" + bytes(60)}, CHECK_RING,
     ["ring.npz: not a readable .npz archive"]),
    ("npz-pickled-objects", h.ring(features=np.array([{"a": 1}] * 10, dtype=object)),
     CHECK_RING, ["ring.npz: holds arrays of Python objects, which are never loaded"]),
    ("npz-is-a-folder", {"tiny.toml": h.RING_TOML.format(extra=""), "ring.npz/x": "x",
                         "ring.csv": h.RING_CSV}, CHECK_RING, ["ring.npz: cannot be read"]),
    ("npz-empty-name", {"tiny.toml": h.RING_TOML.replace('"ring.npz"', '""').format(extra="")},
     CHECK_RING, ["[arrays] npz = ''", "a file name"]),
    ("features-csv-huge-field",
     {**h.ring(drop=("features",), extra='features_csv = "f.csv"'),
      "f.csv": "a\n" + BIG_FIELD + "\n"}, CHECK_RING, ["f.csv line", "not readable as CSV",
                                                       "field larger than field limit"]),
    ("features-csv-ragged", {**h.ring(drop=("features",), extra='features_csv = "f.csv"'),
                             "f.csv": "a,b\n1,2\n3\n"}, CHECK_RING,
     ["f.csv line 3: 1 values; expected 2"]),
    ("features-csv-huge-value", {**h.ring(drop=("features",), extra='features_csv = "f.csv"'),
                                 "f.csv": "a\n" + "1e300\n" * 10}, CHECK_RING,
     ["entry (s, f) = (0, 0) is 1e+300", "rescale"]),
    ("features-csv-binary", {**h.ring(drop=("features",), extra='features_csv = "f.csv"'),
                             "f.csv": b"a\n\x00\x01"}, CHECK_RING, ["f.csv", "binary data"]),
]

TOML = [
    ("horizon-1e18", h.toml("discount = 0.9", f"horizon = {10**18}"), CHECK,
     ["[model] horizon = 1000000000000000000", "an integer <= 1000000"]),
    ("horizon-max-int", h.toml("discount = 0.9", f"horizon = {2**63 - 1}"), CHECK,
     ["[model] horizon = 9223372036854775807"]),
    ("horizon-float", h.toml("discount = 0.9", "horizon = 2.5"), CHECK,
     ["[model] horizon = 2.5", "an integer"]),
    ("horizon-string", h.toml("discount = 0.9", 'horizon = "10"'), CHECK,
     ["[model] horizon = '10'"]),
    ("discount-string", h.toml("discount = 0.9", 'discount = "0.9"'), CHECK,
     ["[model] discount = '0.9'", "a finite number"]),
    ("discount-bool", h.toml("discount = 0.9", "discount = true"), CHECK,
     ["[model] discount = True"]),
    ("discount-nan", h.toml("discount = 0.9", "discount = nan"), CHECK,
     ["[model] discount = nan"]),
    ("discount-inf", h.toml("discount = 0.9", "discount = inf"), CHECK,
     ["[model] discount = inf"]),
    ("legend-1e308", h.toml('"m" = { mud = 1 }', '"m" = { mud = 1e308 }'), CHECK,
     ["features: entry (s, f) = (2, 0) is 1e+308", "rescale"]),
    ("legend-1e9", h.toml('"m" = { mud = 1 }', '"m" = { mud = 1e9 }'), CHECK,
     ["1000000000.0, beyond +-1e+06", "rescale"]),
    ("legend-huge-int", h.toml('"m" = { mud = 1 }', f'"m" = {{ mud = {2**62} }}'), CHECK,
     ["beyond +-1e+06"]),
    ("all-blocked", {"tiny.toml": h.TINY_TOML.replace('"." = {}', '"." = { blocked = true }')
                     .replace('"S" = { start = true }', '"S" = { blocked = true }')
                     .replace('"m" = { mud = 1 }', '"m" = { blocked = true }')
                     .replace('"W" = { water = 1, goal = true }', '"W" = { blocked = true }')},
     CHECK,
     ["[map] cells: every cell of the map is blocked"]),
    ("pin-with-fixed-rationality",
     h.toml("[sampler]", "[rationality]\nvalue = 2.0\npin = { mud = 1.0 }\n[sampler]"), CHECK,
     ["[rationality] pin: pinning a weight goes with a sampled rationality"]),
    ("pin-default-rationality", h.toml("[sampler]", "[rationality]\npin = { mud = 1.0 }\n"
                                                    "[sampler]"), CHECK,
     ["[rationality] pin"]),
    ("rationality-zero", h.toml("[sampler]", "[rationality]\nvalue = 0\n[sampler]"), CHECK,
     ["[rationality] value = 0"]),
    ("log-sd-negative", h.toml("[sampler]", "[rationality]\nlog_sd = -1\npin = { mud = 1 }\n"
                                            "[sampler]"), CHECK, ["[rationality] log_sd = -1"]),
    ("nested-toml", {"tiny.toml": "x = " + "[" * 200_000 + "]" * 200_000 + "\n"}, CHECK,
     ["tiny.toml"]),
    ("seed-negative", h.toml("draws = 60", "draws = 60\nseed = -1"), CHECK,
     ["[sampler] seed = -1", "integer >= 0"]),
    ("target-accept-one", h.sampler("target_accept = 1.0"), CHECK,
     ["[sampler] target_accept = 1.0", "(0, 1)"]),
    ("method-unknown", h.sampler('method = "gibbs"'), CHECK,
     ["[sampler] method = 'gibbs'", "'nuts', 'random-walk'"]),
    ("max-depth-zero", h.sampler("max_depth = 0"), CHECK, ["[sampler] max_depth = 0"]),
    ("dense-mass-string", h.sampler('dense_mass = "yes"'), CHECK,
     ["[sampler] dense_mass = 'yes'", "true or false"]),
    ("chains-float", h.toml("chains = 2", "chains = 2.5"), CHECK, ["[sampler] chains = 2.5"]),
    ("draws-1e12-in-file", h.toml("draws = 60", f"draws = {10**12}"), FIT,
     ["more than half the memory available"]),
    ("chains-1e6-in-file", h.toml("chains = 2", "chains = 1000000"), FIT,
     ["chains: 1000000 is more than the limit of 1000"]),
    ("two-worlds", h.toml("[sampler]", '[arrays]\nnpz = "x.npz"\n[sampler]'), CHECK,
     ["found 2 world tables ([map], [arrays])"]),
    ("sampler-not-table", {"tiny.toml": h.TINY_TOML.replace("[sampler]\n", "sampler_x = 1\n")
                           .replace("chains = 2\ndraws = 60\nwarmup = 60\n", "")}, CHECK,
     ["sampler_x"]),
    ("title-number", {"tiny.toml": "title = 5\n" + h.TINY_TOML}, FIT, ["title = 5"]),
    ("map-huge-row", h.toml("S.m", "S.m" + "." * 3), CHECK, ["row 1 has 3 cells, row 0 has 6"]),
    ("map-empty-legend-key", h.toml('"." = {}', '"." = {}\n"" = {}'), CHECK,
     ["legend keys must be single non-space characters"]),
]

DEMOS = [
    ("csv-huge-field", h.demos("a,1,0,1,right", "a,1,0,1," + BIG_FIELD), CHECK,
     ["walks.csv line 3: not readable as CSV", "field larger than field limit"]),
    ("csv-huge-episode-id", {"walks.csv": "episode,step,state,action\n" + BIG_FIELD + ",0,0,0\n"},
     CHECK, ["walks.csv line 2: not readable as CSV"]),
    ("csv-nul", {"walks.csv": "episode,step,state,action\na,0,0\x00,0\n"}, CHECK,
     ["walks.csv", "binary data"]),
    ("csv-state-on-a-map", {"walks.csv": f"episode,step,state,action\na,0,{10**30},0\n"},
     CHECK, ["walks.csv line 2", f"state {10**30} does not exist"]),
    ("csv-step-negative", h.demos("a,1,0,1,right", "a,-1,0,1,right"), CHECK,
     ["walks.csv line 3", "step -1; expected step 1"]),
    ("csv-step-float", h.demos("a,1,0,1,right", "a,1.0,0,1,right"), CHECK,
     ["walks.csv line 3", "step '1.0' is not a whole number"]),
    ("csv-row-float", h.demos("a,1,0,1,right", "a,1,0.5,1,right"), CHECK,
     ["walks.csv line 3", "row '0.5' is not a whole number"]),
    ("csv-col-huge", h.demos("a,1,0,1,right", f"a,1,0,{10**40},right"), CHECK,
     ["walks.csv line 3", "is off the map"]),
    ("csv-empty-episode-id", h.demos("a,1,0,1,right", ",1,0,1,right"), CHECK,
     ["walks.csv line 3: empty episode id"]),
    ("csv-only-header", {"walks.csv": "episode,step,row,col,action\n"}, CHECK,
     ["walks.csv: only a header"]),
    ("csv-duplicate-column", {"walks.csv": "episode,step,row,row,action\n"}, CHECK,
     ["walks.csv line 1: columns episode, step, row, row, action"]),
    ("jsonl-nested-200000", {"w.jsonl": h.nested_json(200_000) + "\n"}, CHECK_JSONL,
     ["w.jsonl line 1: JSON nested too deeply"]),
    ("jsonl-episode-object", h.jsonl({"episode": {"a": 1}, "states": [0, 1],
                                      "actions": ["right"]}), CHECK_JSONL,
     ["w.jsonl line 1: episode id {'a': 1} is not a string or a whole number"]),
    ("jsonl-episode-list", h.jsonl({"episode": [1], "states": [0, 1], "actions": ["right"]}),
     CHECK_JSONL, ["episode id [1] is not a string"]),
    ("jsonl-episode-bool", h.jsonl({"episode": True, "states": [0, 1], "actions": ["right"]}),
     CHECK_JSONL, ["episode id True"]),
    ("jsonl-episode-float", h.jsonl({"episode": 1.5, "states": [0, 1], "actions": ["right"]}),
     CHECK_JSONL, ["episode id 1.5"]),
    ("jsonl-state-float", h.jsonl({"states": [0, 1.5], "actions": ["right"]}), CHECK_JSONL,
     ["w.jsonl line 1: state 1.5 is not a whole number"]),
    ("jsonl-state-inf", h.jsonl('{"states": [0, 1e400], "actions": ["right"]}'), CHECK_JSONL,
     ["w.jsonl line 1: state inf is not a whole number"]),
    ("jsonl-state-huge", h.jsonl({"states": [0, 10**30], "actions": ["right"]}), CHECK_JSONL,
     [f"state {10**30} does not exist"]),
    ("jsonl-state-bool", h.jsonl({"states": [0, True], "actions": ["right"]}), CHECK_JSONL,
     ["state True is not a whole number"]),
    # null states and actions are "not recorded" (issue 20): tests/partial/test_check_command.py
    ("jsonl-action-list", h.jsonl({"states": [0, 1], "actions": [["right"]]}), CHECK_JSONL,
     ["action ['right'] is not allowed"]),
    ("jsonl-states-string", h.jsonl({"states": "01", "actions": ["right"]}), CHECK_JSONL,
     ["states must be a list; got '01'"]),
    ("jsonl-cell-triple", h.jsonl({"cells": [[0, 0, 0]], "actions": []}), CHECK_JSONL,
     ["cell [0, 0, 0] is not a [row, col] pair"]),
    ("jsonl-top-array", h.jsonl("[1, 2, 3]"), CHECK_JSONL,
     ["expected an object with states (or cells) and actions; got list"]),
    ("jsonl-no-actions", h.jsonl({"states": [0]}), CHECK_JSONL, ["keys ['states']"]),
    ("jsonl-duplicate-episode", h.jsonl({"episode": "x", "states": [0, 1], "actions": ["right"]},
                                        {"episode": "x", "states": [0, 1], "actions": ["right"]}),
     CHECK_JSONL, ["w.jsonl line 2: episode 'x' appears more than once"]),
    ("jsonl-empty-actions", h.jsonl({"states": [0], "actions": []}), CHECK_JSONL,
     ["episode '0' has no actions"]),
    ("jsonl-nan-literal", h.jsonl('{"states": [0, NaN], "actions": ["right"]}'), CHECK_JSONL,
     ["state nan is not a whole number"]),
]

RUNS = [
    ("report-summary-foreign-tag", {"r/summary.json": '{"format": "other/1"}'}, ["report", "r"],
     ["r/summary.json: format 'other/1'; expected 'bayesirl-run/1'"]),
    ("report-summary-not-json", {"r/summary.json": "{"}, ["report", "r"],
     ["r/summary.json: not valid JSON"]),
    ("report-summary-nested", {"r/summary.json": "[" * 200_000 + "]" * 200_000},
     ["report", "r"], ["r/summary.json: nested too deeply"]),
    ("report-summary-list", {"r/summary.json": "[1, 2]"}, ["report", "r"],
     ["format None; expected 'bayesirl-run/1'"]),
    ("report-summary-binary", {"r/summary.json": b"\xff\xfe\x00"}, ["report", "r"],
     ["r/summary.json: not valid JSON"]),
    ("report-posterior-random", {"r/summary.json": h.summary(complete=True),
                                 "r/posterior.nc": bytes(range(256)) * 8}, ["report", "r"],
     ["r/posterior.nc: not a readable posterior file"]),
    ("report-posterior-folder", {"r/summary.json": h.summary(complete=True),
                                 "r/posterior.nc/x": "x"}, ["report", "r"],
     ["r/posterior.nc: missing"]),
    ("report-no-posterior", {"r/summary.json": h.summary()}, ["report", "r"],
     ["r/posterior.nc: missing; the run has no draws yet"]),
    ("report-a-file", {"r": "a file"}, ["report", "r"], ["r: no such run folder"]),
    ("resume-missing-record", {"r/summary.json": h.summary(), "r/checkpoint": b"x"},
     ["fit", "--resume", "r"], ["r/summary.json: problem: missing"]),
    ("resume-problem-number", h.resume_folder(problem=5), ["fit", "--resume", "r"],
     ["r/summary.json: problem = 5: expected a file name"]),
    ("resume-digests-wrong", h.resume_folder(inputs_sha256="abc"), ["fit", "--resume", "r"],
     ["inputs_sha256 = 'abc'"]),
    ("resume-requested-list", h.resume_folder(requested=[1, 2]), ["fit", "--resume", "r"],
     ["requested = [1, 2]: expected the sampler settings"]),
    ("resume-requested-draws-text", h.resume_folder(
        requested={**h.RECORD["requested"], "draws": "many"}), ["fit", "--resume", "r"],
     ["r/summary.json: [requested] draws = 'many'", "an integer"]),
    ("resume-requested-unknown-key", h.resume_folder(
        requested={**h.RECORD["requested"], "turbo": True}), ["fit", "--resume", "r"],
     ["[requested] turbo: unknown key"]),
    ("resume-inputs-changed", h.resume_folder(), ["fit", "--resume", "r"],
     ["tiny.toml: changed since the run started"]),
    ("resume-inputs-gone", h.resume_folder(problem="/nonexistent/p.toml"),
     ["fit", "--resume", "r"], ["/nonexistent/p.toml: the run's problem file is gone"]),
    ("resume-no-checkpoint", {"r/summary.json": h.summary()}, ["fit", "--resume", "r"],
     ["r/checkpoint: missing"]),
    ("resume-complete", {"r/summary.json": h.summary(complete=True, report={})},
     ["fit", "--resume", "r"], ["r: the run is already complete"]),
    ("resume-nothing", {}, ["fit", "--resume", "gone"], ["gone: no such run folder"]),
    ("resume-empty-partial", {".gone.partial-abc/x": "x"}, ["fit", "--resume", "gone"],
     ["gone: no such run folder"]),
    ("suggest-budget-huge", {}, ["suggest", "r", "--budget", str(10**9)],
     ["--budget: 1000000000 is more than the limit of 100"]),
    ("suggest-not-a-run", {"r/x": "x"}, ["suggest", "r"], ["r/summary.json: missing"]),
    ("example-over-own-file", {"ex/park.toml": "my own problem"}, ["example", "park", "ex"],
     ["ex/park.toml: already exists and is not the example's file"]),
    ("example-over-own-folder", {"ex/walks.csv/x": "x"}, ["example", "park", "ex"],
     ["ex/walks.csv: already exists and is not the example's file"]),
    ("example-force-over-own-run", {"ex/run/thesis.tex": "x"}, ["example", "park", "ex",
                                                                 "--force"],
     ["ex/run: not a run folder made by bayesirl fit"]),
]

CASES = OUTPUT + ARRAYS + TOML + DEMOS + RUNS


def snapshot(folder: Path) -> dict:
    """Every path under ``folder`` with a digest of its bytes (None for folders)."""
    out = {}
    for root, dirs, files in os.walk(folder):
        for d in dirs:
            out[os.path.relpath(os.path.join(root, d), folder)] = None
        for f in files:
            p = os.path.join(root, f)
            out[os.path.relpath(p, folder)] = hashlib.sha256(Path(p).read_bytes()).hexdigest()
    return out


def test_the_table_is_large_and_its_ids_distinct():
    ids = [c[0] for c in CASES]
    assert len(ids) >= 100 and len(set(ids)) == len(ids), len(ids)


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_hostile_input(case, tiny, capsys, monkeypatch):
    name, files, argv, fragments = case
    folder = tiny[0].parent
    monkeypatch.chdir(folder)
    _write(folder, files)
    before = snapshot(folder)
    code = main(["--quiet", *argv])
    out, err = capsys.readouterr()
    assert code == 2, (out, err)
    for fragment in fragments:
        assert fragment in err, (fragment, err)
    # One message (argparse's usage errors come after its usage lines), no traceback.
    assert err.count("error:") == 1 and err.rstrip().splitlines()[-1].count("error:") == 1, err
    assert "Traceback" not in err and "warning" not in err, err
    assert snapshot(folder) == before  # nothing written, changed or deleted


@pytest.mark.parametrize("case", ["csr-index-huge", "features-1e308"])  # was a segfault, a hang
def test_hostile_input_through_a_real_process(case, tiny):
    # No segmentation fault, hang or traceback in a real interpreter either.
    _, files, argv, fragments = next(c for c in CASES if c[0] == case)
    folder = tiny[0].parent
    _write(folder, files)
    before = snapshot(folder)
    done = run_subprocess(argv, cwd=folder, timeout=120)
    assert done.returncode == 2, done.stderr
    assert all(f in done.stderr for f in fragments), done.stderr
    assert "Traceback" not in done.stderr
    assert snapshot(folder) == before


def test_float32_transitions_within_their_precision_are_accepted(tiny, capsys, monkeypatch):
    # Negative control for csr-data-float16-off: rows of 1/3 stored as float32 sum to
    # 1 + 3e-8 (numpy), beyond the float64 tolerance 1e-8 but within float32 rounding.
    folder = tiny[0].parent
    monkeypatch.chdir(folder)
    a = h.ring_arrays()
    third = np.float32(1 / 3)
    assert abs(3 * float(third) - 1.0) > 1e-8
    indices = np.array([[s, (s + 1) % h.N_S, (s + 2) % h.N_S] for s in range(h.N_S)
                        for _ in range(h.N_A)]).ravel()
    files = h.ring(transitions_data=np.full(60, third, dtype=np.float32),
                   transitions_indices=indices,
                   transitions_indptr=np.arange(0, 61, 3))
    files["ring.csv"] = "episode,step,state,action\na,0,0,1\na,1,2,1\n"
    _write(folder, files)
    assert "sums to" not in str(a)
    assert main(CHECK_RING) == 0, capsys.readouterr().err
    from bayesirl.io import read_problem

    sums = np.asarray(read_problem(folder / "tiny.toml").mdp.transitions.sum(axis=1)).ravel()
    np.testing.assert_allclose(sums, 1.0, rtol=0, atol=4 * np.finfo(float).eps)
