"""Benchmarks as code: ``bayesirl bench`` runs them and writes ``reports/benchmark.*``."""

from __future__ import annotations

from pathlib import Path

from bayesirl.bench import design, engine, report, sampler

SUITES = ("engine", "sampler", "design")


def run_all(folder: Path, quick: bool = False, only=SUITES, log=print) -> tuple[Path, Path]:
    """Run the chosen suites and write the report files into ``folder``."""
    results = {"machine": report.machine(), "quick": quick}
    if "engine" in only:
        log("engine: value_and_grad")
        results["engine"] = engine.run(quick=quick, log=log)
    if "sampler" in only:
        log("sampler: ESS per second")
        results["sampler"] = sampler.run(quick=quick, log=log)
    if "design" in only:
        log("design: rank all query and start states")
        results["design"] = design.run(quick=quick, log=log)
    return report.write(results, folder)
