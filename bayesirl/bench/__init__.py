"""Benchmarks as code: ``bayesirl bench`` runs them and writes ``reports/benchmark.*``."""

from __future__ import annotations

from pathlib import Path

from bayesirl.bench import engine, report


def run_all(folder: Path, quick: bool = False, log=print) -> tuple[Path, Path]:
    """Run every suite and write the report files into ``folder``."""
    results = {"machine": report.machine(), "quick": quick}
    log("engine: value_and_grad")
    results["engine"] = engine.run(quick=quick, log=log)
    return report.write(results, folder)
