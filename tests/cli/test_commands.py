"""The sub-commands end to end: example, fit, report, check, help, validate wiring, suggest."""

from __future__ import annotations

import json
import re
import shutil

import numpy as np
import pytest

from bayesirl.cli import build_parser, main
from bayesirl.scenarios.bundled import EXAMPLES

from .helpers import run_subprocess

SUBCOMMANDS = ("fit", "sketch", "report", "suggest", "check", "compare", "example", "validate",
               "bench")


# Our own status lines on stderr during a successful example run; anything else there (a
# library's warning, a traceback) is a defect.
OWN_STATUS = re.compile(r"TabularMDP\(.*; sampling \d+ chains x \d+ draws|wrote .*")


def test_example_park_through_a_real_process_to_a_finished_report(tmp_path, monkeypatch):
    # A fresh user cache folder: ArviZ 0.2x warns once a day, keyed by a stamp file there.
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))
    done = run_subprocess(["example", "park", "demo"], cwd=tmp_path, timeout=170)
    assert done.returncode == 0, done.stderr
    lines = done.stderr.splitlines()
    assert lines and all(OWN_STATUS.fullmatch(line) for line in lines), done.stderr
    # Negative control: the pattern refuses a library warning line.
    assert not OWN_STATUS.fullmatch("/x/arviz/__init__.py:50: FutureWarning: ")
    run = tmp_path / "demo" / "run"
    assert "running: bayesirl fit demo/park.toml demo/walks.csv --out demo/run" in done.stdout
    summary = json.loads((run / "summary.json").read_text())
    assert summary["complete"] is True and summary["draws_done"] == 600
    assert [r["feature"] for r in summary["report"]["weights"]] == [
        "mud", "slope", "shade", "water"]
    html = (run / "report.html").read_text()
    assert html.startswith("<!DOCTYPE html>") and html.rstrip().endswith("</html>")
    import arviz as az

    idata = az.from_netcdf(str(run / "posterior.nc"))
    assert idata.posterior["weights"].shape == (4, 600, 4)
    assert not list((tmp_path / "demo").glob(".*"))  # no staging folder left


def test_example_list(capsys):
    assert main(["example", "--list"]) == 0
    out = capsys.readouterr().out
    assert all(name in out for name in EXAMPLES)
    # Each line is a name, a gap, then its summary (a long name once ran into its summary).
    rows = {line.split()[0]: line for line in out.splitlines()}
    assert set(rows) == set(EXAMPLES)
    assert all(rows[n].startswith(n + "  ") for n in EXAMPLES)


def _fit(tiny, out="run", *extra) -> int:
    problem, demos = tiny
    return main(["--quiet", "fit", str(problem), str(demos), "--out",
                 str(problem.parent / out), *extra])


def test_fit_then_report_at_another_level(tiny, capsys):
    assert _fit(tiny) == 0
    run = tiny[0].parent / "run"
    first = json.loads((run / "summary.json").read_text())
    assert first["complete"] and first["level"] == 0.9
    assert first["requested"]["draws"] == 60 and first["draws_done"] == 60
    assert main(["--quiet", "report", str(run), "--level", "0.5"]) == 0
    second = json.loads((run / "summary.json").read_text())
    assert second["level"] == 0.5
    for a, b in zip(first["report"]["weights"], second["report"]["weights"], strict=True):
        # The same draws: a 50% interval lies strictly inside the 90% one.
        assert a["interval"][0] < b["interval"][0] < b["interval"][1] < a["interval"][1]
    assert capsys.readouterr().out == ""  # --quiet: no table


def test_quiet_off_prints_the_table_and_overrides_apply(tiny, capsys):
    problem, demos = tiny
    assert main(["fit", str(problem), str(demos), "--out", str(problem.parent / "r3"),
                 "--draws", "30", "--chains", "1", "--seed", "4"]) == 0
    out = capsys.readouterr().out
    assert "feature" in out and "mud" in out and "policy risk" in out
    summary = json.loads((problem.parent / "r3" / "summary.json").read_text())
    assert (summary["requested"]["draws"], summary["requested"]["chains"],
            summary["requested"]["seed"]) == (30, 1, 4)
    assert summary["draws_done"] == 30


def test_failure_while_writing_leaves_no_folder_and_keeps_the_old_run(tiny, monkeypatch, capsys):
    import bayesirl.commands.fit as fit_mod

    def broken(run, *args, **kwargs):
        (run.root / "posterior.nc").write_text("half")
        raise RuntimeError("disk full")

    real = fit_mod.save_draws
    monkeypatch.setattr(fit_mod, "save_draws", broken)
    assert _fit(tiny) == 1
    err = capsys.readouterr().err
    assert "internal error: RuntimeError: disk full" in err
    assert "finished sampler state is kept in" in err
    folder = tiny[0].parent
    # Sampling had finished: its checkpoint is kept (hidden), and a resume saves the draws.
    kept = list(folder.glob(".run.partial-*"))
    assert not (folder / "run").exists() and len(kept) == 1
    assert (kept[0] / "checkpoint").is_file()
    monkeypatch.setattr(fit_mod, "save_draws", real)
    assert main(["--quiet", "fit", "--resume", str(folder / "run")]) == 0
    assert json.loads((folder / "run" / "summary.json").read_text())["complete"] is True
    assert not list(folder.glob(".run*"))
    shutil.rmtree(folder / "run")
    monkeypatch.setattr(fit_mod, "save_draws", broken)
    _old_run(folder / "run")
    assert _fit(tiny, "run", "--force") == 1
    assert (folder / "run" / "old.txt").read_text() == "earlier run"
    assert sorted(p.name for p in folder.iterdir() if not p.name.startswith(".run.partial-")) \
        == ["run", "tiny.toml", "walks.csv"]


def _old_run(path) -> None:
    """A folder that is recognisably a run folder (its summary's format tag) plus a file."""
    path.mkdir()
    (path / "summary.json").write_text('{"format": "bayesirl-run/1", "complete": true}')
    (path / "old.txt").write_text("earlier run")


def test_force_replaces_a_run(tiny):
    folder = tiny[0].parent
    _old_run(folder / "run")
    assert _fit(tiny, "run", "--force") == 0
    assert sorted(p.name for p in (folder / "run").iterdir()) == [
        "posterior.nc", "report.html", "summary.json"]


def _constant_feature(toml_text: str) -> str:
    """The park problem with a fifth feature equal to 1 on every cell."""
    text = toml_text.replace('"water"]', '"water", "grass"]')
    for entry in ('"." = {}', '"S" = { start = true }', '"m" = { mud = 1 }',
                  '"s" = { slope = 1 }', '"t" = { shade = 1 }'):
        assert entry in text
        inner = entry[entry.index("{") + 1: entry.rindex("}")].strip()
        text = text.replace(entry, entry[:entry.index("{")] + "{ "
                            + (inner + ", " if inner else "") + "grass = 1 }")
    return text.replace('"W" = { water = 1, goal = true }',
                        '"W" = { water = 1, goal = true, grass = 1 }')


def test_check_flags_a_constant_feature_on_the_park_example(tmp_path, capsys):
    problem, demos = EXAMPLES["park"].write(tmp_path)
    # Negative control: the example as shipped has no constant feature.
    assert main(["check", str(problem), str(demos)]) == 0
    assert "[constant]" not in capsys.readouterr().out
    problem.write_text(_constant_feature(problem.read_text()))
    assert main(["check", str(problem), str(demos)]) == 0
    out = capsys.readouterr().out
    assert "5 states" not in out and "features mud, slope, shade, water, grass" in out
    flagged = [line for line in out.splitlines() if line.startswith("[constant]")]
    assert len(flagged) == 1 and "grass" in flagged[0], out


def test_check_without_demonstrations(tiny, capsys):
    assert main(["check", str(tiny[0])]) == 0
    assert "6 states, 4 actions" in capsys.readouterr().out


@pytest.mark.parametrize("command", SUBCOMMANDS)
def test_help_explains_every_option_with_an_example(command, capsys):
    assert main([command, "--help"]) == 0
    out = capsys.readouterr().out
    assert "example:" in out and f"bayesirl {command}" in out.split("example:")[1]
    sub = build_parser()._subparsers._group_actions[0].choices[command]
    for action in sub._actions:
        if action.option_strings and action.dest != "help":
            assert action.help, (command, action.dest)
            assert action.option_strings[-1] in out


def test_validate_is_wired_with_the_arguments_it_reads(monkeypatch):
    import bayesirl.validation.report as report

    seen = {}
    monkeypatch.setattr(report, "validate_command", lambda args: seen.update(vars(args)) or 0)
    assert main(["validate", "--replications", "7", "--out", "/tmp/x", "--processes", "2"]) == 0
    assert (seen["replications"], seen["out"], seen["processes"]) == (7, "/tmp/x", 2)


def test_suggest_ranks_candidates(tiny, capsys):
    pytest.importorskip("bayesirl.design")
    assert _fit(tiny) == 0
    run = tiny[0].parent / "run"
    assert main(["suggest", str(run), "--candidates", "start-states", "--budget", "1"]) == 0
    rows = json.loads((run / "suggestions.json").read_text())["suggestions"]
    assert rows and all({"candidate", "gain", "stderr", "target_sd", "p_best"} <= set(r)
                        for r in rows)
    gains = [r["gain"] for r in rows]
    assert gains == sorted(gains, reverse=True)
    assert np.isfinite(gains).all()
    assert main(["suggest", str(run), "--target", "nope"]) == 2


def test_suggest_scheduler_reaches_the_designer(tiny, monkeypatch, capsys):
    import bayesirl.design as design

    assert build_parser().parse_args(["suggest", "r"]).scheduler is None
    assert _fit(tiny, "run", "--chains", "1", "--draws", "20", "--warmup", "20") == 0
    run = tiny[0].parent / "run"
    seen = []
    real = design.suggest

    def spy(posterior, **kwargs):
        backend = kwargs.pop("backend", None)
        seen.append(None if backend is None else backend.where)
        return real(posterior, **kwargs)

    monkeypatch.setattr(design, "suggest", spy)
    for extra in (["--scheduler", "local"], []):
        assert main(["--quiet", "suggest", str(run), "--budget", "1", *extra]) == 0
        settings = json.loads((run / "suggestions.json").read_text())["settings"]
        assert "backend" not in settings and settings["budget"] == 1
    assert seen == ["local", None]


def test_problem_settings_reach_the_sampler(tiny, monkeypatch, capsys):
    import bayesirl
    from bayesirl.errors import InputError
    from bayesirl.priors import Laplace, LogNormal

    seen = {}

    def stand_in(lik, **kwargs):
        seen.update(kwargs, q=lik.q_function, steps=lik.demos.n_steps)
        raise InputError("stop here")

    monkeypatch.setattr(bayesirl, "sample", stand_in)
    problem, demos = tiny
    problem.write_text(problem.read_text().replace("[sampler]", "[prior]\nkind = \"laplace\"\n"
        "scale = [1.0, 3.0]\n[rationality]\nlog_mean = 0.5\nlog_sd = 0.25\n"
        "pin = { water = 2.0 }\n[sampler]"))
    assert main(["--quiet", "fit", str(problem), str(demos), "--out",
                 str(problem.parent / "run"), "--seed", "9"]) == 2
    assert "stop here" in capsys.readouterr().err
    assert seen["progress"] is False  # --quiet hides the progress bars
    assert type(seen["prior"]) is Laplace and seen["prior"].loc == 0.0
    np.testing.assert_array_equal(seen["prior"].scale, [1.0, 3.0])
    assert seen["rationality"] == LogNormal(0.5, 0.25) and seen["pin"] == {"water": 2.0}
    assert (seen["chains"], seen["draws"], seen["warmup"], seen["seed"]) == (2, 60, 60, 9)
    assert (seen["q"], seen["steps"]) == ("soft", 6)
    assert not (problem.parent / "run").exists()


def test_same_seed_same_draws(tiny):
    import arviz as az

    folder = tiny[0].parent
    for out in ("a", "b"):
        assert _fit(tiny, out, "--chains", "1", "--draws", "30", "--warmup", "30") == 0
    a, b = (az.from_netcdf(str(folder / out / "posterior.nc")).posterior["weights"].values
            for out in ("a", "b"))
    np.testing.assert_array_equal(a, b)
    assert _fit(tiny, "c", "--chains", "1", "--draws", "30", "--warmup", "30",
                "--seed", "1") == 0
    c = az.from_netcdf(str(folder / "c" / "posterior.nc")).posterior["weights"].values
    assert not np.array_equal(a, c)  # negative control: another seed, other draws


@pytest.mark.slow
def test_machine_example_in_process(tmp_path, capsys):
    assert main(["example", "machine", str(tmp_path / "m")]) == 0
    summary = json.loads((tmp_path / "m" / "run" / "summary.json").read_text())
    assert summary["complete"] and summary["report"]["diagnostics"]["trustworthy"]
    truth = {"wear": -6.0, "replacement": -4.0}
    for row in summary["report"]["weights"]:
        # A 90% interval misses the simulated truth 10% of the time; a 99.9% band (mean
        # +- 3.3 sd) missing it would point to a bug, not bad luck.
        assert abs(row["mean"] - truth[row["feature"]]) < 3.3 * row["sd"], row


def test_resume_prefers_a_newer_checkpoint_left_by_a_killed_resume(tiny, monkeypatch, capsys):
    import os

    from bayesirl.execution import chains
    from bayesirl.execution.interrupt import StopHook

    folder = tiny[0].parent
    monkeypatch.setattr(chains, "TEST_STOP", StopHook(chain=0, iteration=70))
    assert _fit(tiny, "run", "--chains", "1") == 130  # interrupted after some draws
    monkeypatch.setattr(chains, "TEST_STOP", None)
    run = folder / "run"
    assert json.loads((run / "summary.json").read_text())["complete"] is False
    # What a resume killed outright leaves: a hidden copy with a newer checkpoint.
    kept = folder / ".run.partial-killed"
    shutil.copytree(run, kept)
    later = (run / "checkpoint").stat().st_mtime + 10
    os.utime(kept / "checkpoint", (later, later))
    capsys.readouterr()
    assert main(["fit", "--resume", str(run)]) == 0
    assert f"resuming from {kept}" in capsys.readouterr().err
    assert not kept.exists() and json.loads((run / "summary.json").read_text())["complete"]
