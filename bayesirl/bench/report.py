"""Write ``reports/benchmark.md`` and ``reports/benchmark.json`` (atomically)."""

from __future__ import annotations

import os
import platform
from pathlib import Path

import numpy as np
import scipy

from bayesirl.files import write_json, write_text


def machine() -> dict:
    """Facts about the machine and the library versions behind the numbers."""
    import numba

    return {
        "cpu": platform.processor() or platform.machine(),
        "cores": os.cpu_count(),
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "numba": numba.__version__,
    }


def _engine_md(engine: dict) -> list[str]:
    lines = [
        "## Engine: one `value_and_grad` (log-likelihood and exact gradient)",
        "",
        "50 demonstrations of length 50, F = 8, A = 4 (bus engine: the model of Rust 1987,",
        "90 states, A = 2, F = 2, 100 buses x 100 months). *Warm*: after a 1% change of the",
        "weights, reusing the previous value vector, adjoint and factorisation (what a sampler",
        "does). *Baseline*: below discount 0.999 plain numpy soft value iteration from zero plus",
        "the adjoint by fixed-point iteration; from 0.999 on (where value iteration needs",
        "~log(1/tol)/(1-g) sweeps) Newton's method with scipy (`spsolve` steps on grids and the",
        "bus, GMRES on random problems, whose LU fills in) (`bayesirl/bench/reference.py`).",
        "Sweeps = time / time of one `P @ V` on the same matrix. Newton steps and mat-vecs are",
        "per warm call, from the likelihood's counters. Medians of repeated runs.",
        "",
        "| problem | discount | cold ms | warm ms | baseline | baseline ms | warm sweeps "
        "| Newton steps | value / adjoint mat-vecs | baseline / warm | baseline / cold "
        "| exp-log sweeps |",
        "|---|---|---|---|---|---|---|---|---|---|---|---|",
    ]
    for r in engine["cases"]:
        work = (f"{r['warm_newton_steps']:.1f} | {r['warm_value_matvecs']:.0f} / "
                f"{r['warm_adjoint_matvecs']:.0f}" if "warm_newton_steps" in r else "- | -")
        lines.append(
            f"| {r['problem']} | {r['discount']} | {r['cold_s'] * 1e3:.1f} | "
            f"{r['warm_s'] * 1e3:.1f} | {r.get('baseline', 'value iteration')} | "
            f"{r['reference_s'] * 1e3:.0f} | {r['warm_sweeps']:.0f} | {work} | "
            f"{r['speedup_warm']:.1f}x | {r['speedup_cold']:.1f}x | {r['exp_log_sweeps']:.1f} |"
        )
    lines += ["", f"First evaluation in a fresh process (compiled-kernel load): "
              f"{engine['first_call_s']:.2f} s, excluded from the table."]
    if "load_1min" in engine:
        lines.append("1-minute load average at the start and end of this suite: "
                     + " / ".join(f"{x:.1f}" for x in engine["load_1min"])
                     + " (on 2 cores; above ~1 other work inflated the times).")
    lines.append("")
    lines += _engine_targets(engine) + _high_discount(engine)
    return lines


def _high_discount(engine: dict) -> list[str]:
    """Warm cost at each discount relative to 0.95 on the same problem (target <= ~3x)."""
    base = {r["problem"]: r["warm_s"] for r in engine["cases"] if r["discount"] == 0.95}
    rows = ["| problem | discount | warm ms | / warm at 0.95 | <= 3x |", "|---|---|---|---|---|"]
    for r in engine["cases"]:
        if r["discount"] >= 0.999 and r["problem"] in base:
            ratio = r["warm_s"] / base[r["problem"]]
            rows.append(f"| {r['problem']} | {r['discount']} | {r['warm_s'] * 1e3:.1f} | "
                        f"{ratio:.2f}x | {'yes' if ratio <= 3 else 'no'} |")
    if len(rows) == 2:
        return []
    return ["### High discounts: warm cost against discount 0.95", "", *rows, ""]


def _engine_targets(engine: dict) -> list[str]:
    rows = ["| target | problem | measured | met |", "|---|---|---|---|"]
    for r in engine["cases"]:
        if r["states"] != 10**4:
            continue
        want = 10 if r["discount"] == 0.95 else 30
        got = r["speedup_warm"]
        rows.append(f"| warm >= {want}x baseline | {r['problem']}, g={r['discount']} | "
                    f"{got:.1f}x | {'yes' if got >= want else 'no'} |")
        if r["discount"] == 0.95:
            rows.append(f"| warm <= 100 sweeps | {r['problem']}, g=0.95 | "
                        f"{r['warm_sweeps']:.0f} | {'yes' if r['warm_sweeps'] <= 100 else 'no'} |")
            rows.append(f"| exp/log part <= 4 sweeps | {r['problem']} | "
                        f"{r['exp_log_sweeps']:.1f} | "
                        f"{'yes' if r['exp_log_sweeps'] <= 4 else 'no'} |")
    return ["### Targets (S = 10^4)", "", *rows, ""]


def _sampler_md(sampler: dict) -> list[str]:
    lines = [
        "## Sampler: bulk-ESS per second (posterior over 8 weights)",
        "",
        "Random sparse MDP, A = 4, discount 0.95, 50 demonstrations of length 50, prior",
        "Normal(0, 5), 4 chains. ESS is the minimum over weights of arviz's bulk-ESS; seconds",
        "are sampling time after warmup. The random walk runs four times as many iterations.",
        "emcee drives the plain cold-start numpy density (`bench/sampler.py` explains how its",
        "ESS and cost are measured).",
        "",
        "| states | sampler | draws/chain | min bulk-ESS | ESS/s | vs emcee | evaluations/ESS "
        "| max R-hat | divergent |",
        "|---|---|---|---|---|---|---|---|---|",
    ]
    targets = []
    for case in sampler["cases"]:
        for r in case["rows"]:
            draws = (case["draws"] * (4 if r["method"] == "random-walk" else 1)
                     if not r["method"].startswith("emcee") else "-")
            lines.append(
                f"| {case['states']} | {r['method']} | {draws} | "
                f"{_fmt(r['min_bulk_ess'], '.0f')} | "
                f"{r['ess_per_s']:.3g} | {r['vs_emcee']:.1f}x | {r['evals_per_ess']:.1f} | "
                f"{_fmt(r['max_rhat'], '.3f')} | {r['divergences']} |"
            )
            if r["method"] == "nuts":
                big = case["states"] == 10**4
                if big:
                    targets.append(("NUTS >= 30x emcee ESS/s", case["states"],
                                    f"{r['vs_emcee']:.1f}x", r["vs_emcee"] >= 30))
                targets.append(("NUTS <= 15 gradient evaluations per bulk-ESS",
                                case["states"], f"{r['evals_per_ess']:.1f}",
                                r["evals_per_ess"] <= 15))
            if not r["method"].startswith("emcee"):
                targets.append((f"R-hat <= 1.01 ({r['method']})", case["states"],
                                f"{r['max_rhat']:.3f}", r["max_rhat"] <= 1.01))
    lines += ["", "### Targets", "", "| target | states | measured | met |", "|---|---|---|---|"]
    lines += [f"| {t} | {n} | {m} | {'yes' if ok else 'no'} |" for t, n, m, ok in targets]
    return lines + [""]


def _fmt(x, spec: str) -> str:
    """Format a number; None (JSON null) or NaN, e.g. a proxy row's unmeasured ESS, as n/a."""
    return "n/a" if x is None or x != x else format(x, spec)


def _design_md(d: dict) -> list[str]:
    lines = [
        "## Designer: rank every query state and every start state",
        "",
        f"Slippery grid, S = {d['states']}, A = {d['actions']}, {d['draws']} draws built around "
        "a point (`bench/design.py`), exact query-state gains plus nested Monte-Carlo",
        f"start-state gains ({d['n_outer']} outer samples, demonstrations of {d['length']} "
        "steps). Plain numpy: the same estimator with the kernels' numpy twins, measured on",
        f"{d['numpy_draws']} draws and scaled linearly to all draws. Per-draw policy solves "
        "(warm-started Newton) are timed separately.",
        "",
        "| estimator | seconds | peak MB | numpy seconds | numpy / ours "
        "| solve s/draw | solves, all draws s |",
        "|---|---|---|---|---|---|---|",
        f"| ours | {d['seconds']:.2f} | {d['peak_bytes'] / 2**20:.0f} | "
        f"{d['numpy_seconds']:.1f} | {d['speedup']:.1f}x | {d['solve_seconds_per_draw']:.3f} "
        f"| {d['solve_seconds_projected']:.0f} |",
        "",
        "| target | measured | met |",
        "|---|---|---|",
        f"| numpy / ours >= 10x | {d['speedup']:.1f}x | {'yes' if d['speedup'] >= 10 else 'no'} |",
        f"| peak memory < 2 GB | {d['peak_bytes'] / 2**30:.2f} GB | "
        f"{'yes' if d['peak_bytes'] < 2 * 2**30 else 'no'} |",
        "",
    ]
    return lines


def render(results: dict, appendix: list[str] = ()) -> str:
    """Markdown for every suite present in ``results``, then the ``appendix`` lines."""
    m = results["machine"]
    lines = [
        "# bayesirl benchmark",
        "",
        f"Generated by `bayesirl bench`{' --quick' if results.get('quick') else ''}. "
        f"Machine: {m['cores']} cores, {m['cpu']}; Python {m['python']}, numpy {m['numpy']}, "
        f"scipy {m['scipy']}, numba {m['numba']}. All competitors run in the same process, "
        "one after another; ratios compare medians.",
        "",
    ]
    if results.get("kept_from_earlier"):
        lines += [f"Not re-measured in this run (rows kept from the previous one, at an "
                  f"earlier version): {', '.join(results['kept_from_earlier'])}.", ""]
    if "engine" in results:
        lines += _engine_md(results["engine"])
    if "sampler" in results:
        lines += _sampler_md(results["sampler"])
    if "design" in results:
        lines += _design_md(results["design"])
    if "ridge" in results:
        from bayesirl.bench.ridge import markdown

        lines += markdown(results["ridge"])
    if "competitor" in results:
        from bayesirl.bench.competitor_report import markdown

        lines += markdown(results["competitor"])
    if "groups" in results:
        from bayesirl.bench.groups import markdown

        lines += markdown(results["groups"])
    if "dynamics" in results:
        from bayesirl.bench.dynamics import markdown

        lines += markdown(results["dynamics"])
    if "evidence" in results:
        from bayesirl.bench.evidence import markdown as evidence_markdown

        lines += evidence_markdown(results["evidence"])
    return "\n".join([*lines, *appendix]) + "\n"


def write(results: dict, folder: Path, appendix: list[str] = ()) -> tuple[Path, Path]:
    """Write both files (``appendix``: extra markdown lines); returns their paths."""
    md, js = folder / "benchmark.md", folder / "benchmark.json"
    write_json(js, results, sort_keys=True)
    write_text(md, render(results, appendix))
    return md, js
