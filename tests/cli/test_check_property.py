"""Property: random problem and demonstration files through ``bayesirl check``.

Hypothesis (derandomized, so the examples are the same on every run) writes map problems,
``[arrays]`` problems with random CSR arrays and random demonstration files, mostly almost
valid so that the readers get deep, and runs ``check`` in-process. Whatever the files, the
command exits 0 or 2, prints no traceback and no internal error, finishes within a bound
(an alarm turns a hang into a failure), and writes nothing anywhere: the folder, including
the problem's own files, is byte-for-byte as before.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import signal
import tempfile
import time
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bayesirl.cli import main

from .helpers import TINY_CSV, TINY_TOML
from .test_hostile import snapshot

SECONDS = 20  # a bound far above the ~0.1 s a small check takes, far below a hang


class Hung(BaseException):
    """Raised by the alarm; a BaseException so the command's error handling lets it out."""


def _alarm(signum, frame):
    raise Hung


numbers = st.one_of(
    st.integers(-3, 3), st.floats(-2, 2, allow_nan=False),
    st.sampled_from([0.0, 1e-300, 1e9, -1e7, 1e308, float("inf"), float("nan"), 2**62]))
# Mostly sensible values, so that many examples get past the first check.
values = st.one_of(st.sampled_from([0, 1, 1, -1, 0.5, 2.0, 3]),
                   st.sampled_from([0, 1, -1, 2.5]), numbers)
small_ints = st.integers(-2, 12)
names = st.sampled_from(["up", "right", "down", "left", "jump", "0", "1", "9", "-1", "", "x,y"])


def _toml_value(v) -> str:
    if isinstance(v, float) and v != v:
        return "nan"
    if isinstance(v, float) and abs(v) == float("inf"):
        return "inf" if v > 0 else "-inf"
    return repr(v)


@st.composite
def map_problem(draw) -> dict:
    rows = draw(st.integers(1, 4))
    cols = draw(st.integers(1, 4))
    symbols = draw(st.lists(st.sampled_from("....SmW#x"), min_size=rows * cols,
                            max_size=rows * cols))
    cells = "\n".join("".join(symbols[r * cols:(r + 1) * cols]) for r in range(rows))
    legend = []
    for sym, extra in ((".", ""), ("S", "start = true"), ("W", "goal = true"),
                       ("#", "blocked = true")):
        if draw(st.integers(0, 5)) or sym == ".":  # now and then a symbol lacks an entry
            value = draw(values)
            parts = [p for p in (f"mud = {_toml_value(value)}", extra) if p]
            legend.append(f'"{sym}" = {{ {", ".join(parts)} }}')
    legend.append(f'"m" = {{ water = {_toml_value(draw(values))} }}')
    discount = draw(st.sampled_from([0.9, 0.9, 0.9, 0.5, 0.0, 1.0, -0.1, float("nan")]))
    model = [f"discount = {_toml_value(discount)}"]
    if draw(st.integers(0, 3)) == 0:
        model.append(f"horizon = {draw(st.sampled_from([1, 3, 20, 0, 10**18]))}")
    text = (f"[model]\n{chr(10).join(model)}\n[map]\nfeatures = [\"mud\", \"water\"]\n"
            f"moves = {draw(st.sampled_from([4, 4, 8, 6]))}\n"
            f"slip = {_toml_value(draw(st.sampled_from([0.0, 0.0, 0.1, 0.99, 1.0])))}\n"
            f'cells = """\n{cells}\n"""\n[map.legend]\n' + "\n".join(legend) + "\n")
    return {"p.toml": text}


MUTATIONS = ("none", "none", "none", "index", "indptr", "data", "rows", "n_states")


@st.composite
def arrays_problem(draw) -> dict:
    """A valid random CSR world (one successor per row), then at most one mutation."""
    n_s = draw(st.integers(1, 6))
    n_a = draw(st.integers(1, 3))
    indices = np.array(draw(st.lists(st.integers(0, n_s - 1), min_size=n_s * n_a,
                                     max_size=n_s * n_a)), dtype=np.int64)
    indptr = np.arange(n_s * n_a + 1, dtype=np.int64)
    data = np.ones(n_s * n_a)
    n_states = np.array(n_s)
    mutation = draw(st.sampled_from(MUTATIONS))
    k = draw(st.integers(0, n_s * n_a - 1))
    if mutation == "index":
        indices[k] = draw(st.sampled_from([-1, n_s, n_s + 1, 10**6, -(2**40)]))
    elif mutation == "indptr":
        indptr[k] += draw(st.sampled_from([-2, -1, 1, 2, 10**9]))
    elif mutation == "data":
        data[k] = draw(numbers)
    elif mutation == "rows":
        indptr = indptr[:-1] if draw(st.booleans()) else np.append(indptr, indptr[-1])
    elif mutation == "n_states":
        n_states = np.array(draw(st.sampled_from([0, n_s + 1, -1, 10**6])))
    features = np.array(draw(st.lists(values, min_size=n_s * 2, max_size=n_s * 2)),
                        dtype=np.float64).reshape(n_s, 2)
    arrays = {"transitions_data": data, "transitions_indices": indices,
              "transitions_indptr": indptr, "transitions_n_states": n_states,
              "features": features}
    buf = io.BytesIO()
    np.savez(buf, **arrays)
    grid = draw(st.sampled_from(["", "", f"grid = [1, {n_s}]", "grid = [3, 3]"]))
    return {"p.toml": f'[model]\ndiscount = 0.9\n[arrays]\nnpz = "w.npz"\n{grid}\n',
            "w.npz": buf.getvalue()}


@st.composite
def csv_demos(draw) -> dict:
    header = draw(st.sampled_from(["episode,step,state,action", "episode,step,row,col,action",
                                   "episode,step,state", "a,b,c,d"]))
    n_cols = header.count(",") + 1
    lines = [header]
    for _ in range(draw(st.integers(0, 8))):
        cells = [draw(st.sampled_from(["a", "b", ""]))]
        cells += [str(draw(small_ints)) for _ in range(n_cols - 2)]
        cells.append(draw(names))
        lines.append(",".join(cells[:draw(st.sampled_from([n_cols, n_cols, n_cols - 1]))]))
    return {"d.csv": "\n".join(lines) + "\n"}


json_values = st.recursive(
    st.one_of(st.none(), st.booleans(), small_ints, st.floats(allow_nan=False), names),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(names, inner, max_size=3),
    max_leaves=12)


@st.composite
def jsonl_demos(draw) -> dict:
    lines = []
    for _ in range(draw(st.integers(1, 4))):
        obj = {"states": draw(st.lists(small_ints, max_size=5)),
               "actions": draw(st.lists(st.one_of(names, small_ints), max_size=5))}
        if draw(st.booleans()):
            obj["episode"] = draw(json_values)
        if draw(st.booleans()):
            obj[draw(st.sampled_from(["states", "actions", "cells", "extra"]))] = draw(json_values)
        lines.append(json.dumps(obj))
    return {"d.jsonl": "\n".join(lines) + "\n"}


raw_bytes = st.binary(max_size=300).map(lambda b: {"p.toml": b})


def run_check(files: dict, with_demos: str | None, seconds: float = SECONDS) -> None:
    """Write ``files`` into a fresh folder, run ``check`` on them and assert the property."""
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        for name, content in files.items():
            (folder / name).write_bytes(content if isinstance(content, bytes)
                                        else content.encode())
        argv = ["check", str(folder / "p.toml")]
        if with_demos:
            argv.append(str(folder / with_demos))
        before, cwd_before = snapshot(folder), sorted(os.listdir("."))
        err, out = io.StringIO(), io.StringIO()
        previous = signal.signal(signal.SIGALRM, _alarm)
        signal.setitimer(signal.ITIMER_REAL, seconds)
        t0 = time.monotonic()
        try:
            with contextlib.redirect_stderr(err), contextlib.redirect_stdout(out):
                code = main(argv)
        except Hung:
            raise AssertionError(f"check ran longer than {seconds} s on {files}") from None
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
            signal.signal(signal.SIGALRM, previous)
        message = err.getvalue()
        CODES.append(code)
        assert code in (0, 2), (code, message, files)
        assert "Traceback" not in message and "internal error" not in message, (message, files)
        if code == 2:
            assert message.count("error:") == 1, message
        assert time.monotonic() - t0 < seconds
        assert snapshot(folder) == before and sorted(os.listdir(".")) == cwd_before


CODES: list[int] = []


@settings(max_examples=150, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(problem=st.one_of(map_problem(), arrays_problem(), raw_bytes,
                         st.just({"p.toml": TINY_TOML})),  # random demos on a valid map
       demos=st.one_of(st.none(), st.none(), csv_demos(), jsonl_demos()))
def test_check_never_crashes_hangs_or_writes(problem, demos):
    run_check({**problem, **(demos or {})}, next(iter(demos)) if demos else None)


def test_the_examples_reach_both_outcomes():
    # The generators are meant to get past the first reader: some examples must pass.
    if not CODES:
        test_check_never_crashes_hangs_or_writes()
    assert CODES.count(0) >= 10 and CODES.count(2) >= 10, (CODES.count(0), CODES.count(2))


GOOD = {"p.toml": TINY_TOML, "d.csv": TINY_CSV}


def test_the_property_catches_a_crash(monkeypatch):
    # Negative control: an internal error (exit 1) in the reader must fail the property.
    import bayesirl.commands.views as views

    def crash(path):
        raise ZeroDivisionError("planted")

    run_check(GOOD, "d.csv")  # the untouched files pass
    monkeypatch.setattr(views, "read_problem", crash)
    with pytest.raises(AssertionError):
        run_check(GOOD, "d.csv")


def test_the_property_catches_a_hang_and_a_write(monkeypatch):
    # Negative controls: a reader that sleeps past the bound, and one that writes a file.
    import bayesirl.commands.views as views

    real = views.read_problem

    def slow(path):
        time.sleep(3)
        return real(path)

    def writes(path):
        Path(path).with_name("stray.txt").write_text("x")
        return real(path)

    monkeypatch.setattr(views, "read_problem", slow)
    with pytest.raises(AssertionError, match="ran longer than 0.5 s"):
        run_check(GOOD, "d.csv", seconds=0.5)
    monkeypatch.setattr(views, "read_problem", writes)
    with pytest.raises(AssertionError):
        run_check(GOOD, "d.csv")
