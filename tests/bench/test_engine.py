"""The engine benchmark's high-discount rows: the Newton baseline and the per-call work."""

from __future__ import annotations

import numpy as np

from bayesirl.bench import engine, report
from bayesirl.bench.problems import bus_engine


def test_high_discount_rows_use_the_newton_baseline_and_agree_with_it():
    row = engine.measure_case(bus_engine(0.9999), repeats=3)
    assert row["baseline"] == "Newton + spsolve"
    # The baseline is an independent solve (scipy, relative values): the log-likelihoods of
    # 10^4 steps agree far inside the stopping rule's bound (tests/highdiscount derive it).
    assert row["loglik_gap"] < 1e-6
    assert row["grad_gap"] < 1e-6 * max(1.0, row["grad_scale"])
    assert row["warm_newton_steps"] >= 1 and np.isfinite(row["warm_s"])


def test_the_report_compares_each_high_discount_with_0_95():
    cases = [{"problem": "p", "discount": d, "warm_s": t, "cold_s": t, "reference_s": 1.0,
              "warm_sweeps": 1.0, "speedup_warm": 1.0, "speedup_cold": 1.0,
              "exp_log_sweeps": 1.0, "states": 10}
             for d, t in ((0.95, 0.01), (0.999, 0.02), (0.9999, 0.04))]
    text = "\n".join(report._engine_md({"first_call_s": 0.1, "cases": cases}))
    assert "| p | 0.999 | 20.0 | 2.00x | yes |" in text
    assert "| p | 0.9999 | 40.0 | 4.00x | no |" in text  # negative control: over 3x is "no"


def test_suites_not_run_keep_their_earlier_rows_and_say_so(tmp_path):
    import json

    from bayesirl import bench

    (tmp_path / "benchmark.json").write_text(json.dumps(
        {"quick": False, "engine": {"old": 1}, "sampler": {"rows": 2}, "design": {"rows": 3}}))
    results = {"quick": False, "engine": {"new": 1}}
    bench._keep_earlier(results, tmp_path, only=("engine",))
    assert results["sampler"] == {"rows": 2} and results["engine"] == {"new": 1}
    assert results["kept_from_earlier"] == ["sampler", "design"]
    quick = {"quick": True, "engine": {}}  # negative control: a smoke run keeps nothing
    bench._keep_earlier(quick, tmp_path, only=("engine",))
    assert "sampler" not in quick
