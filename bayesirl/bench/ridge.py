"""Sampling on a ridge: gradients per effective draw with a diagonal and a dense mass matrix.

The bundled ``wet-park`` example has a feature ``wet`` on exactly the ``mud`` cells, so the
posterior is a long thin ridge along mud - wet. NUTS with a diagonal mass matrix has to take
tiny steps across it; the dense mass matrix that ``bayesirl fit`` turns on for such a ridge
(``commands/mass.py``) rescales along it. The yardstick is the same map and the same walks
with ``wet`` dropped (no ridge): the target is at most 3 times its gradient evaluations per
effective draw with the dense mass matrix. Gradient evaluations per bulk-ESS are counts, so
they do not depend on the machine's load; the seconds do, and the suite records the load.
"""

from __future__ import annotations

import os
import tempfile
import time
from pathlib import Path

import numpy as np

from bayesirl.execution import sample
from bayesirl.io import read_demonstrations, read_problem
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.scenarios.bundled import EXAMPLES

TARGET_RATIO = 3.0  # collinear with dense mass vs no ridge, gradients per effective draw


def _without_wet(problem_text: str) -> str:
    """The wet-park problem file with the ``wet`` feature dropped (no ridge left)."""
    text = problem_text.replace('"water", "wet"]', '"water"]')
    return text.replace("{ mud = 1, wet = 1 }", "{ mud = 1 }")


def _problems(folder: Path) -> dict:
    problem, walks = EXAMPLES["wet-park"].write(folder)
    plain = folder / "no-ridge.toml"
    plain.write_text(_without_wet(problem.read_text(encoding="utf-8")), encoding="utf-8")
    return {"no ridge (wet dropped)": (plain, walks), "mud = wet (ridge)": (problem, walks)}


def _row(problem_path: Path, walks: Path, dense: bool, draws: int, warmup: int) -> dict:
    problem = read_problem(problem_path)
    demos = read_demonstrations(walks, problem)
    lik = BoltzmannLikelihood(problem.mdp, demos, rationality=problem.rationality,
                              q_function=problem.q_function, **problem.solver)
    t0 = time.perf_counter()
    post = sample(lik, prior=problem.prior, chains=4, draws=draws, warmup=warmup, seed=0,
                  dense_mass=dense, progress=False)
    wall = time.perf_counter() - t0
    n_weights = post.weights.shape[-1]
    ess = float(np.min(post.diagnostics.ess_bulk[:n_weights]))
    evals = float(post.stats["n_steps"].sum())  # after warmup
    return {"features": n_weights, "dense_mass": dense, "draws": draws, "warmup": warmup,
            "min_bulk_ess": ess, "evals_per_ess": evals / ess,
            "steps_per_draw": evals / post.stats["n_steps"].size,
            "divergences": int(post.diagnostics.divergences),
            "max_rhat": float(np.max(post.diagnostics.rhat)), "wall_s": wall}


def run(quick: bool = False, log=print) -> dict:
    """No-ridge park (diagonal mass) against the ridge with diagonal and dense mass."""
    draws, warmup = (200, 200) if quick else (1000, 500)
    out = {"rows": [], "load_1min": [os.getloadavg()[0]]}
    with tempfile.TemporaryDirectory() as tmp:
        cases = _problems(Path(tmp))
        plans = [("no ridge (wet dropped)", False), ("mud = wet (ridge)", False),
                 ("mud = wet (ridge)", True)]
        for name, dense in plans:
            row = {"problem": name, **_row(*cases[name], dense, draws, warmup)}
            out["rows"].append(row)
            log(f"  {name}, {'dense' if dense else 'diagonal'} mass: "
                f"{row['evals_per_ess']:.1f} gradients per effective draw, "
                f"{row['divergences']} divergences, {row['wall_s']:.0f} s")
    out["load_1min"].append(os.getloadavg()[0])
    base = out["rows"][0]["evals_per_ess"]
    for row in out["rows"]:
        row["vs_no_ridge"] = row["evals_per_ess"] / base
    return out


def markdown(ridge: dict) -> list[str]:
    """The suite's section of ``benchmark.md``."""
    lines = [
        "## Sampling on a ridge: dense mass matrix",
        "",
        "The bundled `wet-park` example (`wet` on exactly the `mud` cells: the posterior is a",
        "ridge along mud - wet), 4 chains, NUTS; the yardstick is the same map and walks with",
        "`wet` dropped. Gradient evaluations per effective draw = sampling-phase gradient",
        "evaluations / smallest bulk-ESS of the weights (counts, independent of the load).",
        "",
        "| problem | mass matrix | draws/chain | min bulk-ESS | gradients per effective draw "
        "| vs no ridge | leapfrog steps/draw | divergences | max R-hat | seconds |",
        "|---|---|---|---|---|---|---|---|---|---|",
    ]
    for r in ridge["rows"]:
        lines.append(
            f"| {r['problem']} | {'dense' if r['dense_mass'] else 'diagonal'} | {r['draws']} | "
            f"{r['min_bulk_ess']:.0f} | {r['evals_per_ess']:.1f} | {r['vs_no_ridge']:.1f}x | "
            f"{r['steps_per_draw']:.1f} | {r['divergences']} | {r['max_rhat']:.3f} | "
            f"{r['wall_s']:.0f} |")
    dense = [r for r in ridge["rows"] if r["dense_mass"]][0]
    met = dense["vs_no_ridge"] <= TARGET_RATIO
    lo, hi = ridge["load_1min"]
    lines += ["", "| target | measured | met |", "|---|---|---|",
              f"| ridge with dense mass <= {TARGET_RATIO:g}x the no-ridge gradients per "
              f"effective draw | {dense['vs_no_ridge']:.1f}x | {'yes' if met else 'no'} |", "",
              f"1-minute load average at the start and end of this suite: {lo:.1f}, {hi:.1f} "
              "(the seconds depend on it; the counts do not).", ""]
    return lines
