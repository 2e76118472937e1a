"""Write ``benchmark-large.md`` and ``benchmark-large.json``, merging rows by problem size.

A run of some sizes replaces those rows of an existing ``benchmark-large.json`` in the same
folder and keeps the others, so the 10^5 row (an hour or more) can be run on its own; the
markdown is then rendered from the merged rows.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

from bayesirl.bench.report import _fmt
from bayesirl.errors import InputError
from bayesirl.files import write_json, write_text

MD_NAME, JSON_NAME = "benchmark-large.md", "benchmark-large.json"


def load(folder: Path) -> dict | None:
    """The ``benchmark-large.json`` in ``folder``, or None if there is none.

    Parameters
    ----------
    folder : Path

    Returns
    -------
    dict or None

    Raises
    ------
    InputError
        The file is not JSON or has no list of rows with a ``states`` field each.
    """
    path = Path(folder) / JSON_NAME
    if not path.exists():
        return None
    try:
        old = json.loads(path.read_text(encoding="utf-8"))
        for row in old["rows"]:
            int(row["states"])
    except (ValueError, KeyError, TypeError) as err:
        raise InputError(f"{path}: not a large-benchmark result ({type(err).__name__}: {err}); "
                         "move it away or fix it, its rows are merged with the new ones") from err
    return old


def merge(old: dict | None, new: dict) -> dict:
    """Rows of ``old`` and ``new`` keyed by ``states``; a size in ``new`` replaces ``old``'s.

    Parameters
    ----------
    old : dict or None
        A previously written result (or None).
    new : dict
        The result of :func:`bayesirl.bench.large.run`.

    Returns
    -------
    dict
        ``new`` with the union of rows, sorted by states.
    """
    rows = {int(r["states"]): r for r in (old or {}).get("rows", [])}
    rows.update({int(r["states"]): r for r in new["rows"]})
    return {**new, "rows": [rows[k] for k in sorted(rows)]}


def _mb(x) -> str:
    return _fmt(None if x is None else x / 2**20, ".0f")


def _fits(rows) -> list[str]:
    lines = [
        "## Fits",
        "",
        "Wall time of `sample` (fork, unpickle, warmup, sampling); the warmup / sampling split",
        "apportions it by gradient evaluations. ESS: minimum over the 8 weights of arviz's",
        "bulk- and tail-ESS; ESS/s uses sampling time. Leapfrog = gradient evaluations per",
        "iteration after warmup.",
        "",
        "| states | chains x draws | warmup | wall s | warmup s | sampling s | min bulk-ESS "
        "| min tail-ESS | ESS/s | gradients/ESS | max R-hat | divergent | mean tree depth "
        "| mean leapfrog | step sizes |",
        "|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        steps = ", ".join(f"{s:.3g}" for s in r["step_sizes"])
        lines.append(
            f"| {r['states']} | {r['chains']} x {r['draws']} | {r['warmup']} | "
            f"{r['wall_s']:.1f} | {r['warmup_s']:.1f} | {r['sampling_s']:.1f} | "
            f"{_fmt(r['min_bulk_ess'], '.0f')} | {_fmt(r['min_tail_ess'], '.0f')} | "
            f"{_fmt(r['ess_per_s'], '.3g')} | {_fmt(r['evals_per_ess'], '.1f')} | "
            f"{_fmt(r['max_rhat'], '.3f')} | {r['divergences']} | "
            f"{r['mean_tree_depth']:.2f} | {r['mean_leapfrog']:.1f} | {steps} |")
    return lines + [""]


def _memory(rows) -> list[str]:
    lines = [
        "## Peak memory",
        "",
        "Peak resident set (`getrusage`) of the main process and of the largest chain worker,",
        "each a process-lifetime maximum (sizes run in ascending order). Workers are forked",
        "and share the parent's pages at first, so the sum is an upper bound on the total.",
        "*Main at fit*: the main process's resident set when the fit started (mostly the",
        "imported libraries), for scale. *Total PSS*: peak over the fit of the proportional",
        "set sizes of the main process and its workers summed, sampled every second; shared",
        "pages count once, so this is the group's real footprint (a shorter peak can be missed).",
        "",
        "| states | processes | main at fit MB | main peak MB | largest worker MB "
        "| sum MB (upper bound) | total PSS MB |",
        "|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        lines.append(f"| {r['states']} | {r['processes']} | "
                     f"{_mb(r.get('main_rss_at_fit_bytes'))} | {_mb(r['peak_main_bytes'])} | "
                     f"{_mb(r['peak_child_bytes'])} | {_mb(r['peak_sum_bytes'])} | "
                     f"{_mb(r.get('peak_total_pss_bytes'))} |")
    return lines + [""]


def _gradients(rows) -> list[str]:
    lines = [
        "## Gradient cost and solver work",
        "",
        "*Build*: the MDP and demonstrations (simulating them solves the MDP, so in the first",
        "size of a run this includes loading the compiled kernels). *First*: first evaluation",
        "of a fresh likelihood in the main process, a cold solve. *Warm*: median of 10",
        "gradients after 1% weight changes. *Fit*: wall time x processes / gradients. Solver",
        "work: means per gradient along a 20-step random walk from the posterior mean (steps",
        "of 0.1 posterior sd), read from the likelihood's counters: Newton iterations (each a",
        "backup; all but the last also a linear solve), every value mat-vec (GMRES and",
        "backups), and the adjoint solve's mat-vecs. Rows measured before December 2026",
        "counted linear solves and GMRES mat-vecs only (backups excluded).",
        "",
        "| states | build s | first s | warm ms | fit ms | Newton steps | value mat-vecs "
        "| adjoint mat-vecs |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        p = r["profile"]
        lines.append(
            f"| {r['states']} | {_fmt(r.get('build_s'), '.1f')} | {r['first_eval_s']:.2f} | "
            f"{r['warm_s_per_gradient'] * 1e3:.1f} | {r['fit_s_per_gradient'] * 1e3:.1f} | "
            f"{_fmt(p.get('newton_steps'), '.2f')} | "
            f"{_fmt(p.get('value_matvecs'), '.1f')} | {_fmt(p.get('adjoint_matvecs'), '.1f')} |")
    if any(r["profile"].get("dense") for r in rows):
        lines += ["", "Problems of at most 200 states take the dense Newton path: no Krylov "
                  "solves to count."]
    return lines + [""]


def _scaling(rows) -> list[str]:
    base = rows[0]
    lines = [
        "## Scaling",
        "",
        f"Ratios relative to the smallest problem (S = {base['states']}).",
        "",
        "| states | states ratio | wall s | ESS/s | warm ms/gradient | gradient time ratio "
        "| gradient ratio / states ratio |",
        "|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        ns = r["states"] / base["states"]
        nt = r["warm_s_per_gradient"] / base["warm_s_per_gradient"]
        lines.append(f"| {r['states']} | {ns:.0f} | {r['wall_s']:.1f} | "
                     f"{_fmt(r['ess_per_s'], '.3g')} | {r['warm_s_per_gradient'] * 1e3:.1f} | "
                     f"{nt:.2f} | {nt / ns:.2f} |")
    return lines + ["", summary(rows), ""]


def summary(rows: list[dict]) -> str:
    """How the cost per gradient and ESS per second grow, from each size to the next.

    Parameters
    ----------
    rows : list of dict
        Rows sorted by states; each is compared with the one before it.

    Returns
    -------
    str
    """
    if len(rows) < 2:
        return f"Only S = {rows[0]['states']} measured so far: no scaling to report."
    return " ".join(_growth(a, b) for a, b in zip(rows[:-1], rows[1:], strict=True))


def _growth(a: dict, b: dict) -> str:
    ns = b["states"] / a["states"]
    nt = b["warm_s_per_gradient"] / a["warm_s_per_gradient"]
    slope = math.log(nt) / math.log(ns)
    ess = (a["ess_per_s"] or math.nan) / (b["ess_per_s"] or math.nan)
    change = f"rises {_fmt(1 / ess, '.1f')}x" if ess < 1 else f"falls {_fmt(ess, '.1f')}x"
    return (f"From S = {a['states']} to {b['states']} ({ns:.0f}x the states) the time per "
            f"gradient grows {nt:.1f}x, about S^{slope:.2f}, and ESS per second {change}.")


def overview(results: dict | None) -> list[str]:
    """The large-problem section of ``benchmark.md``: one line per size, then the scaling.

    Parameters
    ----------
    results : dict or None
        A large-benchmark result (:func:`load`); None gives no lines.

    Returns
    -------
    list of str
        Markdown lines; the full tables stay in ``benchmark-large.md``.
    """
    if not results or not results.get("rows"):
        return []
    default = (results["settings"]["default_draws"], results["settings"]["default_warmup"])
    lines = [
        "## Large problems",
        "",
        f"From `bayesirl bench --large` (all fields in [{MD_NAME}]({MD_NAME})): a full NUTS "
        "fit of the random sparse MDP (A = 4, 4 successors, F = 8, discount 0.95, 200 "
        "demonstrations of 100 steps) on the default worker processes. Rows marked *reduced* "
        "ran fewer draws or warmup iterations than the default run; their ESS per second "
        "and gradients per ESS are rates and compare across rows, their wall time does not.",
        "",
        "| states | chains x draws (warmup) | wall min | min bulk-ESS | ESS/s | gradients/ESS "
        "| max R-hat | total PSS MB | warm ms/gradient | 1-min load |",
        "|---|---|---|---|---|---|---|---|---|---|",
    ]
    for r in results["rows"]:
        mark = "" if (r["draws"], r["warmup"]) == default else ", *reduced*"
        load = r.get("load_1min")
        lines.append(
            f"| {r['states']} | {r['chains']} x {r['draws']} ({r['warmup']}{mark}) | "
            f"{r['wall_s'] / 60:.1f} | {_fmt(r['min_bulk_ess'], '.0f')} | "
            f"{_fmt(r['ess_per_s'], '.3g')} | {_fmt(r['evals_per_ess'], '.1f')} | "
            f"{_fmt(r['max_rhat'], '.3f')} | {_mb(r.get('peak_total_pss_bytes'))} | "
            f"{r['warm_s_per_gradient'] * 1e3:.1f} | "
            f"{'-' if not load else f'{load[0]:.1f} / {load[1]:.1f}'} |")
    return lines + ["", summary(results["rows"]), ""]


def _other_machines(rows, m: dict) -> list[str]:
    other = [str(r["states"]) for r in rows if r.get("machine", m) != m]
    if not other:
        return []
    return [f"Rows S = {', '.join(other)} were measured on another machine or library versions "
            "(their `machine` field in the JSON).", ""]


def render(results: dict) -> str:
    """Markdown of the (merged) large benchmark.

    Parameters
    ----------
    results : dict
        ``{"machine", "settings", "rows"}`` as written to ``benchmark-large.json``.

    Returns
    -------
    str
    """
    m, s = results["machine"], results["settings"]
    rows = results["rows"]
    dates = sorted({r["date"] for r in rows})
    lines = [
        "# bayesirl benchmark: large problems",
        "",
        f"Generated by `bayesirl bench --large`. Machine: {m['cores']} cores, {m['cpu']}; "
        f"Python {m['python']}, numpy {m['numpy']}, scipy {m['scipy']}, numba {m['numba']}. "
        f"Rows measured {', '.join(dates)}; medians where repeated.",
        "",
        *_other_machines(rows, m),
        "Random sparse MDP (`bench/problems.py`): A = 4, 4 successors per (s, a), F = 8, "
        f"discount 0.95, seed 0; {s['episodes']} demonstrations of {s['length']} steps; prior "
        "Normal(0, 5); NUTS, seed 0, default worker processes. Default run: 4 chains x "
        f"{s['default_draws']} draws after W = {s['default_warmup']} warmup iterations.",
        "",
    ]
    for part in (_fits, _memory, _gradients, _scaling, _load):
        lines += part(rows)
    return "\n".join(lines) + "\n"


def _load(rows) -> list[str]:
    # The machine's 1-minute load average at the start and end of each fit: above the
    # number of worker processes, other work shared the cores and the times are upper bounds.
    seen = [(r["states"], r["load_1min"]) for r in rows if r.get("load_1min")]
    if not seen:
        return []
    parts = [f"S = {n}: {a:.1f} -> {b:.1f}" for n, (a, b) in seen]
    return ["## Load during the fits", "",
            "1-minute load average at the start and end of each fit (2 worker processes "
            "keep it near 2; more means other work shared the cores and the wall times are "
            "upper bounds): " + "; ".join(parts) + ".", ""]


def write(results: dict, folder: Path) -> tuple[Path, Path]:
    """Merge ``results`` into ``folder``'s existing JSON (if any) and write both files.

    Parameters
    ----------
    results : dict
        The result of :func:`bayesirl.bench.large.run`.
    folder : Path

    Returns
    -------
    tuple of Path
        ``(markdown, json)``.
    """
    folder = Path(folder)
    md, js = folder / MD_NAME, folder / JSON_NAME
    merged = merge(load(folder), results)
    write_json(js, merged, sort_keys=True)
    write_text(md, render(merged))
    return md, js
