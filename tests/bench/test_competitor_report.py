"""The competitor section says when the machine was loaded and when the extra is missing."""

from __future__ import annotations

from bayesirl import bench
from bayesirl.bench import competitor, competitor_report, jaxmodel


def _results(load: float) -> dict:
    jax_row = {"seconds": 0.001, "iterations": 20, "compile_s": 2.0, "setup_s": 1.0,
               "loglik_rel_gap": 1e-12, "grad_rel_gap": 1e-9}
    grad = {"problem": "random S=1e3", "discount": 0.95, "ours_s": 0.004, "sweep_s": 1e-5,
            "ours_over_jax": 4.0, "load_1min": [load, load],
            "work": {"newton_steps": 2.0, "value_matvecs": 30.0, "adjoint_matvecs": 18.0},
            "jax": {"vi": jax_row, "newton": dict(jax_row, seconds=0.002)}}
    side = {"ess_per_sampling_cpu_s": 10.0, "ess_per_total_cpu_s": 5.0, "cpu_s_per_eval": 0.004,
            "evals_per_ess": 8.0, "max_rhat": 1.004}
    nuts = {"problem": "random S=1e3", "draws": 300, "warmup": 300, "ours": side,
            "jax": dict(side, ess_per_sampling_cpu_s=40.0), "ratio_sampling": 0.25,
            "ratio_total": 0.3, "mean_gap_mcse": 1.2, "load_1min": [load],
            "jax_compile_s": 3.0, "jax_setup_s": 1.0}
    return {"jax": "0.x", "numpyro": "0.y", "gradient": [grad], "nuts": [nuts],
            "profile": {"random S=1e3": [{"where": "bayesirl/solver/krylov.py", "share": 0.4,
                                          "ms_per_call": 1.0}]}}


def test_a_loaded_run_says_so_and_a_quiet_one_does_not():
    loaded = "\n".join(competitor_report.markdown(_results(12.0)))
    assert "Measured on a loaded machine" in loaded and "| 12.0-12.0 |" in loaded
    assert "| 0.25x | 0.30x |" in loaded and "met on 0 of 1 problems" in loaded
    quiet = "\n".join(competitor_report.markdown(_results(0.8)))  # negative control
    assert "loaded machine" not in quiet


def test_without_the_extra_the_suite_records_why(monkeypatch):
    def missing(**_):
        raise jaxmodel.MissingExtra("jax missing: pip install 'bayesirl[bench]'")

    monkeypatch.setattr(competitor, "run", missing)
    note = bench._competitor(quick=True, log=lambda *_: None)
    assert note == {"missing": "jax missing: pip install 'bayesirl[bench]'"}
    text = "\n".join(competitor_report.markdown(note))
    assert "Not measured: jax missing" in text
