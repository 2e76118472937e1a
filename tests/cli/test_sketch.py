"""``bayesirl sketch`` and ``fit --start``: wiring, wording, refusals."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from bayesirl.cli import main
from bayesirl.execution.approximate import Approximate


def _sketch(tiny, capsys, *extra):
    problem, demos = tiny
    code = main(["--quiet", "sketch", str(problem), str(demos), "--draws", "100", "--paths",
                 "2", *extra])
    return code, capsys.readouterr().out


def test_sketch_prints_a_table_and_the_k_hat_verdict_and_repeats_with_the_seed(tiny, capsys):
    code, out = _sketch(tiny, capsys, "--seed", "3")
    assert code == 0
    assert "mud" in out and "water" in out and "Pareto k-hat" in out
    assert ("NOT TRUSTWORTHY" in out) != ("importance check passes" in out)
    again = _sketch(tiny, capsys, "--seed", "3")[1]
    other = _sketch(tiny, capsys, "--seed", "4")[1]
    assert again == out and other != out
    assert not (tiny[0].parent / "run").exists()  # writes nothing


def _record(k_hat: float) -> Approximate:
    return Approximate(("mud", "water"), np.zeros((10, 2)), None, k_hat, 0.7, (-1.0,), 10.0,
                       100, 0)


def test_above_the_threshold_the_result_refuses_to_be_trusted(tiny, capsys, monkeypatch):
    # k-hat > 0.7: do not trust (Vehtari et al. 2024; common practice).
    bad, good = _record(0.71), _record(0.69)
    assert not bad.trusted and "NOT TRUSTWORTHY" in bad.verdict()
    assert "passes" not in bad.verdict()
    assert good.trusted and "NOT" not in good.verdict()
    # Between 0.5 and the threshold: passes, with the heavy-tail caveat; at or below 0.5 without.
    assert "errors shown may be too small" in good.verdict()
    assert "too small" not in _record(0.5).verdict() and _record(0.5).trusted
    import bayesirl.execution.approximate as approx

    monkeypatch.setattr(approx, "approximate", lambda *a, **k: bad)
    code, out = _sketch(tiny, capsys)
    assert code == 0 and "Pareto k-hat 0.71 > 0.70: NOT TRUSTWORTHY" in out


def test_fit_start_reaches_sample_and_a_bad_start_in_the_file_is_refused(tiny, capsys,
                                                                        monkeypatch):
    # Wiring only (sample(start="pathfinder") itself: tests/posterior/test_pathfinder_start.py):
    # sample is replaced by a stub that records its arguments and stops the command.
    import bayesirl

    seen = {}

    def stub(lik, **kwargs):
        seen.update(kwargs)
        raise bayesirl.InputError("stub: stop here")

    monkeypatch.setattr(bayesirl, "sample", stub)
    problem, demos = tiny
    out = problem.parent / "pf"
    assert main(["--quiet", "fit", str(problem), str(demos), "--out", str(out), "--start",
                 "pathfinder"]) == 2
    assert seen["start"] == "pathfinder"
    seen.clear()
    assert main(["--quiet", "fit", str(problem), str(demos), "--out", str(out)]) == 2
    assert "start" not in seen  # the default: sample's own
    problem.write_text(problem.read_text() + 'start = "laplace"\n')
    assert main(["--quiet", "fit", str(problem), str(demos), "--out",
                 str(problem.parent / "pf2")]) == 2
    err = capsys.readouterr().err
    assert "start" in err and "laplace" in err


@pytest.mark.parametrize("bad", ["--paths=0", "--draws=x", "--level=2"])
def test_bad_options_exit_2(tiny, capsys, bad):
    assert _sketch(tiny, capsys, bad)[0] == 2


@settings(max_examples=25, deadline=None)
@given(st.one_of(st.sampled_from(["uniform", "pathfinder", "Uniform", "laplace"]),
                 st.text(max_size=12), st.integers(), st.booleans(), st.none()))
def test_sampler_start_accepts_only_its_two_words(value):
    # The [sampler] start validator: the two words pass, anything else is one InputError
    # naming the file, table, key and value.
    from bayesirl.errors import InputError
    from bayesirl.io.fields import Table
    from bayesirl.io.settings import sampler_from

    table = Table({"start": value}, "p.toml", "sampler")
    if value in ("uniform", "pathfinder"):
        assert sampler_from(table)["start"] == value
    else:
        with pytest.raises(InputError, match=r"p.toml: \[sampler\] start"):
            sampler_from(table)
    assert "start" not in sampler_from(Table({}, "p.toml", "sampler"))  # absent by default
