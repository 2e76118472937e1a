"""The ambiguity report of the wet-park example (invented data), as committed in reports/.

A walker crosses a small park after rain (``bayesirl example wet-park``): every muddy cell is
also wet, so 100 walks tell how much the walker avoids mud-and-wet together but never how that
splits between mud and wet. The report says which weights the walks determine, which only by
their sign, and which only in combination, and ranks the start states from which three more
walks would tell most (with how settled that ranking is).

    python examples/park_report.py            # writes reports/park-report.html and .json
    python examples/park_report.py OUT_DIR    # somewhere else
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

import bayesirl
from bayesirl.io import read_demonstrations, read_problem
from bayesirl.modelfit.predictive import predictive_check
from bayesirl.report import ambiguity
from bayesirl.scenarios.bundled import EXAMPLES, WET_PARK_WEIGHTS


def main(out: Path) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        problem_path, demos_path = EXAMPLES["wet-park"].write(Path(tmp))
        problem = read_problem(problem_path)
        demos = read_demonstrations(demos_path, problem)
    lik = bayesirl.BoltzmannLikelihood(problem.mdp, demos)
    # mud and wet form an exact ridge: the dense mass matrix crosses it (bayesirl fit
    # switches it on by itself for this problem).
    posterior = bayesirl.sample(lik, prior=problem.prior, chains=4, draws=1000, warmup=1000,
                                seed=0, dense_mass=True)
    # Where would three more walks tell most about the weights (and narrow water/slope)?
    walks = bayesirl.suggest(posterior, "start-states", budget=3, target="water/slope", seed=0)
    # truth is known only because the data are simulated: it adds z-scores to the table.
    report = ambiguity(posterior, level=0.9, truth=WET_PARK_WEIGHTS, states=(0, 8, 24),
                       suggestions=walks, action_names=problem.action_names)
    # Does the model reproduce the walks? Replicated walks from the draws (model-fit section).
    report.predictive = predictive_check(posterior, seed=0)
    html = report.to_html(out / "park-report.html")
    js = report.to_json(out / "park-report.json")
    print(report.table())
    print(f"wrote {html} and {js}")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path("reports"))
