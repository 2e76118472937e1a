"""The large-problem suite at a tiny size: its files, the CLI, and merging rows by size."""

from __future__ import annotations

import json

import numpy as np
import pytest

import bayesirl.likelihood.soft as lik_soft
import bayesirl.solver.soft as solver_soft
from bayesirl.bench import large, memory, run_large
from bayesirl.bench.large_report import merge, overview, render, summary
from bayesirl.bench.solverwork import profile
from bayesirl.cli import main
from bayesirl.errors import InputError
from bayesirl.likelihood import BoltzmannLikelihood

S = 300  # above the dense Newton path (200 states), so the Krylov solves are counted
ROW_KEYS = {
    "states", "draws", "warmup", "chains", "processes", "wall_s", "warmup_s", "sampling_s",
    "min_bulk_ess", "min_tail_ess", "ess_per_s", "evals_per_ess", "max_rhat", "divergences",
    "mean_tree_depth", "mean_leapfrog", "step_sizes", "peak_main_bytes", "peak_child_bytes",
    "peak_sum_bytes", "build_s", "first_eval_s", "warm_s_per_gradient", "fit_s_per_gradient",
    "profile", "machine", "date", "load_1min",
}


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    """A report folder after one tiny run (2 chains x 20 draws, warmup 20) at S = 300."""
    out = tmp_path_factory.mktemp("large")
    (out / "benchmark.md").write_text("the main report\n")
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(large, "PSS_EVERY", 0.1)  # samples while the short fit's workers live
        md, js = run_large(out, sizes=[S], draws=20, warmup=20, chains=2, log=lambda _: None)
    assert (md, js) == (out / "benchmark-large.md", out / "benchmark-large.json")
    return out


def test_the_json_has_every_field_of_a_row(folder):
    results = json.loads((folder / "benchmark-large.json").read_text())
    assert results["settings"]["default_warmup"] == large.WARMUP == 300
    (row,) = results["rows"]
    assert ROW_KEYS <= set(row)
    assert row["states"] == S and row["chains"] == 2 and row["draws"] == 20
    assert row["wall_s"] == pytest.approx(row["warmup_s"] + row["sampling_s"])
    assert 0 < row["sampling_s"] < row["wall_s"]
    assert len(row["step_sizes"]) == 2 and row["mean_leapfrog"] >= 1
    assert row["peak_child_bytes"] > 0 and row["peak_main_bytes"] > 0
    assert len(row["load_1min"]) == 2 and min(row["load_1min"]) >= 0
    if memory.available():  # the workers' PSS: at least 1 + 2 processes were sampled
        assert row["pss_processes"] == 3
        assert 0 < row["peak_total_pss_bytes"] < row["peak_sum_bytes"]
    prof = row["profile"]
    assert prof["source"] == "lik.work" and not prof["dense"]
    assert prof["newton_steps"] > 0 and prof["value_matvecs"] > 0 and prof["adjoint_matvecs"] > 0


def test_the_markdown_has_the_scaling_table_and_the_main_report_is_untouched(folder):
    text = (folder / "benchmark-large.md").read_text()
    assert "## Scaling" in text and "| states | states ratio |" in text
    assert "W = 300" in text and "## Peak memory" in text
    assert "## Load during the fits" in text
    assert (folder / "benchmark.md").read_text() == "the main report\n"


def test_cli_run_of_one_size_replaces_its_row_and_keeps_the_others(folder, monkeypatch,
                                                                   capsys):
    js = folder / "benchmark-large.json"
    results = json.loads(js.read_text())
    kept = {**results["rows"][0], "states": 250, "date": "kept"}
    results["rows"][0]["date"] = "stale"
    results["rows"].insert(0, kept)
    js.write_text(json.dumps(results))
    monkeypatch.setattr(large, "CHAINS", 2)  # the CLI keeps the default of 4 chains
    monkeypatch.setattr(large, "HEARTBEAT", 0.2)
    code = main(["bench", "--large", "--large-sizes", str(S), "--large-draws", "20",
                 "--large-warmup", "20", "--out", str(folder)])
    assert code == 0
    out = capsys.readouterr().out
    assert f"S={S} fit: still running" in out and "solver profile" in out  # progress lines
    rows = json.loads(js.read_text())["rows"]
    assert [r["states"] for r in rows] == [250, S]
    assert rows[0]["date"] == "kept" and rows[1]["date"] not in ("kept", "stale")
    text = (folder / "benchmark-large.md").read_text()
    assert f"| {S} | 1 |" in text and "about S^" in text
    assert (folder / "benchmark.md").read_text() == "the main report\n"


def test_merge_keys_rows_by_states():
    old = {"rows": [{"states": 1000, "x": 1}, {"states": 100000, "x": 2}]}
    new = {"machine": {}, "rows": [{"states": 1000, "x": 3}, {"states": 10000, "x": 4}]}
    merged = merge(old, new)
    assert [(r["states"], r["x"]) for r in merged["rows"]] == [(1000, 3), (10000, 4),
                                                                (100000, 2)]
    assert merge(None, new)["rows"] == new["rows"]


def test_summary_reports_the_growth_exponent():
    rows = [{"states": 1000, "warm_s_per_gradient": 0.01, "ess_per_s": 40.0},
            {"states": 100000, "warm_s_per_gradient": 1.0, "ess_per_s": None}]
    assert "about S^1.00" in summary(rows) and "n/a" in summary(rows)
    assert "no scaling" in summary(rows[:1])


def test_summary_compares_each_size_with_the_one_before():
    rows = [{"states": 10**3, "warm_s_per_gradient": 0.01, "ess_per_s": 40.0},
            {"states": 10**4, "warm_s_per_gradient": 0.1, "ess_per_s": 20.0},
            {"states": 10**5, "warm_s_per_gradient": 0.1, "ess_per_s": 40.0}]
    text = summary(rows)
    assert "From S = 1000 to 10000 (10x the states)" in text and "S^1.00" in text
    assert "From S = 10000 to 100000" in text and "S^0.00" in text
    assert "falls 2.0x" in text and "rises 2.0x" in text and "1000 to 100000" not in text


def test_render_copes_with_nulls_from_strict_json(folder):
    results = json.loads((folder / "benchmark-large.json").read_text())
    results["rows"][0]["min_tail_ess"] = None
    assert "n/a" in render(results)


def test_profile_restores_the_solver_functions():
    before = (solver_soft.solve_discounted, lik_soft.solve_discounted)
    mdp, w, demos = large.problem(S)
    out = profile(BoltzmannLikelihood(mdp, demos), w, 0.01, points=3)
    assert (solver_soft.solve_discounted, lik_soft.solve_discounted) == before
    assert out["gradients"] == 3 and np.isfinite(out["seconds_per_gradient"])


@pytest.mark.parametrize("argv", [["--large", "--only", "engine"], ["--large-draws", "5"],
                                  ["--large", "--large-sizes", "abc"]])
def test_cli_refuses_bad_large_options(argv, tmp_path):
    assert main(["bench", *argv, "--out", str(tmp_path)]) == 2
    assert not any(tmp_path.iterdir())


def test_cli_help_states_the_suite_defaults(capsys):
    assert main(["bench", "--help"]) == 0
    text = " ".join(capsys.readouterr().out.split())
    assert f"(default {','.join(str(n) for n in large.SIZES)})" in text
    assert f"(default {large.DRAWS})" in text and f"(default {large.WARMUP})" in text


class _Counted:
    """A likelihood stand-in with cumulative counters, as ``lik.work`` may offer them."""

    def __init__(self, lik):
        self.lik, self.mdp = lik, lik.mdp
        self.work = {"newton_steps": 0, "value_matvecs": 0, "flag": True}

    def evaluate(self, w):
        self.work = {**self.work, "newton_steps": self.work["newton_steps"] + 2,
                     "value_matvecs": self.work["value_matvecs"] + 10}
        return self.lik.evaluate(w)


def test_profile_reads_the_likelihoods_own_counters_when_it_has_them():
    mdp, w, demos = large.problem(S)
    out = profile(_Counted(BoltzmannLikelihood(mdp, demos)), w, 0.01, points=4)
    assert out["source"] == "lik.work" and "flag" not in out
    assert out["newton_steps"] == 2 and out["value_matvecs"] == 10


def test_an_unreadable_old_result_fails_before_anything_runs(tmp_path):
    (tmp_path / "benchmark-large.json").write_text("{not json")
    with pytest.raises(InputError, match="benchmark-large.json"):
        run_large(tmp_path, sizes=[10**5], log=lambda _: None)  # would take an hour


def test_the_main_report_carries_the_large_rows_when_its_json_is_there(folder, tmp_path):
    # The issue asks for the large numbers in benchmark.md itself: a large run re-renders it
    # from benchmark.json (here a report with no suites) plus one line per size.
    from bayesirl.bench import _refresh_overview
    from bayesirl.bench.report import machine

    (tmp_path / "benchmark-large.json").write_text((folder / "benchmark-large.json").read_text())
    (tmp_path / "benchmark.json").write_text(json.dumps({"machine": machine(), "quick": True}))
    _refresh_overview(tmp_path)
    text = (tmp_path / "benchmark.md").read_text()
    assert text.startswith("# bayesirl benchmark\n") and "## Large problems" in text
    assert f"| {S} | 2 x 20 (20, *reduced*) |" in text
    assert "[benchmark-large.md](benchmark-large.md)" in text


def test_overview_marks_only_rows_off_the_default_run(folder):
    results = json.loads((folder / "benchmark-large.json").read_text())
    row = results["rows"][-1]  # the tiny run (an earlier test may have added a row before it)
    results["rows"] = [row, {**row, "states": 2 * S, "draws": large.DRAWS,
                             "warmup": large.WARMUP, "load_1min": None}]
    lines = "\n".join(overview(results))
    assert lines.count("*reduced*") == 2  # the prose's mention and the tiny run's row
    assert f"| {2 * S} | 2 x {large.DRAWS} ({large.WARMUP}) |" in lines
    assert overview(None) == [] and overview({"rows": []}) == []
