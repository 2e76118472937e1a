"""Benchmarks as code: ``bayesirl bench`` runs them and writes ``reports/benchmark.*``.

``bayesirl bench --large`` runs the large-problem suite instead (``bench/large.py``) and
writes ``reports/benchmark-large.*``, merging rows by problem size; ``benchmark.md`` carries
a one-line-per-size summary of those rows (``large_report.overview``).
"""

from __future__ import annotations

import json
from collections.abc import Callable, Iterable
from pathlib import Path

from bayesirl.bench import (
    design,
    dynamics,
    engine,
    groups,
    large,
    large_report,
    report,
    ridge,
    sampler,
)

SUITES = ("engine", "sampler", "design", "ridge", "groups", "competitor", "dynamics",
          "evidence")


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
    if "ridge" in only:
        log("ridge: diagonal and dense mass matrix on a collinear pair")
        results["ridge"] = ridge.run(quick=quick, log=log)
    if "competitor" in only:
        log("competitor: against JAX + numpyro")
        results["competitor"] = _competitor(quick, log)
    if "groups" in only:
        log("groups: partial pooling of 10 and 30 demonstrators")
        results["groups"] = groups.run(quick=quick, log=log)
    if "dynamics" in only:
        log("dynamics: cut posterior with 8 and 32 dynamics draws against the plug-in")
        results["dynamics"] = dynamics.run(quick=quick, log=log)
    if "evidence" in only:
        from bayesirl.bench import evidence

        log("evidence: state-only walks against recorded actions; memory with gaps")
        results["evidence"] = evidence.run(quick=quick, log=log)
    _keep_earlier(results, folder, only)
    return _write_main(results, folder)


def _competitor(quick: bool, log) -> dict:
    """The JAX + numpyro comparison, or a note naming the missing ``bench`` extra."""
    from bayesirl.bench import competitor, jaxmodel

    try:
        return competitor.run(quick=quick, log=log)
    except jaxmodel.MissingExtra as exc:
        log(f"  skipped: {exc}")
        return {"missing": str(exc)}


def _keep_earlier(results: dict, folder: Path, only) -> None:
    """Suites not run this time keep their rows from ``folder``'s previous full results,
    listed under ``kept_from_earlier`` (the report says they were not re-measured)."""
    path = folder / "benchmark.json"
    if not path.exists() or results["quick"]:
        return
    try:
        earlier = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return
    kept = [k for k in SUITES if k not in only and k in earlier and not earlier.get("quick")]
    for k in kept:
        results[k] = earlier[k]
    if kept:
        results["kept_from_earlier"] = kept


def _write_main(results: dict, folder: Path) -> tuple[Path, Path]:
    """Write ``benchmark.*`` for ``results``, with the large rows' section from ``folder``."""
    return report.write(results, folder, large_report.overview(large_report.load(folder)))


def _refresh_overview(folder: Path) -> None:
    """Re-render ``benchmark.md`` with the new large rows, if a ``benchmark.json`` is there."""
    path = folder / "benchmark.json"
    if path.exists():
        _write_main(json.loads(path.read_text(encoding="utf-8")), folder)


def run_large(folder: Path, sizes: Iterable[int] | None = None, draws: int | None = None,
              warmup: int | None = None, chains: int | None = None,
              log: Callable[[str], object] = print) -> tuple[Path, Path]:
    """Run the large suite and merge its rows into ``folder``'s ``benchmark-large.*``.

    Parameters
    ----------
    folder : Path
        Receives ``benchmark-large.md`` and ``.json``; an existing ``benchmark.md`` is
        re-rendered from its ``benchmark.json`` with the large rows' section.
    sizes : iterable of int, optional
        State counts to (re)measure (default ``large.SIZES``: 10^3, 10^4, 10^5); rows of
        other sizes already in the JSON are kept.
    draws, warmup, chains : int, optional
        Per chain (defaults ``large.DRAWS``, ``large.WARMUP``, ``large.CHAINS``: 1000,
        300, 4).
    log : callable
        One line per phase.

    Returns
    -------
    tuple of Path
        ``(markdown, json)``, rewritten after each size.

    Raises
    ------
    InputError
        An existing ``benchmark-large.json`` that is not a large-benchmark result (checked
        before anything runs).
    """
    sizes = large.SIZES if sizes is None else sizes
    draws = large.DRAWS if draws is None else draws
    warmup = large.WARMUP if warmup is None else warmup
    chains = large.CHAINS if chains is None else chains
    log(f"large: sizes {sorted(set(int(s) for s in sizes))}, {chains} chains x {draws} draws, "
        f"warmup {warmup}")
    folder = Path(folder)
    large_report.load(folder)  # an unreadable old file fails now, not after hours of work
    paths = []

    def write(results):
        paths[:] = large_report.write(results, folder)
        _refresh_overview(folder)
        log(f"large: wrote {paths[0]} and {paths[1]}")

    large.run(sizes, draws=draws, warmup=warmup, chains=chains, log=log, on_row=write)
    return tuple(paths)
